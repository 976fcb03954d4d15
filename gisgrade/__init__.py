"""gisgrade: ground profile, pipe profile and grade lines for new water mains.

Planning-level results from public terrain data; not for construction.
"""

__version__ = "0.1.0"
