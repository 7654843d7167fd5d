"""Per-bin beamformer weights for two ears, vectorised over frequency (no Python loop over bins).

A beamformer output is Y(f, t) = w(f)^H X(f, t) for ear spectra X (2 channels). Both beamformers here are
distortionless towards the steering vector d: w^H d = 1, so a source from the look direction comes out as its
head-centre free-field signal.

References
----------
- Delay-and-sum (matched filter): w = d / (d^H d) (e.g. Van Trees, *Optimum Array Processing*, 2002).
- J. Capon, "High-resolution frequency-wavenumber spectrum analysis", Proc. IEEE 57(8), 1969:
  w = R^-1 d / (d^H R^-1 d) (MVDR; MPDR when R is the covariance of the mixture).
"""

from __future__ import annotations

import numba
import numpy as np

#: Diagonal loading of the MVDR covariance, relative to its mean eigenvalue trace(R) / 2.
LOADING = 1e-3
#: Absolute floor of the loading, so a silent bin falls back to delay-and-sum instead of dividing by zero.
_LOADING_FLOOR = 1e-30


def das_weights(d: np.ndarray) -> np.ndarray:
    """Delay-and-sum weights.

    Parameters
    ----------
    d : (..., F, 2) steering vectors.

    Returns
    -------
    (..., F, 2) weights w = d / (d^H d).
    """
    return d / np.sum(np.abs(d) ** 2, axis=-1, keepdims=True)


def spatial_covariance(spec: np.ndarray) -> np.ndarray:
    """Per-bin spatial covariance averaged over frames.

    Parameters
    ----------
    spec : (2, F, T) ear spectra.

    Returns
    -------
    (F, 2, 2) Hermitian R[f] = (1/T) sum_t X(f, t) X(f, t)^H.
    """
    return np.einsum("ift,jft->fij", spec, np.conj(spec)) / spec.shape[-1]


def mvdr_weights(cov: np.ndarray, d: np.ndarray, loading: float = LOADING) -> np.ndarray:
    """MVDR weights with the closed-form 2x2 inverse.

    R^-1 = adj(R) / det(R) and the determinant cancels between numerator and denominator, so
    w = adj(R) d / (d^H adj(R) d) with adj([[a, b], [b*, c]]) = [[c, -b], [-b*, a]].

    Parameters
    ----------
    cov : (F, 2, 2) Hermitian positive semi-definite covariances.
    d : (F, 2) steering vectors.
    loading : diagonal loading added to R, as a fraction of trace(R) / 2.

    Returns
    -------
    (F, 2) weights with w^H d = 1.
    """
    a, b, c = cov[:, 0, 0].real, cov[:, 0, 1], cov[:, 1, 1].real
    load = np.maximum(loading * (a + c) / 2, _LOADING_FLOOR)
    a, c = a + load, c + load
    num = np.stack([c * d[:, 0] - b * d[:, 1], a * d[:, 1] - np.conj(b) * d[:, 0]], axis=-1)
    den = np.sum(np.conj(d) * num, axis=-1, keepdims=True).real
    return num / den


def apply_weights(w: np.ndarray, spec: np.ndarray) -> np.ndarray:
    """Beamformer output Y = w^H X.

    Parameters
    ----------
    w : (F, 2) weights.
    spec : (2, F, T) ear spectra.

    Returns
    -------
    (F, T) output spectrum, in the precision of ``spec`` (the weights are cast to it).
    """
    return combine(np.conj(w.T).astype(np.result_type(spec.dtype, np.complex64), copy=False), spec)


def combine(wh: np.ndarray, spec: np.ndarray) -> np.ndarray:
    """Y = sum over ears of wh[e] X_e, for conjugate weights already laid out per ear.

    Parameters
    ----------
    wh : (2, F) conjugate weights w^H, in the precision of ``spec``.
    spec : (2, F, T) ear spectra.

    Returns
    -------
    (F, T) output spectrum (a view of a frame-major array, as :func:`hearnav.separation.stft.stft` makes).
    """
    frames = np.swapaxes(spec, -1, -2)  # (2, T, F): contiguous bins for hearnav's stft output
    if frames.dtype == wh.dtype == np.complex64 and frames.flags.c_contiguous and wh.flags.c_contiguous:
        return np.swapaxes(_combine_frames(wh, frames), -1, -2)  # one compiled pass, no temporaries
    out = frames[0] * wh[0]
    out += frames[1] * wh[1]
    return np.swapaxes(out, -1, -2)


@numba.njit(cache=True, nogil=True)
def _combine_frames(wh, frames):  # pragma: no cover (compiled; tested through combine)
    """(T, F) wh[0] X_0 + wh[1] X_1 of (2, T, F) frame-major ear spectra and (2, F) conjugate weights."""
    n_frames, n_bins = frames.shape[1], frames.shape[2]
    out = np.empty((n_frames, n_bins), frames.dtype)
    w0, w1 = wh[0], wh[1]
    for t in range(n_frames):
        x0, x1, y = frames[0, t], frames[1, t], out[t]
        for f in range(n_bins):
            y[f] = w0[f] * x0[f] + w1[f] * x1[f]
    return out
