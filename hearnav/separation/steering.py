"""Spherical-head steering vectors: what a far-field horizontal plane wave looks like at the two ears.

For an arrival at azimuth ``az`` (relative to the heading, counter-clockwise) and each ear e,

    d_e(w) = H(w, beta_e) exp(-j w tau_e),

with Brown & Duda's head shadow H (:func:`hearnav.acoustics.head.head_shadow`) and Woodworth's per-ear delay
tau_e relative to the head centre (:func:`hearnav.acoustics.head.woodworth_delay`). The reference point is the
head centre in free field: a signal s arriving from ``az`` is heard as d_e(w) S(w) at ear e.
"""

from __future__ import annotations

import numpy as np

from hearnav.acoustics import head
from hearnav.separation.direction import ear_betas


def steering_vector(azimuth: float | np.ndarray, freqs: np.ndarray, radius: float = head.HEAD_RADIUS,
                    c: float = 343.0) -> np.ndarray:
    """Binaural steering vector of a horizontal far-field arrival.

    Parameters
    ----------
    azimuth : scalar or (A,) radians relative to the heading, counter-clockwise (0 ahead, +pi/2 left).
    freqs : (F,) frequencies in Hz.

    Returns
    -------
    (..., F, 2) complex, last axis left ear then right ear; leading axis A when ``azimuth`` is an array.
    """
    omega = 2 * np.pi * np.asarray(freqs, dtype=float)
    beta = ear_betas(azimuth)  # (..., 2)
    tau = head.woodworth_delay(beta, radius, c)
    d = head.head_shadow(omega, beta, radius, c) * np.exp(-1j * omega * tau[..., None])  # (..., 2, F)
    return np.swapaxes(d, -1, -2)
