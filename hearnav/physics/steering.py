"""Spherical-head steering vectors and delay-and-sum weights: a far-field horizontal plane wave at the two ears.

For an arrival at azimuth ``az`` (relative to the heading, counter-clockwise) and each ear e,

    d_e(w) = H(w, beta_e) exp(-j w tau_e),

with Brown & Duda's head shadow H written in its affine form H = L + alpha(beta) P
(:func:`hearnav.physics.head.shadow_basis`) and Woodworth's per-ear delay tau_e relative to the head centre
(:func:`hearnav.physics.head.woodworth_delay`). The reference point is the head centre in free field: a signal
s arriving from ``az`` is heard as d_e(w) S(w) at ear e. This module is the one place steering vectors and
the delay-and-sum weights derived from them are computed.

References
----------
- C. P. Brown & R. O. Duda, "A structural model for binaural sound synthesis", IEEE Trans. Speech Audio
  Processing 6(5), 1998.
- H. L. Van Trees, *Optimum Array Processing* (Wiley 2002), ch. 2: delay-and-sum weights w = d / (d^H d).
"""

from __future__ import annotations

import numpy as np

from hearnav.physics.head import HEAD_RADIUS, ear_betas, shadow_alpha, shadow_basis, woodworth_delay


def _ear_terms(azimuth: float | np.ndarray, freqs: np.ndarray, radius: float,
               c: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Angular frequencies (F,), head shadow (..., 2, F) and per-ear delays (..., 2) of arrivals at ``azimuth``."""
    omega = 2 * np.pi * np.asarray(freqs, dtype=float)
    low, high = shadow_basis(omega, radius, c)
    beta = ear_betas(azimuth)  # (..., 2)
    return omega, low + shadow_alpha(beta)[..., None] * high, woodworth_delay(beta, radius, c)


def steering_vector(azimuth: float | np.ndarray, freqs: np.ndarray, radius: float = HEAD_RADIUS,
                    c: float = 343.0) -> np.ndarray:
    """Binaural steering vector of a horizontal far-field arrival.

    Parameters
    ----------
    azimuth : scalar or (A,) radians relative to the heading, counter-clockwise (0 ahead, +pi/2 left).
    freqs : (F,) frequencies in Hz.
    radius, c : head radius (m) and speed of sound (m/s).

    Returns
    -------
    (..., F, 2) complex128, last axis left ear then right ear; leading axis A when ``azimuth`` is an array.
    """
    omega, shadow, tau = _ear_terms(azimuth, freqs, radius, c)
    return np.swapaxes(shadow * np.exp(-1j * omega * tau[..., None]), -1, -2)


def das_conjugates(azimuths: np.ndarray, freqs: np.ndarray, radius: float = HEAD_RADIUS,
                   c: float = 343.0) -> np.ndarray:
    """Conjugate delay-and-sum weights w^H, w = d / (d^H d), towards many azimuths at once.

    With the steering vector d = H exp(-j omega tau) per ear, w^H = conj(H) exp(j omega tau) / sum over ears
    of |H|^2, since |d| = |H|.

    Parameters
    ----------
    azimuths : (...) radians relative to the heading, counter-clockwise.
    freqs : (F,) frequencies in Hz (e.g. the bins of an STFT).
    radius, c : head radius (m) and speed of sound (m/s).

    Returns
    -------
    (..., 2, F) complex64 weights, ear 0 left.
    """
    azimuths = np.asarray(azimuths, dtype=float)
    omega, shadow, tau = _ear_terms(azimuths.reshape(-1), freqs, radius, c)
    shadow = shadow.reshape(*azimuths.shape, *shadow.shape[-2:])
    phase = omega * tau.reshape(*azimuths.shape, 2)[..., None]  # (..., 2, F)
    norm = 1.0 / (shadow.real ** 2 + shadow.imag ** 2).sum(axis=-2, keepdims=True)  # (..., 1, F)
    return (np.conj(shadow) * (np.cos(phase) + 1j * np.sin(phase)) * norm).astype(np.complex64)
