"""Honest summaries of benchmark results: means with scene-level bootstrap intervals, paired comparisons.

Every interval is a percentile interval of the two-level bootstrap of :mod:`hearnav.bench.bootstrap`:
scenes are resampled with replacement, then episodes within each scene drawn (Davison & Hinkley,
*Bootstrap Methods and their Application*, 1997, ch. 3.8), from a seeded generator, so a summary is
reproducible. With one scene this is the ordinary bootstrap over episodes. Paired comparisons use the
episodes both policies finished, matched on ``episode_seed``, and resample the pairs the same way (a pair
stays together, in its scene); their p-value is the two-sided Wilcoxon signed-rank test
(:func:`scipy.stats.wilcoxon`).

Normalised gain is the ratio of mean gains (:func:`normalised_gain`), not the mean of the per-episode
ratios: those divide by the oracle bound's gain of each episode, which is small in some episodes, so their
mean is dominated by a few episodes and biased.

Undefined numbers (a mean of nothing, an interval from fewer than two values) are ``None`` in
:func:`mean_ci`, :func:`normalised_gain`, :func:`paired_comparison` and :func:`summarise` (which makes a
:class:`Summary`), so their output is valid JSON; :func:`bootstrap_ci` itself returns ``(nan, nan)``.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Hashable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import stats as _st

from hearnav.bench.bootstrap import (N_RESAMPLES, check_confidence, percentile_interval, resample_weights,
                                     weighted_means, weighted_medians, weighted_ratios)
from hearnav.bench.results import EpisodeResult, ResultsError

#: Metrics summarised by their mean (``Summary.policies[name][metric]``); normalised gain is summarised apart.
METRICS = ("gain_db", "final_si_sdr_db")
#: The row fields of the normalised gain: the policy's gain, and the bound and start scores whose
#: difference is the oracle bound's gain (as the runner divides by for the row's ``normalised_gain``).
GAIN, BOUND, PER_EPISODE = "gain_db", "oracle_gain_db", "normalised_gain"
#: The ``scenes`` key of rows that name no scene (rows of older versions).
NO_SCENE = "(no scene)"
#: ``Summary.format``: 2 since normalised gain is a ratio of means and summaries break results down by scene.
FORMAT = 2


def _number(v: Any) -> float:
    return math.nan if v is None else float(v)


def _finite(values: Iterable[Any], scenes: Sequence[Hashable | None] | None) -> tuple[np.ndarray, list]:
    """The finite values as floats, and the scene of each (all ``None`` without ``scenes``)."""
    x = np.array([_number(v) for v in values], dtype=float)
    labels = [None] * x.size if scenes is None else list(scenes)
    if len(labels) != x.size:
        raise ResultsError(f"expected one scene per value, got {len(labels)} scenes for {x.size} values: "
                           f"pass the scene of every episode")
    keep = np.isfinite(x)
    return x[keep], [s for s, k in zip(labels, keep) if k]


def _or_none(x: float | None) -> float | None:
    return None if x is None or not math.isfinite(x) else float(x)


def _pair(interval: tuple[float, float]) -> list[float | None]:
    return [_or_none(interval[0]), _or_none(interval[1])]


def bootstrap_ci(values: Sequence[float] | np.ndarray, confidence: float = 0.95, n_resamples: int = N_RESAMPLES,
                 seed: int = 0, scenes: Sequence[Hashable | None] | None = None) -> tuple[float, float]:
    """Two-level bootstrap percentile interval of the mean.

    Scenes are resampled with replacement, then episodes within each scene drawn
    (:func:`hearnav.bench.bootstrap.resample_weights`); the interval holds the middle ``confidence`` of the
    resampled means. Without ``scenes`` (or with one scene) it is the ordinary percentile bootstrap over
    values. Constant values give ``(c, c)``.

    Parameters
    ----------
    values : array_like, shape (n,)
        ``None``, NaN and infinities are dropped, together with their scenes.
    confidence : float
        Confidence level in (0, 1).
    n_resamples : int
        Number of bootstrap resamples.
    seed : int
        Seed of the :class:`numpy.random.SeedSequence` the generator is drawn from.
    scenes : sequence, length n, optional
        The scene of each value.

    Returns
    -------
    tuple[float, float]
        ``(low, high)``; ``(nan, nan)`` for fewer than two values.
    """
    check_confidence(confidence)
    x, labels = _finite(values, scenes)
    if x.size < 2:
        return (math.nan, math.nan)
    if np.ptp(x) == 0:
        return (float(x[0]), float(x[0]))
    return percentile_interval(weighted_means(resample_weights(labels, n_resamples, seed), x), confidence)


def mean_ci(values: Iterable[Any], seed: int = 0, scenes: Sequence[Hashable | None] | None = None) -> dict:
    """Mean and 95 % two-level bootstrap interval of the usable values (see :func:`bootstrap_ci`).

    Parameters
    ----------
    values : iterable, length n
        Numbers; ``None``, NaN and infinities are ignored.
    seed : int
        Bootstrap seed.
    scenes : sequence, length n, optional
        The scene of each value; without it, episodes alone are resampled.

    Returns
    -------
    dict
        ``{"mean": float | None, "ci95": [low, high] (None where undefined), "n": n_used}``.
    """
    values = list(values)
    x, labels = _finite(values, scenes)
    return {"mean": float(np.mean(x)) if x.size else None,
            "ci95": _pair(bootstrap_ci(x, seed=seed, scenes=labels)), "n": int(x.size)}


def normalised_gain(rows: Sequence[Mapping[str, Any]], seed: int = 0, scenes: bool = True) -> dict:
    """The policy's mean gain as a share of the oracle bound's mean gain, and the per-episode median.

    For episode ``i`` the policy gains ``g_i = gain_db`` and the oracle bound ``h_i = oracle_gain_db`` (the best
    reachable pose's gain over the start, on the same evaluation windows; the span the row's
    ``normalised_gain = g_i / h_i`` divides by). The summary's normalised gain is the ratio of means

        R = sum_i g_i / sum_i h_i = mean(g) / mean(h)

    over the finished episodes where ``g_i`` and ``h_i`` are both known: 1 when the policy always reaches
    the bound, 0 when it gains nothing on average. Unlike the mean of ``g_i / h_i`` it does not let an
    episode with a small ``h_i`` dominate. Its interval recomputes ``R`` in every two-level resample (the
    sums over the same resampled episodes). Beside it is the median of the per-episode ``normalised_gain``
    (episodes where it is defined, i.e. ``h_i`` positive), with its own two-level interval.

    Parameters
    ----------
    rows : sequence of dict
        Finished rows (``status == "ok"``) of one policy.
    seed : int
        Bootstrap seed.
    scenes : bool
        Resample scenes (the rows' ``scene``) then episodes; ``False`` resamples episodes only (for the
        rows of one scene the two agree).

    Returns
    -------
    dict
        ``{"ratio_of_means", "ci95", "n", "median", "median_ci95", "median_n"}``: ``n`` episodes enter the
        ratio, ``median_n`` the median; ``ratio_of_means`` is ``None`` when ``sum h_i`` is not positive, and
        an interval is ``[None, None]`` with fewer than two episodes or when a resample's ``sum h_i`` is not
        positive.
    """
    label = (lambda r: r.get("scene")) if scenes else (lambda r: None)
    g = np.array([_number(r.get(GAIN)) for r in rows], dtype=float)
    h = np.array([_number(r.get(BOUND)) for r in rows], dtype=float)
    keep = np.isfinite(g) & np.isfinite(h)
    g, h = g[keep], h[keep]
    ratio, interval = None, (math.nan, math.nan)
    if g.size and h.sum() > 0:
        ratio = float(g.sum() / h.sum())
        if g.size >= 2:
            weights = resample_weights([label(r) for r, k in zip(rows, keep) if k], seed=seed)
            interval = percentile_interval(weighted_ratios(weights, g, h))
    per_episode, labels = _finite((r.get(PER_EPISODE) for r in rows), [label(r) for r in rows])
    median_interval = (math.nan, math.nan)
    if per_episode.size >= 2:
        median_interval = percentile_interval(weighted_medians(resample_weights(labels, seed=seed), per_episode))
    return {"ratio_of_means": ratio, "ci95": _pair(interval), "n": int(g.size),
            "median": float(np.median(per_episode)) if per_episode.size else None,
            "median_ci95": _pair(median_interval), "median_n": int(per_episode.size)}


def paired_comparison(a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray, seed: int = 0,
                      scenes: Sequence[Hashable | None] | None = None) -> dict:
    """Compare two policies on the same episodes: the mean of ``a - b`` with a CI, and a Wilcoxon p-value.

    The interval is the two-level bootstrap of the per-episode differences (:func:`bootstrap_ci`): scenes
    are resampled, then episodes within them, and a resampled episode brings both of its values, so the
    pairs stay together. With one scene, or without ``scenes``, it resamples the pairs only. The Wilcoxon
    signed-rank test treats the pairs as independent; when scenes differ a lot, read the interval.

    Parameters
    ----------
    a, b : array_like, shape (n,)
        Per-episode values, element ``i`` of both from the same episode. Pairs where either is ``None``,
        NaN or infinite are dropped.
    seed : int
        Bootstrap seed.
    scenes : sequence, length n, optional
        The scene of each episode.

    Returns
    -------
    dict
        ``{"mean_difference", "ci95": [low, high], "n", "wilcoxon_p"}``: the p-value is two-sided, 1.0 when
        every difference is zero and ``None`` for fewer than two pairs (as are undefined means and bounds).
    """
    fa = np.array([_number(v) for v in a], dtype=float)
    fb = np.array([_number(v) for v in b], dtype=float)
    if fa.shape != fb.shape or fa.ndim != 1:
        raise ResultsError(f"expected paired 1-D arrays of equal length, got shapes {fa.shape} and {fb.shape}: "
                           f"match the episodes before comparing")
    d, labels = _finite(fa - fb, scenes)  # a difference is finite exactly when both values are
    low, high = bootstrap_ci(d, seed=seed, scenes=labels)
    if d.size < 2:
        p = None
    elif not np.any(d):
        p = 1.0
    else:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            p = float(_st.wilcoxon(d, alternative="two-sided").pvalue)
    return {"mean_difference": float(np.mean(d)) if d.size else None, "ci95": [_or_none(low), _or_none(high)],
            "n": int(d.size), "wilcoxon_p": _or_none(p) if p is not None else None}


@dataclass
class Summary:
    """Per-policy results of a run and their paired comparisons with a reference policy (``DIR/summary.json``).

    ``policies`` maps each policy, in order of first appearance, to ``{"episodes", "ok", "failures",
    "privileged", "gain_db": mean_ci(...), "final_si_sdr_db": mean_ci(...), "normalised_gain":
    normalised_gain(...), "scenes": {scene: {"n", "gain_db": mean_ci(...), "normalised_gain": {...}}}}``
    (``episodes`` counts every episode, ``ok`` and ``failures`` those with that status; the scenes, in
    sorted order, hold the finished episodes of each scene and their intervals resample those episodes).
    ``comparisons`` maps every other policy to ``paired_comparison(policy gain_db, reference gain_db)``;
    it is empty, and ``reference_missing`` true, when no row is from ``reference``. ``suite``,
    ``suite_hash``, ``code_version`` and ``run_key`` (the result key, :mod:`hearnav.bench.keys`) name what
    produced the rows (``None`` when not known). ``format`` is :data:`FORMAT`; a summary.json without one is
    of format 1 (normalised gain as a mean of per-episode ratios, no scenes, intervals over episodes).
    """

    policies: dict[str, dict] = field(default_factory=dict)
    comparisons: dict[str, dict] = field(default_factory=dict)
    reference: str = "still"
    reference_missing: bool = False
    suite: str | None = None
    suite_hash: str | None = None
    code_version: str | None = None
    run_key: str | None = None
    format: int = FORMAT

    @property
    def failures(self) -> int:
        """Failed episodes over all policies."""
        return sum(entry["failures"] for entry in self.policies.values())

    def to_dict(self) -> dict:
        """The summary as ``DIR/summary.json`` holds it."""
        return {"format": self.format, "suite": self.suite, "suite_hash": self.suite_hash,
                "code_version": self.code_version, "run_key": self.run_key, "reference": self.reference,
                "reference_missing": self.reference_missing, "policies": self.policies,
                "comparisons": self.comparisons}

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Summary:
        """A summary as read from ``DIR/summary.json`` (of any format; format 1 when it names none)."""
        missing = [key for key in ("policies", "comparisons", "reference") if key not in data]
        if missing:
            raise ResultsError(f"expected a summary with keys 'policies', 'comparisons' and 'reference', got one "
                               f"without {missing}: read a summary.json written by hearnav bench")
        return cls(policies=dict(data["policies"]), comparisons=dict(data["comparisons"]),
                   reference=data["reference"], reference_missing=bool(data.get("reference_missing", False)),
                   suite=data.get("suite"), suite_hash=data.get("suite_hash"), code_version=data.get("code_version"),
                   run_key=data.get("run_key"), format=int(data.get("format", 1)))


def _by_policy(rows: Iterable[Mapping[str, Any] | EpisodeResult]) -> dict[str, dict[int, Mapping[str, Any]]]:
    """Rows grouped by policy then episode seed, in first-appearance order; a later row for a seed wins."""
    grouped: dict[str, dict[int, Mapping[str, Any]]] = {}
    for index, row in enumerate(rows):
        if isinstance(row, EpisodeResult):
            row = row.to_dict()
        if "policy" not in row or "episode_seed" not in row:
            raise ResultsError(f"row {index}: expected keys 'policy' and 'episode_seed', got {sorted(row)}: "
                               f"the rows were not written by this benchmark")
        grouped.setdefault(str(row["policy"]), {})[int(row["episode_seed"])] = row
    return grouped


def scene_key(row: Mapping[str, Any]) -> str:
    """The row's scene as a key of ``Summary.policies[name]["scenes"]`` (:data:`NO_SCENE` when it has none)."""
    scene = row.get("scene")
    return NO_SCENE if scene is None else str(scene)


def _per_scene(ok: Sequence[Mapping[str, Any]], seed: int) -> dict[str, dict]:
    """Per scene, in sorted order: finished episodes, mean gain and normalised gain, resampling its episodes."""
    by_scene: dict[str, list[Mapping[str, Any]]] = {}
    for row in ok:
        by_scene.setdefault(scene_key(row), []).append(row)
    out: dict[str, dict] = {}
    for name in sorted(by_scene):
        rows = by_scene[name]
        ratio = normalised_gain(rows, seed=seed, scenes=False)
        out[name] = {"n": len(rows), GAIN: mean_ci((r.get(GAIN) for r in rows), seed=seed),
                     "normalised_gain": {k: ratio[k] for k in ("ratio_of_means", "ci95", "n")}}
    return out


def summarise(rows: Iterable[Mapping[str, Any] | EpisodeResult], reference: str = "still",
              metrics: Sequence[str] = METRICS, seed: int = 0) -> Summary:
    """Per-policy results, per-scene breakdowns and paired comparisons against a reference policy.

    Parameters
    ----------
    rows : iterable of dict or EpisodeResult
        Episode rows with ``policy``, ``episode_seed``, ``scene``, ``status`` and, for ``status == "ok"``,
        the metrics. If a policy has several rows for one seed, the last one counts.
    reference : str
        Policy the others are compared with, on ``gain_db``, over seeds both finished ``"ok"``.
    metrics : sequence of str
        Metrics summarised by their mean (:func:`mean_ci`); only rows with ``status == "ok"`` contribute.
        The normalised gain (:func:`normalised_gain`) and the per-scene breakdown are always there.
    seed : int
        Bootstrap seed.

    Returns
    -------
    Summary
        Without suite, suite hash and code version (``None``).
    """
    grouped = _by_policy(rows)
    policies: dict[str, dict] = {}
    for name, by_seed in grouped.items():
        # episodes in seed order, so the bootstrap does not depend on the order rows were written in
        ok = [by_seed[k] for k in sorted(by_seed) if by_seed[k].get("status") == "ok"]
        scenes = [r.get("scene") for r in ok]
        entry: dict[str, Any] = {
            "episodes": len(by_seed),
            "ok": len(ok),
            "failures": sum(1 for r in by_seed.values() if r.get("status") == "failed"),
            "privileged": any(bool(r.get("privileged", False)) for r in by_seed.values()),
        }
        for metric in metrics:
            entry[metric] = mean_ci((r.get(metric) for r in ok), seed=seed, scenes=scenes)
        entry["normalised_gain"] = normalised_gain(ok, seed=seed)
        entry["scenes"] = _per_scene(ok, seed)
        policies[name] = entry

    comparisons: dict[str, dict] = {}
    if reference in grouped:
        ref_ok = {s: r for s, r in grouped[reference].items() if r.get("status") == "ok"}
        for name, by_seed in grouped.items():
            if name == reference:
                continue
            seeds = sorted(s for s, r in by_seed.items() if r.get("status") == "ok" and s in ref_ok)
            a = [by_seed[s].get(GAIN) for s in seeds]
            b = [ref_ok[s].get(GAIN) for s in seeds]
            comparisons[name] = paired_comparison(a, b, seed=seed, scenes=[by_seed[s].get("scene") for s in seeds])
    return Summary(policies=policies, comparisons=comparisons, reference=reference,
                   reference_missing=reference not in grouped)
