"""Early binaural responses from image sources.

Every path reaches each ear with Woodworth's delay and Brown & Duda's head shadow for its own direction of
arrival. Because the head-shadow filter is affine in alpha, H = L + alpha P, and the wall damping is a sum
of octave bands, an ear's response is

    sum_b W_b(w) [ L(w) FFT(a_b)(w) + P(w) FFT(c_b)(w) ],

where a_b and c_b are sparse trains of fractional-delay impulses weighted by the band gain (and by alpha
for c_b). The trains are built for many responses at once with one sparse product and filtered with one
batched FFT, instead of one frequency response per path. :func:`early_direct` is the straightforward
per-path, per-bin evaluation of the same model, kept for checks and for timing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.fft as sfft
import scipy.sparse as sp

from hearnav.acoustics import head
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


def fd_taps(position: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Hann-windowed sinc taps for fractional sample positions.

    Parameters
    ----------
    position : (...) sample positions.

    Returns
    -------
    first : (...) int index of the first tap; taps : (..., FD_TAPS) weights.
    """
    first = np.floor(position).astype(np.int64) - FD_TAPS // 2 + 1
    t = first[..., None] + np.arange(FD_TAPS) - position[..., None]
    window = 0.5 * (1 + np.cos(np.pi * t / (FD_TAPS // 2 + 1)))
    return first, np.sinc(t) * window


def fft_size(length: int) -> int:
    """FFT length used for responses of ``length`` samples (room for the filter's wrap-around)."""
    return sfft.next_fast_len(length + 4 * FD_TAPS, real=True)


def early_fast(paths: PathSet, headings: np.ndarray, fs: int, c: float, radius: float, length: int,
               lead: int) -> np.ndarray:
    """Binaural early responses of every pair and heading (the fast way).

    Returns
    -------
    (n_pairs, H, 2, length) float32.
    """
    headings = np.asarray(headings, float)
    n_h, n_p = len(headings), paths.vectors.shape[0]
    n_fft = fft_size(length)
    out_rows = paths.n_pairs * n_h * 2
    if n_p == 0:
        return np.zeros((paths.n_pairs, n_h, 2, length), np.float32)
    delay, alpha = path_geometry(paths, headings, c, radius)
    first, taps = fd_taps(delay * fs + lead)  # (H, 2, P), (H, 2, P, K)
    offsets = first[..., None] + np.arange(FD_TAPS)
    inside = (offsets >= 0) & (offsets < n_fft)
    resp = (paths.owner[None, None, :] * n_h + np.arange(n_h)[:, None, None]) * 2 + np.arange(2)[None, :, None]
    rows = (resp[..., None] * n_fft + offsets)[inside]
    cols = np.broadcast_to(np.arange(n_p)[None, None, :, None], taps.shape)[inside]
    shape = (out_rows * n_fft, n_p)
    trains_a = sp.csr_matrix((taps[inside], (rows, cols)), shape=shape) @ paths.gains
    trains_c = sp.csr_matrix(((taps * alpha[..., None])[inside], (rows, cols)), shape=shape) @ paths.gains
    n_b = paths.gains.shape[1]
    spec_a = sfft.rfft(trains_a.reshape(out_rows, n_fft, n_b), axis=1)
    spec_c = sfft.rfft(trains_c.reshape(out_rows, n_fft, n_b), axis=1)
    freqs = sfft.rfftfreq(n_fft, 1 / fs)
    low, high = head.shadow_basis(2 * np.pi * freqs, radius, c)
    weights = band_weights(freqs).T  # (F, B)
    spectrum = np.einsum("rfb,fb->rf", spec_a, weights * low[:, None]) + np.einsum(
        "rfb,fb->rf", spec_c, weights * high[:, None])
    ir = sfft.irfft(spectrum, n_fft, axis=1)[:, :length]
    return ir.reshape(paths.n_pairs, n_h, 2, length).astype(np.float32)


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
