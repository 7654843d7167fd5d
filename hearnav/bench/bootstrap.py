"""Two-level (cluster) bootstrap of episodes grouped by scene, with percentile intervals.

Episodes of one scene share its rooms, sources and layout, so they are not independent draws: a
benchmark's scenes differ far more from each other than its episodes within a scene do. An interval that
resamples episodes only treats the few scenes as fixed and is too narrow for what a new scene would give.
The two-level bootstrap (Davison & Hinkley, *Bootstrap Methods and their Application*, 1997, ch. 3.8)
resamples the hierarchy as it was sampled: first the scenes, with replacement; then, within every scene
drawn, its episodes, with replacement, as many as the scene has. A scene drawn twice contributes two
independent within-scene resamples. With a single scene the first stage always returns that scene and the
procedure is the ordinary bootstrap over episodes.

Each resample is stored as its integer weights: how often each episode enters it. The episodes of a scene
that is drawn ``m`` times are ``m`` independent multinomial draws of ``n_s`` from ``n_s`` equally likely
episodes, which together are one multinomial draw of ``m * n_s`` (sums of independent multinomials with
the same probabilities are multinomial). Any statistic that is a function of weighted sums (a mean, a ratio
of sums, a median) is then evaluated for all resamples at once.

For a balanced design (``a`` scenes of ``b`` episodes, scene means ``ybar_i``, grand mean ``ybar``,
within-scene plug-in variances ``s_i^2 = mean_j (y_ij - ybar_i)^2``) the bootstrap variance of the mean is

    var* = sum_i (ybar_i - ybar)^2 / a^2  +  sum_i s_i^2 / (a^2 b)

(the first term from the choice of scenes, the second from the episodes within them; derived here, it is
the law of total variance applied to the two stages). Under a random-scene model with scene variance
``sigma_z^2`` and episode variance ``sigma_e^2`` its expectation is ``(1 - 1/a) sigma_z^2 / a + (2 - 1/a -
1/b) sigma_e^2 / (a b)``, against the true ``sigma_z^2 / a + sigma_e^2 / (a b)``: with few scenes the
scene part is underestimated by ``1 - 1/a``, while the within-scene part is counted about twice (it is
already in the spread of the scene means). Davison & Hinkley discuss this trade-off between resampling
one or both stages in ch. 3.8; we resample both, so that a single scene still gets an interval.

Intervals are percentile intervals of the resampled statistic. BCa (which :mod:`hearnav.bench.stats`
used before scenes were resampled) needs an acceleration from the jackknife; for clustered data the
jackknife must delete whole scenes, and from three to six scenes that estimate is noise. The percentile
interval needs no such estimate, respects monotone transformations and works unchanged for the ratio of
mean gains and the median.
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from functools import lru_cache

import numpy as np

from hearnav.bench.results import ResultsError

N_RESAMPLES = 9999  # scipy.stats.bootstrap's default number of resamples


def check_confidence(confidence: float) -> None:
    """Raise unless ``confidence`` lies in (0, 1)."""
    if not (isinstance(confidence, (int, float)) and 0.0 < confidence < 1.0):
        raise ResultsError(f"expected a confidence level between 0 and 1, got {confidence!r}: use e.g. 0.95")


def scene_codes(scenes: Sequence[Hashable | None]) -> np.ndarray:
    """Integer codes of the scene labels, numbered in the sorted order of the labels (``None`` first).

    Parameters
    ----------
    scenes : sequence, length n
        One label per episode; ``None`` (a row without a scene) is a scene of its own.

    Returns
    -------
    numpy.ndarray of int, shape (n,)
        ``codes[i]`` in ``0 .. n_scenes - 1``.
    """
    order = sorted(set(scenes), key=lambda s: (s is not None, str(s)))
    index = {label: k for k, label in enumerate(order)}
    return np.array([index[s] for s in scenes], dtype=np.int64)


@lru_cache(maxsize=8)
def _weights(codes: bytes, n_resamples: int, seed: int) -> np.ndarray:
    """Read-only resampling weights for the episode codes packed in ``codes``; see :func:`resample_weights`."""
    labels = np.frombuffer(codes, dtype=np.int64)
    n = labels.size
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    groups = [np.flatnonzero(labels == k) for k in range(int(labels.max()) + 1)]
    weights = np.zeros((n_resamples, n), dtype=float)
    if len(groups) == 1:  # one scene: the ordinary bootstrap over episodes
        weights[:] = rng.multinomial(n, np.full(n, 1.0 / n), size=n_resamples)
    else:
        n_scenes = len(groups)
        drawn = rng.multinomial(n_scenes, np.full(n_scenes, 1.0 / n_scenes), size=n_resamples)  # (B, S)
        for k, members in enumerate(groups):
            weights[:, members] = rng.multinomial(drawn[:, k] * members.size, np.full(members.size, 1.0 / members.size))
    weights.flags.writeable = False
    return weights


def resample_weights(scenes: Sequence[Hashable | None], n_resamples: int = N_RESAMPLES, seed: int = 0) -> np.ndarray:
    """How often each episode enters each resample of the two-level bootstrap.

    Stage 1 draws as many scenes as there are, with replacement; stage 2 draws, for every scene drawn,
    as many of its episodes as it has, with replacement (Davison & Hinkley 1997, ch. 3.8). With one scene
    stage 1 is skipped and the weights are those of the ordinary bootstrap over episodes. The generator is
    ``numpy.random.default_rng(numpy.random.SeedSequence(seed))``, so equal inputs give equal weights; the
    weights depend on the labels only through their sorted order (renaming scenes in the same order
    changes nothing).

    Parameters
    ----------
    scenes : sequence, length n
        The scene of each episode (``n >= 1``).
    n_resamples : int
        Number of resamples ``B``.
    seed : int
        Seed of the :class:`numpy.random.SeedSequence`.

    Returns
    -------
    numpy.ndarray of float, shape (B, n)
        Non-negative integer counts (read-only); every row sums to the size of its resample, which is ``n``
        with one scene or equal scene sizes, and varies otherwise.
    """
    if len(scenes) == 0:
        raise ResultsError("expected at least one episode to resample, got none: summarise finished episodes")
    return _weights(scene_codes(scenes).tobytes(), int(n_resamples), int(seed))


def percentile_interval(replicates: np.ndarray, confidence: float = 0.95) -> tuple[float, float]:
    """The percentile interval of bootstrap replicates: their ``(1 -+ confidence) / 2`` quantiles.

    Parameters
    ----------
    replicates : numpy.ndarray, shape (B,)
        The statistic in each resample.
    confidence : float
        Confidence level in (0, 1).

    Returns
    -------
    tuple[float, float]
        ``(low, high)`` by :func:`numpy.quantile` (linear interpolation); ``(nan, nan)`` when any replicate
        is undefined (NaN), since dropping them would bias the interval.
    """
    check_confidence(confidence)
    r = np.asarray(replicates, dtype=float)
    if r.size == 0 or not np.all(np.isfinite(r)):
        return (float("nan"), float("nan"))
    low, high = np.quantile(r, [(1.0 - confidence) / 2.0, (1.0 + confidence) / 2.0])
    return float(low), float(high)


def weighted_means(weights: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Mean of ``values`` (shape (n,)) in each resample of ``weights`` (shape (B, n)); shape (B,)."""
    return weights @ values / weights.sum(axis=1)


def weighted_ratios(weights: np.ndarray, numerator: np.ndarray, denominator: np.ndarray) -> np.ndarray:
    """``sum(numerator) / sum(denominator)`` in each resample; NaN where the denominator sum is not positive."""
    top, bottom = weights @ numerator, weights @ denominator
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(bottom > 0, top / np.where(bottom > 0, bottom, 1.0), np.nan)


def weighted_medians(weights: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Median of ``values`` in each resample, as :func:`numpy.median` of the values repeated by their weights.

    Parameters
    ----------
    weights : numpy.ndarray, shape (B, n)
        Integer counts (as floats); every row has a positive sum.
    values : numpy.ndarray, shape (n,)

    Returns
    -------
    numpy.ndarray, shape (B,)
        With ``N`` values in a resample, the value of rank ``(N + 1) / 2`` for odd ``N`` and the mean of
        ranks ``N / 2`` and ``N / 2 + 1`` for even ``N`` (ranks from 1, in ascending order).
    """
    order = np.argsort(values, kind="stable")
    sorted_values = values[order]
    cumulative = np.cumsum(weights[:, order], axis=1)
    total = cumulative[:, -1]
    low_rank, high_rank = np.floor((total + 1) / 2), np.ceil((total + 1) / 2)
    low = sorted_values[np.argmax(cumulative >= low_rank[:, None], axis=1)]
    high = sorted_values[np.argmax(cumulative >= high_rank[:, None], axis=1)]
    return (low + high) / 2.0
