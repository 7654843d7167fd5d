"""Plane geometry of poses: heading angles and the bearing of a point from a pose."""

from __future__ import annotations

import numpy as np


def heading_angles(n_headings: int) -> np.ndarray:
    """(H,) heading angles in radians, counter-clockwise from +x: heading h faces 2 pi h / H."""
    return 2.0 * np.pi * np.arange(n_headings) / n_headings


def wrap_angle(angle: np.ndarray | float) -> np.ndarray:
    """Angles wrapped to [-pi, pi), same shape."""
    return (np.asarray(angle, dtype=float) + np.pi) % (2 * np.pi) - np.pi


def bearing(dx: np.ndarray | float, dy: np.ndarray | float, heading_angle: np.ndarray | float) -> np.ndarray:
    """Bearing of a point seen from a pose, radians in [-pi, pi), counter-clockwise from the heading.

    Parameters
    ----------
    dx, dy : (...) offsets of the point from the listener, metres (broadcast together).
    heading_angle : (...) the heading in radians, counter-clockwise from +x (broadcast with dx, dy).

    Returns
    -------
    (...) radians; 0 straight ahead, +pi/2 to the left.
    """
    return wrap_angle(np.arctan2(dy, dx) - heading_angle)
