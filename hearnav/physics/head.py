"""Spherical-head ear model: Woodworth's interaural delay and Brown & Duda's head-shadow filter.

The head is a rigid sphere of radius ``a`` with ears at +/-90 degrees from the heading, in the horizontal
plane. For each arriving path and each ear, ``beta`` is the angle between the path's direction of arrival
and the ear's outward axis: 0 when the sound comes straight at the ear, pi when it comes from the opposite
side.

References
----------
- R. S. Woodworth & H. Schlosberg, *Experimental Psychology* (1954): per-ear delay -a/c cos(beta) on the
  lit side, a/c (beta - pi/2) in the shadow, giving ITD = (a/c)(theta + sin theta).
- C. P. Brown & R. O. Duda, "A structural model for binaural sound synthesis", IEEE Trans. Speech Audio
  Processing 6(5), 1998: H(w, beta) = (1 + j alpha w / 2 w0) / (1 + j w / 2 w0), w0 = c / a, with
  alpha(beta) = (1 + alpha_min / 2) + (1 - alpha_min / 2) cos(beta / theta_min * 180 deg),
  alpha_min = 0.1 and theta_min = 150 deg (the values used here).
"""

from __future__ import annotations

import math

import numpy as np

#: Head radius in metres (Brown & Duda's average adult head).
HEAD_RADIUS = 0.0875
ALPHA_MIN = 0.1
THETA_MIN = np.deg2rad(150.0)


def ear_axes(heading: float | np.ndarray) -> np.ndarray:
    """Outward unit vectors of the left and right ears for a heading.

    Parameters
    ----------
    heading : scalar or (H,) angle in radians, counter-clockwise from +x.

    Returns
    -------
    (..., 2, 3) unit vectors, index 0 left ear (heading + 90 deg), 1 right ear (heading - 90 deg).
    """
    h = np.asarray(heading, dtype=float)[..., None]
    angles = h + np.array([np.pi / 2, -np.pi / 2])
    return np.stack([np.cos(angles), np.sin(angles), np.zeros_like(angles)], axis=-1)


def ear_angles(directions: np.ndarray, heading: float | np.ndarray) -> np.ndarray:
    """Angle between each arrival direction and each ear's axis.

    Parameters
    ----------
    directions : (P, 3) unit vectors from the head centre towards the (image) sources.
    heading : scalar or (H,) radians.

    Returns
    -------
    (..., 2, P) angles beta in [0, pi]; leading axis H when ``heading`` is an array.
    """
    cos = np.einsum("...ek,pk->...ep", ear_axes(heading), directions)
    return np.arccos(np.clip(cos, -1.0, 1.0))


def woodworth_delay(beta: np.ndarray, radius: float = HEAD_RADIUS, c: float = 343.0) -> np.ndarray:
    """Arrival time at an ear relative to the head centre (seconds; negative means earlier).

    Parameters
    ----------
    beta : (...) angle between arrival direction and the ear axis, radians.
    """
    beta = np.asarray(beta, dtype=float)
    return np.where(beta < np.pi / 2, -(radius / c) * np.cos(beta), (radius / c) * (beta - np.pi / 2))


def woodworth_itd(theta: np.ndarray, radius: float = HEAD_RADIUS, c: float = 343.0) -> np.ndarray:
    """Woodworth's interaural time difference (a/c)(theta + sin theta) for lateral angle theta in [0, pi/2]."""
    theta = np.asarray(theta, dtype=float)
    return (radius / c) * (theta + np.sin(theta))


def shadow_alpha(beta: np.ndarray) -> np.ndarray:
    """Brown & Duda's high-frequency gain alpha(beta): 2 facing the ear, 0.1 at 150 degrees."""
    beta = np.asarray(beta, dtype=float)
    return (1 + ALPHA_MIN / 2) + (1 - ALPHA_MIN / 2) * np.cos(beta / THETA_MIN * np.pi)


def shadow_basis(omega: np.ndarray, radius: float = HEAD_RADIUS, c: float = 343.0) -> tuple[np.ndarray, np.ndarray]:
    """The two fixed filters of the head-shadow model, H = L + alpha * P.

    Parameters
    ----------
    omega : (F,) angular frequencies in rad/s.

    Returns
    -------
    L, P : (F,) complex responses: L = 1 / (1 + j w / 2 w0), P = (j w / 2 w0) / (1 + j w / 2 w0).
    """
    x = 1j * np.asarray(omega, dtype=float) / (2 * c / radius)
    return 1 / (1 + x), x / (1 + x)


def head_shadow(omega: np.ndarray, beta: np.ndarray, radius: float = HEAD_RADIUS, c: float = 343.0) -> np.ndarray:
    """Brown & Duda head-shadow response.

    Parameters
    ----------
    omega : (F,) rad/s.
    beta : (...) radians.

    Returns
    -------
    (..., F) complex gain.
    """
    x = 1j * np.asarray(omega, dtype=float) / (2 * c / radius)
    alpha = shadow_alpha(beta)[..., None]
    return (1 + alpha * x) / (1 + x)


def ear_betas(azimuth: float | np.ndarray) -> np.ndarray:
    """Angle between a horizontal arrival and each ear axis.

    Parameters
    ----------
    azimuth : scalar or (A,) radians, relative to the heading, counter-clockwise.

    Returns
    -------
    (..., 2) angles beta in [0, pi], index 0 left ear, 1 right ear.
    """
    if np.ndim(azimuth) == 0:  # one arrival: the ear axes are +-90 degrees, so cos(beta) = +-sin(azimuth)
        side = math.sin(float(azimuth))
        return np.arccos(np.clip(np.array([side, -side]), -1.0, 1.0))
    az = np.atleast_1d(np.asarray(azimuth, dtype=float))
    directions = np.stack([np.cos(az), np.sin(az), np.zeros_like(az)], axis=-1)  # (A, 3)
    beta = ear_angles(directions, 0.0).T  # (A, 2)
    return beta.reshape(np.shape(azimuth) + (2,))


def ear_delays(azimuth: float | np.ndarray, radius: float = HEAD_RADIUS, c: float = 343.0) -> np.ndarray:
    """Woodworth arrival time at each ear relative to the head centre, seconds (negative means earlier).

    Parameters
    ----------
    azimuth : scalar or (A,) radians.

    Returns
    -------
    (..., 2) delays, index 0 left, 1 right.
    """
    return woodworth_delay(ear_betas(azimuth), radius, c)


def expected_itd(azimuth: float | np.ndarray, radius: float = HEAD_RADIUS, c: float = 343.0) -> np.ndarray:
    """Delay of the left ear relative to the right ear, seconds: where ``gcc_phat(left, right)`` peaks.

    Equal to -(a/c)(theta + sin theta) for a source on the left at lateral angle theta (Woodworth).

    Parameters
    ----------
    azimuth : scalar or (A,) radians.

    Returns
    -------
    (...) seconds, same shape as ``azimuth``.
    """
    d = ear_delays(azimuth, radius, c)
    return d[..., 0] - d[..., 1]


def azimuth_from_itd(itd: float | np.ndarray, radius: float = HEAD_RADIUS, c: float = 343.0) -> np.ndarray:
    """Frontal azimuth in [-pi/2, pi/2] whose :func:`expected_itd` is ``itd`` (front-back ambiguous).

    Parameters
    ----------
    itd : scalar or (...) seconds (left relative to right); values beyond the head's range saturate at +/-pi/2.

    Returns
    -------
    (...) radians.
    """
    grid = np.linspace(-np.pi / 2, np.pi / 2, 2001)
    table = expected_itd(grid, radius, c)  # decreasing in azimuth
    return np.interp(-np.asarray(itd, dtype=float), -table, grid)
