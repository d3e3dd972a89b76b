"""Export folders: per-drone trajectories, samples, report, 3D paths (format: README, "Export folder")."""

from .folder import EXPORT_FORMAT, export_plan, load_export

__all__ = ["EXPORT_FORMAT", "export_plan", "load_export"]
