"""Honest summaries of benchmark results: means with bootstrap intervals, paired comparisons.

Every interval comes from :func:`scipy.stats.bootstrap` with a seeded generator, so a summary is
reproducible. Paired comparisons use the episodes both policies finished, matched on ``episode_seed``:
the interval is a bootstrap over episodes of the per-episode differences, and the p-value is the
two-sided Wilcoxon signed-rank test (:func:`scipy.stats.wilcoxon`).

Undefined numbers (a mean of nothing, an interval from fewer than two values) are ``None`` in
:func:`mean_ci`, :func:`paired_comparison` and :func:`summarise` (which makes a :class:`Summary`), so their
output is valid JSON; :func:`bootstrap_ci` itself returns ``(nan, nan)``.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import stats as _st

from hearnav.bench.results import EpisodeResult, ResultsError

METRICS = ("gain_db", "final_si_sdr_db", "normalised_gain")


def _clean(values: Iterable[Any]) -> np.ndarray:
    """``values`` as a float array without ``None``, NaN and infinities, shape ``(n_used,)``."""
    out = np.array([np.nan if v is None else float(v) for v in values], dtype=float)
    return out[np.isfinite(out)]


def _mean(x: np.ndarray, axis: int = -1) -> np.ndarray:
    return np.mean(x, axis=axis)


def _or_none(x: float) -> float | None:
    return None if x is None or not math.isfinite(x) else float(x)


def bootstrap_ci(values: Sequence[float] | np.ndarray, confidence: float = 0.95, n_resamples: int = 9999,
                 seed: int = 0) -> tuple[float, float]:
    """Bootstrap confidence interval of the mean.

    Calls ``scipy.stats.bootstrap((values,), np.mean, method="BCa", confidence_level=confidence,
    n_resamples=n_resamples, rng=np.random.default_rng(np.random.SeedSequence(seed)))``. BCa (bias-corrected
    and accelerated) needs a non-zero jackknife spread; when the values are all equal, or BCa fails (raises,
    warns that it is degenerate, or returns NaN), the percentile interval is computed instead, with a fresh
    generator from the same seed. Constant values therefore give ``(c, c)``.

    Parameters
    ----------
    values : array_like, shape (n,)
        Finite values; ``None``, NaN and infinities are dropped.
    confidence : float
        Confidence level in (0, 1).
    n_resamples : int
        Number of bootstrap resamples.
    seed : int
        Seed of the :class:`numpy.random.SeedSequence` the generator is drawn from.

    Returns
    -------
    tuple[float, float]
        ``(low, high)``; ``(nan, nan)`` for fewer than two values.
    """
    if not 0.0 < confidence < 1.0:
        raise ResultsError(f"expected a confidence level between 0 and 1, got {confidence!r}: use e.g. 0.95")
    x = _clean(values)
    if x.size < 2:
        return (math.nan, math.nan)

    def run(method: str) -> tuple[float, float]:
        rng = np.random.default_rng(np.random.SeedSequence(seed))
        res = _st.bootstrap((x,), _mean, n_resamples=n_resamples, confidence_level=confidence,
                            method=method, rng=rng, vectorized=True)
        return float(res.confidence_interval.low), float(res.confidence_interval.high)

    if np.ptp(x) > 0:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("error", _st.DegenerateDataWarning)
                warnings.simplefilter("ignore", RuntimeWarning)
                low, high = run("BCa")
            if math.isfinite(low) and math.isfinite(high):
                return low, high
        except (_st.DegenerateDataWarning, ValueError, FloatingPointError):
            pass
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", _st.DegenerateDataWarning)
        return run("percentile")


def mean_ci(values: Iterable[Any], seed: int = 0) -> dict:
    """Mean and 95 % bootstrap interval of the usable values.

    Parameters
    ----------
    values : iterable, length n
        Numbers; ``None``, NaN and infinities are ignored.
    seed : int
        Bootstrap seed (see :func:`bootstrap_ci`).

    Returns
    -------
    dict
        ``{"mean": float | None, "ci95": [low, high] (None where undefined), "n": n_used}``.
    """
    x = _clean(values)
    low, high = bootstrap_ci(x, seed=seed)
    return {"mean": float(np.mean(x)) if x.size else None, "ci95": [_or_none(low), _or_none(high)],
            "n": int(x.size)}


def paired_comparison(a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray, seed: int = 0) -> dict:
    """Compare two policies on the same episodes: the mean of ``a - b`` with a CI, and a Wilcoxon p-value.

    Parameters
    ----------
    a, b : array_like, shape (n,)
        Per-episode values, element ``i`` of both from the same episode. Pairs where either is ``None``,
        NaN or infinite are dropped.
    seed : int
        Bootstrap seed (see :func:`bootstrap_ci`).

    Returns
    -------
    dict
        ``{"mean_difference", "ci95": [low, high], "n", "wilcoxon_p"}``: the interval is a bootstrap over
        episodes of the differences; the p-value is two-sided, 1.0 when every difference is zero and
        ``None`` for fewer than two pairs (as are undefined means and bounds).
    """
    fa = np.array([np.nan if v is None else float(v) for v in a], dtype=float)
    fb = np.array([np.nan if v is None else float(v) for v in b], dtype=float)
    if fa.shape != fb.shape or fa.ndim != 1:
        raise ResultsError(f"expected paired 1-D arrays of equal length, got shapes {fa.shape} and {fb.shape}: "
                           f"match the episodes before comparing")
    keep = np.isfinite(fa) & np.isfinite(fb)
    d = fa[keep] - fb[keep]
    low, high = bootstrap_ci(d, seed=seed)
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
    "privileged", metric: mean_ci(...), ...}`` (``episodes`` counts every episode, ``ok`` and ``failures``
    those with that status). ``comparisons`` maps every other policy to ``paired_comparison(policy gain_db,
    reference gain_db)``; it is empty, and ``reference_missing`` true, when no row is from ``reference``.
    ``suite``, ``suite_hash``, ``code_version`` and ``run_key`` (the result key, :mod:`hearnav.bench.keys`)
    name what produced the rows (``None`` when not known).
    """

    policies: dict[str, dict] = field(default_factory=dict)
    comparisons: dict[str, dict] = field(default_factory=dict)
    reference: str = "still"
    reference_missing: bool = False
    suite: str | None = None
    suite_hash: str | None = None
    code_version: str | None = None
    run_key: str | None = None

    @property
    def failures(self) -> int:
        """Failed episodes over all policies."""
        return sum(entry["failures"] for entry in self.policies.values())

    def to_dict(self) -> dict:
        """The summary as ``DIR/summary.json`` holds it."""
        return {"suite": self.suite, "suite_hash": self.suite_hash, "code_version": self.code_version,
                "run_key": self.run_key, "reference": self.reference, "reference_missing": self.reference_missing,
                "policies": self.policies, "comparisons": self.comparisons}

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Summary:
        """A summary as read from ``DIR/summary.json``."""
        missing = [key for key in ("policies", "comparisons", "reference") if key not in data]
        if missing:
            raise ResultsError(f"expected a summary with keys 'policies', 'comparisons' and 'reference', got one "
                               f"without {missing}: read a summary.json written by hearnav bench")
        return cls(policies=dict(data["policies"]), comparisons=dict(data["comparisons"]),
                   reference=data["reference"], reference_missing=bool(data.get("reference_missing", False)),
                   suite=data.get("suite"), suite_hash=data.get("suite_hash"), code_version=data.get("code_version"),
                   run_key=data.get("run_key"))


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


def summarise(rows: Iterable[Mapping[str, Any] | EpisodeResult], reference: str = "still",
              metrics: Sequence[str] = METRICS, seed: int = 0) -> Summary:
    """Per-policy results and paired comparisons against a reference policy.

    Parameters
    ----------
    rows : iterable of dict or EpisodeResult
        Episode rows with ``policy``, ``episode_seed``, ``status`` and, for ``status == "ok"``, the metrics.
        If a policy has several rows for one seed, the last one counts.
    reference : str
        Policy the others are compared with, on ``gain_db``, over seeds both finished ``"ok"``.
    metrics : sequence of str
        Metrics to summarise; only rows with ``status == "ok"`` contribute.
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
        entry: dict[str, Any] = {
            "episodes": len(by_seed),
            "ok": len(ok),
            "failures": sum(1 for r in by_seed.values() if r.get("status") == "failed"),
            "privileged": any(bool(r.get("privileged", False)) for r in by_seed.values()),
        }
        for metric in metrics:
            entry[metric] = mean_ci((r.get(metric) for r in ok), seed=seed)
        policies[name] = entry

    comparisons: dict[str, dict] = {}
    if reference in grouped:
        ref_ok = {s: r for s, r in grouped[reference].items() if r.get("status") == "ok"}
        for name, by_seed in grouped.items():
            if name == reference:
                continue
            seeds = sorted(s for s, r in by_seed.items() if r.get("status") == "ok" and s in ref_ok)
            a = [by_seed[s].get("gain_db") for s in seeds]
            b = [ref_ok[s].get("gain_db") for s in seeds]
            comparisons[name] = paired_comparison(a, b, seed=seed)
    return Summary(policies=policies, comparisons=comparisons, reference=reference,
                   reference_missing=reference not in grouped)
