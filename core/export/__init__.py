"""Export folders: per-drone trajectories, samples, report, 3D paths (format: README, "Export folder")."""

from .audit import ExportFinding, audit_export
from .documents import EXPORT_FORMAT
from .folder import export_plan
from .load import LoadedExport, load_export
from .target import inspect_target

__all__ = ["EXPORT_FORMAT", "ExportFinding", "LoadedExport", "audit_export", "export_plan", "inspect_target",
           "load_export"]
