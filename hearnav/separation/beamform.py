"""Per-bin beamformer weights for two ears, vectorised over frequency (no Python loop over bins).

A beamformer output is Y(f, t) = w(f)^H X(f, t) for ear spectra X (2 channels). Both beamformers here are
distortionless towards the steering vector d: w^H d = 1, so a source from the look direction comes out as its
head-centre free-field signal.

References
----------
- Delay-and-sum (matched filter): w = d / (d^H d) (e.g. Van Trees, *Optimum Array Processing*, 2002).
- J. Capon, "High-resolution frequency-wavenumber spectrum analysis", Proc. IEEE 57(8), 1969:
  w = R^-1 d / (d^H R^-1 d) (MVDR when R is the noise covariance; MPDR when it is the mixture's, which cancels
  a reverberant target: the separators give MVDR a noise covariance estimated without the target).
- E. Hadad, S. Doclo & S. Gannot, IEEE/ACM TASLP 24(3), 2016: the binaural MVDR's output at ear e is d_e w^H X
  (:func:`to_ears`), which keeps the target's interaural transfer function d_L / d_R.
- K. U. Simmer, J. Bitzer & C. Marro, "Post-filtering techniques", in *Microphone Arrays* (Springer 2001): the
  multichannel Wiener filter of a rank-one target is the MVDR followed by a single-channel Wiener gain
  (:func:`mwf_gain`); S. Doclo & M. Moonen, IEEE TSP 50(9), 2002; Cornelis et al., IEEE TASLP 18(2), 2010
  (binaural MWF: one such filter per ear, here the same MVDR output scaled by d_e).
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


def masked_covariance(spec: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Per-bin spatial covariance of the part of a mixture a mask gives to the noise: a noise covariance
    estimated without the target.

    Parameters
    ----------
    spec : (2, F, T) ear spectra.
    weights : (F, T) weights in [0, 1], the share of each time-frequency bin that is noise (1 - a target mask).

    Returns
    -------
    (F, 2, 2) Hermitian R_n[f] = (1/T) sum_t w(f, t) X(f, t) X(f, t)^H: the mixture's covariance
    (:func:`spatial_covariance`) with each bin counted by its noise share, so a bin the mask gives wholly to the
    target adds nothing.
    """
    w = np.asarray(weights, dtype=spec.real.dtype)
    return np.einsum("ft,ift,jft->fij", w, spec, np.conj(spec)) / spec.shape[-1]


def mwf_gain(y: np.ndarray, w: np.ndarray, noise: np.ndarray) -> np.ndarray:
    """Wiener gain after an MVDR: the rank-one multichannel Wiener filter is w times this gain per bin.

    Parameters
    ----------
    y : (F, T) MVDR output spectrum.
    w : (F, 2) its weights.
    noise : (F, 2, 2) the noise covariance they were computed from.

    Returns
    -------
    (F,) gains phi_s / (phi_s + phi_r) in [0, 1]: phi_r = w^H R_n w the residual noise power at the output,
    phi_s = max(mean_t |Y|^2 - phi_r, 0) the target power (0 where both are zero).
    """
    residual = np.einsum("fi,fij,fj->f", np.conj(w), noise, w).real
    target = np.maximum(np.mean(y.real ** 2 + y.imag ** 2, axis=-1) - residual, 0.0)
    total = target + residual
    return np.divide(target, total, out=np.zeros_like(total), where=total > 0).astype(y.real.dtype)


def to_ears(d: np.ndarray, y: np.ndarray) -> np.ndarray:
    """A beamformer output put back at each ear through the target's relative transfer function.

    Parameters
    ----------
    d : (F, 2) steering vector (relative to the head centre) the beamformer is distortionless towards.
    y : (F, T) output spectrum.

    Returns
    -------
    (2, F, T) spectra d_e Y, in the precision of ``y`` (a view of a frame-major array, as
    :func:`hearnav.separation.stft.stft` makes, when ``y`` is one).
    """
    frames = np.swapaxes(y, -1, -2)  # (T, F): contiguous bins for hearnav's stft output
    per_ear = np.ascontiguousarray(np.swapaxes(d, 0, 1), dtype=y.dtype)  # (2, F), contiguous: a fast product
    return np.swapaxes(per_ear[:, None, :] * frames[None], -1, -2)


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
