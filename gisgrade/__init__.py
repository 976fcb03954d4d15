"""gisgrade: ground profile, pipe profile and grade lines for new water mains.

Planning-level results from public terrain data; not for construction.
"""

__version__ = "0.1.0"


def run(project, outdir=None, *, write=True):
    """Run every stage on a project file; see :func:`gisgrade.pipeline.run`."""
    from .pipeline import run as _run

    return _run(project, outdir, write=write)
