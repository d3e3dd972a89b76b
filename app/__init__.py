"""Skyloom's desktop designer (PySide6 + pyqtgraph). All computation comes from ``core``."""
