"""Benchmark statistics, checked against scipy.stats.bootstrap and scipy.stats.wilcoxon (reference implementations)."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats

from hearnav.bench.results import ResultsError
from hearnav.bench.stats import Summary, bootstrap_ci, mean_ci, paired_comparison, summarise


def scipy_ci(x, method: str, seed: int = 0, confidence: float = 0.95, n_resamples: int = 9999):
    """scipy.stats.bootstrap called directly (the reference implementation)."""
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    ci = stats.bootstrap((np.asarray(x, float),), np.mean, n_resamples=n_resamples, confidence_level=confidence,
                         method=method, rng=rng).confidence_interval
    return ci.low, ci.high


def test_bootstrap_ci_of_a_large_normal_sample_is_the_normal_theory_interval():
    # Textbook large-sample interval for a mean, xbar +- z_0.975 s / sqrt(n) with z_0.975 = 1.959964 (standard
    # normal table); the bootstrap interval of a smooth statistic agrees with it to first order (Efron &
    # Tibshirani, An Introduction to the Bootstrap, 1993, ch. 13-14; from memory). Bootstrap noise with 9999
    # resamples is a few per cent of the half-width.
    for seed in range(3):
        x = np.random.default_rng(seed).normal(10.0, 2.0, size=400)
        half = 1.959964 * x.std(ddof=1) / math.sqrt(x.size)
        low, high = bootstrap_ci(x, seed=seed)
        assert low == pytest.approx(x.mean() - half, abs=0.06 * half)
        assert high == pytest.approx(x.mean() + half, abs=0.06 * half)
    x = np.random.default_rng(7).gamma(2.0, 1.5, size=40)
    assert bootstrap_ci(x, seed=1) != bootstrap_ci(x, seed=2)  # the seed is used
    low, high = bootstrap_ci(x, confidence=0.5)
    assert low < x.mean() < high and high - low < np.subtract(*bootstrap_ci(x)[::-1])  # narrower at 50 %


def test_bootstrap_ci_constant_values_fall_back_to_percentile():
    # BCa is undefined for constant data (scipy returns NaN with a DegenerateDataWarning)
    assert bootstrap_ci([2.5] * 10) == (2.5, 2.5)
    assert bootstrap_ci([2.5] * 10) == pytest.approx(scipy_ci([2.5] * 10, "percentile"))


def test_bootstrap_ci_needs_two_values():
    for values in ([], [1.0], [1.0, float("nan")]):
        low, high = bootstrap_ci(values)
        assert math.isnan(low) and math.isnan(high)
    with pytest.raises(ResultsError, match="expected a confidence level between 0 and 1, got 95"):
        bootstrap_ci([1.0, 2.0], confidence=95)


def test_bootstrap_ci_covers_the_mean_of_a_normal_sample_at_the_nominal_rate():
    # common practice: a 95 % interval for the mean of n = 50 normal draws covers the true mean ~95 % of the time
    rng = np.random.default_rng(11)
    covered = sum(lo <= 0.0 <= hi for lo, hi in (bootstrap_ci(rng.normal(0, 1, 50), n_resamples=999, seed=i)
                                                 for i in range(200)))
    assert 0.88 <= covered / 200 <= 0.99


def test_mean_ci_ignores_none_and_nan():
    s = mean_ci([1.0, None, 3.0, float("nan"), 2.0, float("inf")])
    assert s["n"] == 3 and s["mean"] == pytest.approx(2.0)
    assert s["ci95"] == pytest.approx(list(scipy_ci([1.0, 3.0, 2.0], "BCa")))
    assert mean_ci([None, float("nan")]) == {"mean": None, "ci95": [None, None], "n": 0}
    assert mean_ci([4.0]) == {"mean": 4.0, "ci95": [None, None], "n": 1}


def test_paired_comparison_recovers_a_known_shift():
    rng = np.random.default_rng(0)
    a = rng.normal(5.0, 3.0, size=200)  # wide spread between episodes ...
    b = a + 1.5 + rng.normal(0.0, 0.1, size=200)  # ... but a consistent paired shift
    result = paired_comparison(b, a)
    assert result["n"] == 200
    assert result["mean_difference"] == pytest.approx(1.5, abs=0.03)
    low, high = result["ci95"]
    assert low < 1.5 < high and high - low < 0.1
    assert result["wilcoxon_p"] < 1e-30
    assert result["wilcoxon_p"] == pytest.approx(stats.wilcoxon(b - a).pvalue)  # reference implementation
    assert result["ci95"] == pytest.approx(list(scipy_ci(b - a, "BCa")))  # a bootstrap of the differences
    flipped = paired_comparison(a, b)
    assert flipped["mean_difference"] == pytest.approx(-result["mean_difference"])


def test_paired_comparison_p_value_of_darwins_corn_data():
    # Worked example of the scipy.stats.wilcoxon documentation: Darwin's cross- minus self-fertilised plant
    # heights (Fisher, The Design of Experiments, 1935) give T = 24 and the exact two-sided p = 0.041259765625.
    d = [6, 8, 14, 16, 23, 24, 28, 29, 41, -48, 49, 56, 60, -67, 75]
    result = paired_comparison(d, [0] * len(d))
    assert result["wilcoxon_p"] == pytest.approx(0.041259765625, rel=1e-12)
    assert result["n"] == 15 and result["mean_difference"] == pytest.approx(314 / 15)  # sum of d is 314


def test_paired_comparison_no_shift_is_not_significant():
    rng = np.random.default_rng(1)
    a = rng.normal(0, 1, 200)
    b = a + rng.normal(0, 0.5, 200)
    assert paired_comparison(a, b)["wilcoxon_p"] > 0.01


def test_paired_comparison_identical_samples():
    a = np.random.default_rng(2).normal(size=30)
    result = paired_comparison(a, a.copy())
    assert result == {"mean_difference": 0.0, "ci95": [0.0, 0.0], "n": 30, "wilcoxon_p": 1.0}


def test_paired_comparison_small_and_bad_input():
    assert paired_comparison([1.0], [0.0]) == {"mean_difference": 1.0, "ci95": [None, None], "n": 1,
                                               "wilcoxon_p": None}
    assert paired_comparison([1.0, None, 3.0], [0.0, 1.0, float("nan")])["n"] == 1  # pairs dropped together
    with pytest.raises(ResultsError, match=r"equal length, got shapes \(2,\) and \(3,\)"):
        paired_comparison([1.0, 2.0], [1.0, 2.0, 3.0])


def ep(policy, seed, status="ok", gain=None, final=None, norm=None, privileged=False, **extra):
    return {"policy": policy, "episode_seed": seed, "status": status, "gain_db": gain, "final_si_sdr_db": final,
            "normalised_gain": norm, "privileged": privileged, **extra}


ROWS = [
    ep("still", 1, gain=0.0, final=-5.0, norm=0.0),
    ep("still", 2, gain=1.0, final=-4.0, norm=0.1),
    ep("still", 3, gain=2.0, final=-3.0, norm=0.2),
    ep("still", 4, status="failed"),
    ep("walker", 1, gain=3.0, final=-2.0, norm=0.5),
    ep("walker", 2, status="failed", gain=100.0, final=100.0, norm=100.0),  # failed rows never count
    ep("walker", 3, gain=5.0, final=0.0, norm=0.7),
    ep("walker", 4, gain=9.0, final=4.0, norm=0.9),  # the reference failed here: not paired
    ep("walker", 5, gain=7.0, final=2.0, norm=0.8),  # the reference has no row: not paired
    ep("oracle", 1, gain=10.0, final=5.0, norm=1.0, privileged=True),
    ep("oracle", 2, gain=11.0, final=6.0, norm=1.0, privileged=True),
]


def test_summarise_counts_failures_and_excludes_them_from_means():
    s = summarise(ROWS)
    assert isinstance(s, Summary) and list(s.policies) == ["still", "walker", "oracle"]
    assert s.failures == 2
    walker = s.policies["walker"]
    assert (walker["episodes"], walker["ok"], walker["failures"], walker["privileged"]) == (5, 4, 1, False)
    assert walker["gain_db"]["n"] == 4 and walker["gain_db"]["mean"] == pytest.approx(6.0)
    assert walker["final_si_sdr_db"]["mean"] == pytest.approx(1.0)
    assert walker["normalised_gain"]["mean"] == pytest.approx(0.725)
    assert s.policies["still"]["failures"] == 1 and s.policies["still"]["gain_db"]["mean"] == pytest.approx(1.0)
    assert s.policies["oracle"]["privileged"] is True
    assert s.reference_missing is False and s.reference == "still"


def test_summarise_pairs_on_seeds_both_finished():
    s = summarise(ROWS)
    assert set(s.comparisons) == {"walker", "oracle"}
    walker = s.comparisons["walker"]  # seeds 1 and 3 only: 3 - 0 and 5 - 2
    assert walker["n"] == 2 and walker["mean_difference"] == pytest.approx(3.0)
    assert walker == paired_comparison([3.0, 5.0], [0.0, 2.0])
    oracle = s.comparisons["oracle"]  # seeds 1 and 2: 10 - 0 and 11 - 1
    assert oracle["n"] == 2 and oracle["ci95"] == [10.0, 10.0] and oracle["wilcoxon_p"] is not None


def test_summarise_without_reference():
    s = summarise([r for r in ROWS if r["policy"] != "still"])
    assert s.comparisons == {} and s.reference_missing is True
    assert summarise(ROWS, reference="walker").comparisons["still"]["mean_difference"] == pytest.approx(-3.0)
    with pytest.raises(ResultsError, match="row 0: expected keys 'policy' and 'episode_seed'"):
        summarise([{"status": "ok"}])
    # a policy may be called like a summary field: the entries live apart from the summary's own fields
    assert list(summarise([ep("comparisons", 1, gain=1.0)]).policies) == ["comparisons"]


def test_summary_json_form_round_trips():
    s = summarise(ROWS)
    doc = json.loads(json.dumps(s.to_dict()))
    assert set(doc) == {"suite", "suite_hash", "code_version", "run_key", "reference", "reference_missing", "policies",
                        "comparisons"}  # the fields of DIR/summary.json, as the README lists them
    assert Summary.from_dict(doc) == s
    with pytest.raises(ResultsError, match=r"got one without \['comparisons'\]"):
        Summary.from_dict({"policies": {}, "reference": "still"})
