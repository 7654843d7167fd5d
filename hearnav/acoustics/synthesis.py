"""Early binaural responses from image sources.

Every path reaches each ear with Woodworth's delay and Brown & Duda's head shadow for its own direction of
arrival. Because the head-shadow filter is affine in alpha, H = L + alpha P, and the wall damping is a sum
of octave bands, an ear's response is

    sum_b W_b(w) [ L(w) FFT(a_b)(w) + P(w) FFT(c_b)(w) ],

where a_b and c_b are sparse trains of fractional-delay impulses weighted by the band gain (and by alpha
for c_b). The band gains of all paths are first split into a few shared band shapes (a truncated SVD),
so only a few trains per ear are needed; they are built for many responses at once by scattering and
filtered with one batched FFT, instead of one frequency response per path. :func:`early_direct` is the straightforward
per-path, per-bin evaluation of the same model, kept for checks and for timing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.fft as sfft

from hearnav.physics import head
from hearnav.acoustics.bands import band_weights, interpolate_bands

#: Taps of the windowed-sinc fractional-delay filter.
FD_TAPS = 24
#: Paths closer than this (m) are treated as this far, so that a source at the head stays finite.
MIN_DISTANCE = 0.1


@dataclass(frozen=True)
class PathSet:
    """Early paths of many (receiver, source) pairs, concatenated.

    ``owner[p]`` is the pair that path p belongs to.
    """

    vectors: np.ndarray  # (P, 3) from the listener's head centre to each image source
    gains: np.ndarray  # (P, n_bands) band amplitude: reflection damping / distance
    owner: np.ndarray  # (P,) pair index
    n_pairs: int


def path_geometry(paths: PathSet, headings: np.ndarray, c: float, radius: float) -> tuple[np.ndarray, np.ndarray]:
    """Arrival time at each ear and head-shadow alpha of every path.

    Returns
    -------
    delay : (H, 2, P) seconds from emission.
    alpha : (H, 2, P).
    """
    r = np.maximum(np.linalg.norm(paths.vectors, axis=1), MIN_DISTANCE)
    u = paths.vectors / r[:, None]
    beta = head.ear_angles(u, np.asarray(headings, float))
    return r / c + head.woodworth_delay(beta, radius, c), head.shadow_alpha(beta)


_FD_STEPS = 1024  # table resolution of the fractional part, in steps per sample


def _fd_kernel(frac: np.ndarray) -> np.ndarray:
    """Hann-windowed sinc taps for fractional offsets in [0, 1]; (..., FD_TAPS)."""
    t = np.arange(FD_TAPS) - (FD_TAPS // 2 - 1) - frac[..., None]
    return np.sinc(t) * 0.5 * (1 + np.cos(np.pi * t / (FD_TAPS // 2 + 1)))


_FD_TABLE = _fd_kernel(np.arange(_FD_STEPS + 1) / _FD_STEPS)  # (steps + 1, FD_TAPS)


def fd_taps(position: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Hann-windowed sinc taps for fractional sample positions, from a table with linear interpolation.

    Parameters
    ----------
    position : (...) sample positions.

    Returns
    -------
    first : (...) int index of the first tap; taps : (..., FD_TAPS) weights.
    """
    position = np.asarray(position, dtype=float)
    base = np.floor(position)
    x = (position - base) * _FD_STEPS
    i = np.minimum(x.astype(np.int64), _FD_STEPS - 1)
    w = (x - i)[..., None]
    taps = (1 - w) * _FD_TABLE[i] + w * _FD_TABLE[i + 1]
    return base.astype(np.int64) - FD_TAPS // 2 + 1, taps


def fft_size(length: int) -> int:
    """FFT length for responses of ``length`` samples: room for wrap-around; even, with factors 2, 3, 5 only."""
    n = length + 4 * FD_TAPS
    n += n % 2
    while True:
        m = n
        for p in (2, 3, 5):
            while m % p == 0:
                m //= p
        if m == 1:
            return n
        n += 2


def band_basis(gains: np.ndarray, tol: float = 1e-3) -> tuple[np.ndarray, np.ndarray]:
    """Low-rank split of band gains, gains ~= coeffs @ basis, dropping singular values below ``tol``.

    Paths that bounce off the same few materials share a few band shapes, so a handful of components
    replaces the seven bands. The dropped part's Frobenius norm is at most ``tol`` times the gains'.

    Parameters
    ----------
    gains : (P, B).

    Returns
    -------
    coeffs : (P, k); basis : (k, B).
    """
    u, sv, vt = np.linalg.svd(gains, full_matrices=False)
    tail = np.sqrt(np.cumsum((sv ** 2)[::-1])[::-1])  # tail[k] = norm of the part dropped when keeping k
    k = max(1, int(np.count_nonzero(tail > tol * tail[0])))
    return u[:, :k] * sv[:k], vt[:k]


def early_fast(paths: PathSet, headings: np.ndarray, fs: int, c: float, radius: float, length: int,
               lead: int, groups: int = 3) -> np.ndarray:
    """Binaural early responses of every pair and heading (the fast way).

    Pairs are sorted by their latest arrival and synthesised in ``groups`` batches, each with an FFT only as
    long as its own latest path needs.

    Returns
    -------
    (n_pairs, H, 2, length) float32.
    """
    out = np.zeros((paths.n_pairs, len(headings), 2, length), np.float32)
    if paths.vectors.shape[0] == 0:
        return out
    latest = np.zeros(paths.n_pairs)
    np.maximum.at(latest, paths.owner, np.linalg.norm(paths.vectors, axis=1))
    order = np.argsort(latest, kind="stable")
    for batch in np.array_split(order, min(groups, paths.n_pairs)):
        keep = np.isin(paths.owner, batch)
        remap = np.empty(paths.n_pairs, np.int64)
        remap[batch] = np.arange(len(batch))
        sub = PathSet(paths.vectors[keep], paths.gains[keep], remap[paths.owner[keep]], len(batch))
        out[batch] = _early_batch(sub, headings, fs, c, radius, length, lead)
    return out


def _early_batch(paths: PathSet, headings: np.ndarray, fs: int, c: float, radius: float, length: int,
                 lead: int) -> np.ndarray:
    """:func:`early_fast` for one batch of pairs, with one FFT length.

    Returns
    -------
    (n_pairs, H, 2, length) float32.
    """
    headings = np.asarray(headings, float)
    n_h, n_p = len(headings), paths.vectors.shape[0]
    out_rows = paths.n_pairs * n_h * 2
    if n_p == 0:
        return np.zeros((paths.n_pairs, n_h, 2, length), np.float32)
    delay, alpha = path_geometry(paths, headings, c, radius)
    # Path-major order: paths are grouped by pair, so the scatter below writes nearly in memory order.
    delay, alpha = delay.transpose(2, 0, 1), alpha.transpose(2, 0, 1)  # (P, H, 2)
    first, taps = fd_taps(delay * fs + lead)  # (P, H, 2), (P, H, 2, K)
    used = min(length, int(first.max()) + 4 * FD_TAPS)  # this batch's latest tap, plus filter ringing
    n_fft = fft_size(used)  # a batch whose paths all arrive early gets a shorter FFT
    if first.min() < 0 or first.max() + FD_TAPS > n_fft:
        raise ValueError(f"paths fall outside the response buffer (expected delays within {length} samples)")
    resp = (paths.owner[:, None, None] * n_h + np.arange(n_h)[None, :, None]) * 2 + np.arange(2)[None, None, :]
    index = ((resp * n_fft + first)[..., None] + np.arange(FD_TAPS)).reshape(-1)
    coeffs, basis = band_basis(paths.gains)  # (P, k), (k, B)
    n_k = coeffs.shape[1]
    size = out_rows * n_fft
    trains = np.zeros((2 * n_k, size), np.float32)  # single precision: the cache stores float16
    taps = taps.astype(np.float32)
    alpha = alpha.astype(np.float32)[..., None]
    alpha_taps = taps * alpha
    for k in range(n_k):
        weight = coeffs[:, k].astype(np.float32)[:, None, None, None]
        np.add.at(trains[k], index, (taps * weight).reshape(-1))
        np.add.at(trains[n_k + k], index, (alpha_taps * weight).reshape(-1))
    spec = sfft.rfft(trains.reshape(2 * n_k, out_rows, n_fft), axis=-1)
    freqs = sfft.rfftfreq(n_fft, 1 / fs)
    low, high = head.shadow_basis(2 * np.pi * freqs, radius, c)
    shapes = basis @ band_weights(freqs)  # (k, F)
    filters = np.concatenate([shapes * low, shapes * high]).astype(np.complex64)  # (2k, F)
    spectrum = spec[0] * filters[0]
    term = np.empty_like(spectrum)
    for k in range(1, 2 * n_k):
        np.multiply(spec[k], filters[k], out=term)
        spectrum += term
    out = np.zeros((out_rows, length), np.float32)
    out[:, :used] = sfft.irfft(spectrum, n_fft, axis=1)[:, :used]
    return out.reshape(paths.n_pairs, n_h, 2, length)


def early_direct(paths: PathSet, headings: np.ndarray, fs: int, c: float, radius: float, length: int,
                 lead: int) -> np.ndarray:
    """The same responses the straightforward way: each path's full frequency response, bin by bin.

    Returns
    -------
    (n_pairs, H, 2, length) float32.
    """
    headings = np.asarray(headings, float)
    n_fft = fft_size(length)
    freqs = sfft.rfftfreq(n_fft, 1 / fs)
    omega = 2 * np.pi * freqs
    delay, _ = path_geometry(paths, headings, c, radius)
    r = np.maximum(np.linalg.norm(paths.vectors, axis=1), MIN_DISTANCE)
    beta = head.ear_angles(paths.vectors / r[:, None], headings)
    spectra = np.zeros((paths.n_pairs, len(headings), 2, freqs.size), complex)
    for p in range(paths.vectors.shape[0]):
        damping = interpolate_bands(paths.gains[p], freqs)
        for h in range(len(headings)):
            for e in range(2):
                shadow = head.head_shadow(omega, beta[h, e, p], radius, c)
                phase = np.exp(-1j * omega * (delay[h, e, p] + lead / fs))
                spectra[paths.owner[p], h, e] += damping * shadow * phase
    return sfft.irfft(spectra, n_fft, axis=-1)[..., :length].astype(np.float32)
