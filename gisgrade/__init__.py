"""gisgrade: ground profile, pipe profile and grade lines for new water mains.

Planning-level results from public terrain data; not for construction.

>>> import gisgrade
>>> callable(gisgrade.compute) and callable(gisgrade.run)
True
"""

__version__ = "0.1.0"


def compute(project, *, progress=None):
    """Every stage on a project file, writing nothing; see :func:`gisgrade.pipeline.compute`."""
    from .pipeline import compute as _compute

    return _compute(project, progress=progress)


def run(project, outdir=None, *, write=True, figures=True):
    """Compute a project and write its outputs (``figures=False``: all but the
    figures); see :func:`gisgrade.pipeline.run`."""
    from .pipeline import run as _run

    return _run(project, outdir, write=write, figures=figures)
