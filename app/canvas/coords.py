"""Scene coordinates: metres of the network's projected CRS with ``y`` flipped.

Qt's scene ``y`` grows downwards and map northings grow upwards, so a network
point ``(x, y)`` sits at scene point ``(x, -y)``.  Every part of the window
(canvas, tools, the planning overlay) converts with these two functions only.
Cost: O(1).
"""

from __future__ import annotations

from PySide6.QtCore import QPointF


def to_scene(x: float, y: float) -> QPointF:
    """The scene point of the network point ``(x, y)``."""
    return QPointF(x, -y)


def from_scene(point: QPointF) -> tuple[float, float]:
    """The network point ``(x, y)`` of a scene point."""
    return (point.x(), -point.y())
