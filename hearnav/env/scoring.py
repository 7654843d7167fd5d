"""The score of a binaural estimate: the mean over the two ears of each ear's SI-SDR against one reference per ear.

The environment's references are the target's early image at each ear (the score) and its full reverberant
image (the separation-only score), :mod:`hearnav.acoustics.early`. SI-SDR is that of
:mod:`hearnav.separation.metrics` (Le Roux et al. 2019), from inner products in double precision.
"""

from __future__ import annotations

import numba
import numpy as np

from hearnav.separation.metrics import _from_products, si_sdrs_unchecked

#: A reference ear with less energy than this is silent: no SI-SDR exists for its window.
SILENT_ENERGY = 1e-12


def binaural_scores(reference: np.ndarray, *estimates: np.ndarray) -> list[float] | None:
    """Mean over the ears of the SI-SDR (dB) of each (2, m) estimate against a (2, m) reference, or None when
    either ear of the reference is silent (no finite inputs are checked: the environment's hot path)."""
    total = [0.0] * len(estimates)
    for ear in (0, 1):
        scores = si_sdrs_unchecked(*(e[ear] for e in estimates), reference=reference[ear], silent=SILENT_ENERGY)
        if scores is None:
            return None
        total = [t + s for t, s in zip(total, scores)]
    return [t / 2 for t in total]


def window_scores(estimate: np.ndarray, mixture: np.ndarray, early: np.ndarray,
                  full: np.ndarray) -> tuple[float, float, float, float] | None:
    """The four scores of a window: the estimate and the mixture (the input) against the early and the full
    image, each the mean over the ears of :func:`binaural_scores`, from one compiled pass over the four (2, m)
    arrays; None when an ear of either reference is silent.

    Returns
    -------
    (score, full score, input score, input full score) in dB.
    """
    p = _ear_products(estimate, mixture, early, full)  # (2, 8)
    if not (p[:, 6].min() > SILENT_ENERGY and p[:, 7].min() > SILENT_ENERGY):
        return None
    out = []
    for signal, cross, power in ((estimate, 0, 4), (estimate, 1, 4), (mixture, 2, 5), (mixture, 3, 5)):
        ref, energy = (early, 6) if cross % 2 == 0 else (full, 7)
        out.append(sum(_from_products(p[e, cross], p[e, power], p[e, energy], signal[e], ref[e]) for e in (0, 1)) / 2)
    return out[0], out[1], out[2], out[3]


@numba.njit(cache=True, nogil=True, fastmath={"reassoc"})
def _ear_products(estimate, mixture, early, full):  # pragma: no cover (compiled; tested through window_scores)
    """Per ear: <est, early>, <est, full>, <mix, early>, <mix, full>, ||est||^2, ||mix||^2, ||early||^2,
    ||full||^2, in double precision (the compiler may reorder the sums; the order is fixed in the compiled code)."""
    out = np.zeros((2, 8))
    for ear in range(2):
        a = out[ear]
        for i in range(estimate.shape[1]):
            s, x = np.float64(estimate[ear, i]), np.float64(mixture[ear, i])
            e, f = np.float64(early[ear, i]), np.float64(full[ear, i])
            a[0] += s * e
            a[1] += s * f
            a[2] += x * e
            a[3] += x * f
            a[4] += s * s
            a[5] += x * x
            a[6] += e * e
            a[7] += f * f
    return out
