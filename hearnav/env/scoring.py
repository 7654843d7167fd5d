"""The score of a binaural estimate: the mean over the two ears of each ear's SI-SDR against one reference per ear.

The environment's references are the target's early image at each ear (the score) and its full reverberant
image (the separation-only score), :mod:`hearnav.acoustics.early`.
"""

from __future__ import annotations

import numpy as np

from hearnav.separation.metrics import si_sdrs_unchecked

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
