"""The designer's two looks, light and dark: one palette for the panels (a Qt palette on the
Fusion style), the 3D site, the formation layout and the plots, so a colour means the same thing
everywhere. Drone and group colours are evenly spread hues (golden-ratio steps) whose brightness
suits the canvas they are drawn on.

Views read :func:`current` when they draw and re-draw in ``apply_theme()``;
:func:`apply_to_application` sets the panels' palette."""

from __future__ import annotations

import colorsys
from dataclasses import dataclass

import numpy as np
import pyqtgraph as pg
from PySide6.QtGui import QColor, QPalette
from PySide6.QtWidgets import QApplication

RGBA = tuple[float, float, float, float]


@dataclass(frozen=True)
class Theme:
    """Colours of one look. Panel colours are ``#rrggbb``; canvas colours are RGBA in [0, 1]."""

    name: str
    window: str
    panel: str
    text: str
    muted_text: str
    accent: str
    accent_text: str
    canvas: RGBA
    canvas_text: RGBA
    grid: RGBA
    obstacle: RGBA  # the mesh shading keeps 45–100 % of it, by the angle to the camera
    obstacle_edge: RGBA
    volume: RGBA
    keep_out: RGBA
    formation: RGBA
    selected_outline: RGBA
    too_close: RGBA
    ellipsoid: RGBA
    limit: RGBA
    cursor: RGBA
    dimmed: RGBA  # drones and curves outside a selection
    #: HSV saturation and value of drone and group hues on this canvas.
    hue_saturation: float
    hue_value: float

    def qcolor(self, rgba: RGBA) -> QColor:
        return QColor.fromRgbF(*rgba)

    def rgb255(self, rgba: RGBA) -> tuple[int, int, int]:
        return tuple(int(round(255 * c)) for c in rgba[:3])


DARK = Theme(
    name="dark", window="#22262d", panel="#1a1d22", text="#e3e7ec", muted_text="#9aa3ad", accent="#3aa6a0",
    accent_text="#0d1214",
    canvas=(0.075, 0.085, 0.10, 1.0), canvas_text=(0.78, 0.82, 0.87, 1.0), grid=(0.62, 0.68, 0.75, 0.22),
    obstacle=(0.74, 0.72, 0.68, 1.0), obstacle_edge=(0.93, 0.93, 0.90, 0.55), volume=(0.35, 0.65, 0.95, 0.6),
    keep_out=(0.95, 0.45, 0.25, 0.35), formation=(0.85, 0.87, 0.90, 0.9), selected_outline=(1.0, 1.0, 1.0, 1.0),
    too_close=(1.0, 0.30, 0.30, 1.0), ellipsoid=(1.0, 0.85, 0.2, 0.25), limit=(1.0, 0.42, 0.42, 1.0),
    cursor=(0.95, 0.95, 0.95, 1.0), dimmed=(0.45, 0.48, 0.52, 0.35), hue_saturation=0.62, hue_value=0.95)

LIGHT = Theme(
    name="light", window="#eef0f3", panel="#ffffff", text="#1b2027", muted_text="#5c6670", accent="#1f7f86",
    accent_text="#ffffff",
    canvas=(0.985, 0.985, 0.98, 1.0), canvas_text=(0.18, 0.21, 0.25, 1.0), grid=(0.30, 0.34, 0.40, 0.25),
    obstacle=(0.80, 0.78, 0.74, 1.0), obstacle_edge=(0.25, 0.26, 0.28, 0.6), volume=(0.10, 0.40, 0.78, 0.7),
    keep_out=(0.90, 0.38, 0.15, 0.35), formation=(0.30, 0.33, 0.38, 0.9), selected_outline=(0.05, 0.05, 0.05, 1.0),
    too_close=(0.85, 0.10, 0.10, 1.0), ellipsoid=(0.95, 0.65, 0.0, 0.30), limit=(0.80, 0.15, 0.15, 1.0),
    cursor=(0.10, 0.12, 0.15, 1.0), dimmed=(0.55, 0.57, 0.60, 0.30), hue_saturation=0.80, hue_value=0.58)

THEMES = {t.name: t for t in (LIGHT, DARK)}
_current = [DARK]


def current() -> Theme:
    """The look in use."""
    return _current[0]


def hue_colours(n: int, theme: Theme | None = None, phase: float = 0.0) -> np.ndarray:
    """``(n, 4)`` RGBA in [0, 1], neighbours in order clearly different (golden-ratio hue steps
    from ``phase``), bright enough for ``theme``'s canvas."""
    theme = theme or current()
    hues = (phase + np.arange(n) * 0.6180339887) % 1.0
    rgb = [colorsys.hsv_to_rgb(h, theme.hue_saturation, theme.hue_value) for h in hues]
    return np.c_[np.asarray(rgb, dtype=float).reshape(n, 3), np.ones(n)]


def drone_colours(n: int, theme: Theme | None = None) -> np.ndarray:
    """One colour per drone, the same in the 3D view, the plots and their legend."""
    return hue_colours(n, theme)


def group_colours(n: int, theme: Theme | None = None) -> np.ndarray:
    """One colour per formation group (another phase than the drones', so they are not confused)."""
    return hue_colours(n, theme, phase=0.31)


def use(theme: Theme) -> None:
    """Make ``theme`` the look in use (views follow in their ``apply_theme``)."""
    _current[0] = theme


def apply_to_application(app: QApplication, theme: Theme) -> None:
    """The panels' look: Fusion style with ``theme``'s palette and a few rules of our own."""
    use(theme)
    app.setStyle("Fusion")
    p = QPalette()
    role, group = QPalette.ColorRole, QPalette.ColorGroup
    for r, colour in ((role.Window, theme.window), (role.Base, theme.panel), (role.AlternateBase, theme.window),
                      (role.Button, theme.window), (role.Text, theme.text), (role.WindowText, theme.text),
                      (role.ButtonText, theme.text), (role.ToolTipBase, theme.panel), (role.ToolTipText, theme.text),
                      (role.Highlight, theme.accent), (role.HighlightedText, theme.accent_text),
                      (role.PlaceholderText, theme.muted_text), (role.Link, theme.accent)):
        p.setColor(r, QColor(colour))
    for r in (role.Text, role.WindowText, role.ButtonText):
        p.setColor(group.Disabled, r, QColor(theme.muted_text))
    app.setPalette(p)
    app.setStyleSheet(_style_sheet(theme))


def _style_sheet(theme: Theme) -> str:
    r, g, b = theme.rgb255(theme.limit)
    return (f"QPushButton#primary {{ background: {theme.accent}; color: {theme.accent_text}; border-radius: 4px; "
            f"padding: 4px 18px; font-weight: 600; }}"
            f"QPushButton#primary:disabled {{ background: {theme.muted_text}; }}"
            f"QPushButton:checked {{ background: {theme.accent}; color: {theme.accent_text}; }}"
            f"QDockWidget::title {{ padding: 4px; font-weight: 600; }}"
            f"QLabel#banner {{ background: rgb({r}, {g}, {b}); color: white; padding: 6px; font-weight: 600; }}")


def style_plot(item: pg.PlotItem, theme: Theme | None = None) -> None:
    """Axes, labels and title of a plot in ``theme``'s canvas text colour."""
    theme = theme or current()
    text = theme.qcolor(theme.canvas_text)
    for name in ("left", "bottom"):
        axis = item.getAxis(name)
        axis.setPen(pg.mkPen(text))
        axis.setTextPen(pg.mkPen(text))
    if item.titleLabel.text:
        item.titleLabel.setText(item.titleLabel.text, color=text.name())  # keeps its size
