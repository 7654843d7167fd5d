"""The diffuse sound field at two ears: spatial coherence, coherent/incoherent noise mixing, head power gain.

References
----------
- R. K. Cook, R. V. Waterhouse, R. D. Berendt, S. Edelman & M. C. Thompson, "Measurement of correlation
  coefficients in reverberant sound fields", JASA 27(6), 1955: in a spherically isotropic (diffuse) field
  the coherence of the pressure at two points d apart is sin(kd) / (kd), k = 2 pi f / c.
- E. A. P. Habets & S. Gannot, "Generating sensor signals in isotropic noise fields", JASA 122(6), 2007:
  two signals with a prescribed real coherence Gamma from two independent noises N1, N2,
  X1 = a N1 + b N2, X2 = a N1 - b N2 with a^2 + b^2 = 1 and a^2 - b^2 = Gamma (per frequency).
- C. P. Brown & R. O. Duda, IEEE Trans. Speech Audio Processing 6(5), 1998: the head-shadow filter whose
  power, averaged over arrivals spread evenly over the sphere, is the head's diffuse-field gain.
"""

from __future__ import annotations

import numpy as np

from hearnav.physics import head


def diffuse_coherence(freqs: np.ndarray, distance: float, c: float = 343.0) -> np.ndarray:
    """Coherence sin(kd) / (kd) of a diffuse field at two points ``distance`` apart (Cook et al. 1955).

    Parameters
    ----------
    freqs : (F,) frequencies in Hz.
    distance : metres between the two points.
    c : speed of sound in m/s.

    Returns
    -------
    (F,) real coherence in [-0.22, 1]; 1 at 0 Hz.
    """
    # np.sinc(x) = sin(pi x) / (pi x), and kd = pi * (2 f d / c)
    return np.sinc(2.0 * np.asarray(freqs, dtype=float) * distance / c)


def coherence_mix(gamma: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Gains of the common and the independent noise that give two signals the coherence ``gamma``.

    With independent unit-power noises N1 and N2, X1 = a N1 + b N2 and X2 = a N1 - b N2 have unit power
    (a^2 + b^2 = 1) and coherence a^2 - b^2 = gamma (Habets & Gannot 2007).

    Parameters
    ----------
    gamma : (F,) target real coherence in [-1, 1].

    Returns
    -------
    a, b : (F,) non-negative gains of the common (N1) and the independent (N2) part.
    """
    g = np.clip(np.asarray(gamma, dtype=float), -1.0, 1.0)
    return np.sqrt((1.0 + g) / 2.0), np.sqrt((1.0 - g) / 2.0)


def diffuse_head_gain(omega: np.ndarray, radius: float = head.HEAD_RADIUS, c: float = 343.0,
                      n_angles: int = 721) -> np.ndarray:
    """Power gain of the head-shadow filter at one ear, averaged over a diffuse field's arrivals.

    Arrivals spread evenly over the sphere meet the ear axis at an angle beta with density sin(beta) / 2;
    the gain is the mean of |H(w, beta)|^2 of Brown & Duda's filter under that density (midpoint rule).

    Parameters
    ----------
    omega : (F,) angular frequencies in rad/s.
    radius : head radius in metres.
    c : speed of sound in m/s.
    n_angles : midpoint-rule steps over beta in [0, pi].

    Returns
    -------
    (F,) power gain; 1 at 0 Hz, about 1.06 (+0.25 dB) at high frequency for this model.
    """
    beta = (np.arange(n_angles) + 0.5) * np.pi / n_angles
    weight = np.sin(beta) * (np.pi / n_angles) / 2.0  # sums to 1 up to the midpoint rule's error
    power = np.abs(head.head_shadow(np.asarray(omega, dtype=float), beta, radius, c)) ** 2  # (n_angles, F)
    return weight @ power / weight.sum()
