"""Scale-invariant signal-to-distortion ratio (SI-SDR).

After J. Le Roux, S. Wisdom, H. Erdogan & J. R. Hershey, "SDR - half-baked or well done?", ICASSP 2019:
with the optimal scale alpha = <est, ref> / ||ref||^2 of the reference,

    SI-SDR = 10 log10( ||alpha ref||^2 / ||alpha ref - est||^2 )  dB.

The ratio is clipped to [1e-10, 1e10], i.e. the result to [-100, 100] dB (:data:`CLIP_DB`), so a perfect
estimate gives +100 dB rather than infinity and an estimate orthogonal to the reference (or silent) gives
-100 dB rather than minus infinity. Away from the clip the value is exact (no epsilon is added).
"""

from __future__ import annotations

import math

import numba
import numpy as np

from hearnav.errors import ConfigError

#: Results are clipped to [-CLIP_DB, CLIP_DB].
CLIP_DB = 100.0
_RATIO = 10.0 ** (CLIP_DB / 10)


def _checked(estimate: np.ndarray, reference: np.ndarray, batch: bool) -> tuple[np.ndarray, np.ndarray]:
    est = np.asarray(estimate, dtype=float)
    ref = np.asarray(reference, dtype=float)
    want = "(..., n) arrays of the same shape" if batch else "(n,) arrays"
    if est.shape != ref.shape:
        raise ConfigError(f"SI-SDR needs estimate and reference as {want}; got estimate {est.shape} and "
                          f"reference {ref.shape}")
    if (not batch and est.ndim != 1) or est.ndim == 0 or est.shape[-1] == 0:
        raise ConfigError(f"SI-SDR needs estimate and reference as non-empty {want}; got shape {est.shape}")
    for name, arr in (("estimate", est), ("reference", ref)):
        if not np.all(np.isfinite(arr)):
            raise ConfigError(f"SI-SDR needs finite samples; the {name} has {int(np.sum(~np.isfinite(arr)))} "
                              "NaN or infinite values")
    return est, ref


def si_sdr_batch(estimates: np.ndarray, references: np.ndarray, zero_mean: bool = False) -> np.ndarray:
    """SI-SDR of many estimate/reference pairs at once.

    Parameters
    ----------
    estimates, references : (..., n) real arrays of the same shape, n >= 1.
    zero_mean : subtract each signal's mean first.

    Returns
    -------
    (...) SI-SDR in dB, clipped to [-100, 100].

    Raises
    ------
    ConfigError
        Shapes differ, are empty, contain NaN/inf, or a reference is silent.
    """
    est, ref = _checked(estimates, references, batch=True)
    if zero_mean:
        est = est - est.mean(axis=-1, keepdims=True)
        ref = ref - ref.mean(axis=-1, keepdims=True)
    energy = np.einsum("...n,...n->...", ref, ref)
    if np.any(energy == 0):
        raise ConfigError("SI-SDR needs a reference with energy; got a silent (all-zero"
                          f"{' after removing the mean' if zero_mean else ''}) reference")
    return _core(est, ref, energy)


def _core(est: np.ndarray, ref: np.ndarray, energy: np.ndarray) -> np.ndarray:
    """SI-SDR in dB of (..., n) arrays whose references have the (nonzero) energies ``energy``."""
    alpha = np.einsum("...n,...n->...", est, ref) / energy
    target = alpha[..., None] * ref
    num = np.einsum("...n,...n->...", target, target)
    err = target - est
    den = np.einsum("...n,...n->...", err, err)
    ratio = np.divide(num, den, out=np.full_like(num, _RATIO), where=den > 0)
    ratio = np.where((num == 0) & (den == 0), 0.0, ratio)  # silent estimate: no target at all
    return 10 * np.log10(np.clip(ratio, 1 / _RATIO, _RATIO))


#: Above this SI-SDR ratio (60 dB) the closed-form error energy ||est||^2 - <est, ref>^2 / ||ref||^2 loses digits
#: to cancellation, so :func:`si_sdr_unchecked` computes the error sample by sample instead.
_CLOSED_FORM_MAX = 1e6


def si_sdr_unchecked(estimate: np.ndarray, reference: np.ndarray) -> float:
    """:func:`si_sdr` without input checks, for callers that guarantee finite (n,) inputs and a sounding
    reference: the same formula and clipping on Python floats (see :func:`si_sdrs_unchecked`)."""
    return si_sdrs_unchecked(estimate, reference=reference, silent=-math.inf)[0]


def si_sdrs_unchecked(*estimates: np.ndarray, reference: np.ndarray, silent: float = 0.0) -> list[float] | None:
    """SI-SDR in dB of each (n,) estimate against one (n,) reference, without input checks (the environment's
    hot path), or None when the reference is silent (||reference||^2 <= ``silent``).

    The inner products of each estimate come from one compiled pass in double precision (:func:`_products`).
    The error energy ||alpha ref - est||^2 = ||est||^2 - <est, ref>^2 / ||ref||^2 comes from them, except above
    60 dB, where it is computed from the error signal. A NaN or infinite sample makes its estimate's score NaN.
    """
    ref = _vector(reference)
    scores = []
    for estimate in estimates:
        cross, power, energy = _products(_vector(estimate), ref)
        if not energy > silent:
            return None
        scores.append(_from_products(cross, power, energy, estimate, reference))
    return scores


def _vector(x: np.ndarray) -> np.ndarray:
    """``x`` as a contiguous float32 or float64 vector for :func:`_products` (itself when it is one)."""
    if x.dtype in (np.float32, np.float64) and x.flags.c_contiguous:
        return x
    return np.ascontiguousarray(x, np.float64)


@numba.njit(cache=True, nogil=True, fastmath={"reassoc"})
def _products(estimate, reference):  # pragma: no cover (compiled; tested through si_sdr_unchecked)
    """(<est, ref>, ||est||^2, ||ref||^2) in double precision. The compiler may reorder the sums to vectorise
    them; the order is fixed in the compiled code, so equal inputs give equal results."""
    cross = power = energy = 0.0
    for i in range(estimate.shape[0]):
        e, r = np.float64(estimate[i]), np.float64(reference[i])
        cross += e * r
        power += e * e
        energy += r * r
    return cross, power, energy


def _from_products(cross: float, power: float, energy: float, est: np.ndarray, ref: np.ndarray) -> float:
    """SI-SDR in dB from <est, ref>, ||est||^2 and ||ref||^2 (the signals serve above 60 dB)."""
    num = cross * cross / energy  # ||alpha ref||^2
    den = power - num
    if den <= num / _CLOSED_FORM_MAX:
        err = (cross / energy) * np.asarray(ref, np.float64) - est
        den = float(np.dot(err, err))
    if den <= 0.0:
        return -CLIP_DB if num == 0.0 else CLIP_DB
    return 10 * math.log10(min(max(num / den, 1 / _RATIO), _RATIO))


def si_sdr(estimate: np.ndarray, reference: np.ndarray, zero_mean: bool = False) -> float:
    """SI-SDR of one estimate against one reference, in dB.

    Parameters
    ----------
    estimate, reference : (n,) real arrays, n >= 1 (estimate first).
    zero_mean : subtract each signal's mean first.

    Returns
    -------
    SI-SDR in dB, clipped to [-100, 100].

    Raises
    ------
    ConfigError
        Shapes differ, are not 1-D, are empty, contain NaN/inf, or the reference is silent.
    """
    est, ref = _checked(estimate, reference, batch=False)
    return float(si_sdr_batch(est, ref, zero_mean))
