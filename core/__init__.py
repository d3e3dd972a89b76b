"""Skyloom computation core: scenes, assignment, trajectories, verification, export.

Nothing in this package imports Qt; the GUI (``app``) and the CLI call :func:`core.pipeline.plan`.
"""

__version__ = "0.1.0"

SAFETY_CAUTION = (
    "Skyloom plans are design aids, not flight clearances. Check every plan in simulation, fly it "
    "with margins, and have qualified operators fly it under the local aviation rules. Skyloom's "
    "checks do not replace those steps."
)
