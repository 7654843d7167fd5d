"""Benchmark statistics, checked against scipy.stats.bootstrap and scipy.stats.wilcoxon (reference implementations),
sums worked by hand, and synthetic tables with known scene effects (Davison & Hinkley, Bootstrap Methods and their
Application, 1997, ch. 3.8, for the two-level bootstrap)."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats

from hearnav.bench.results import ResultsError
from hearnav.bench.stats import Summary, bootstrap_ci, mean_ci, normalised_gain, paired_comparison, summarise
from hearnav.report import format_table


def scipy_ci(x, method: str, seed: int = 0, confidence: float = 0.95, n_resamples: int = 9999):
    """scipy.stats.bootstrap called directly (the reference implementation)."""
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    ci = stats.bootstrap((np.asarray(x, float),), np.mean, n_resamples=n_resamples, confidence_level=confidence,
                         method=method, rng=rng).confidence_interval
    return ci.low, ci.high


def scene_table(scene_means, sizes, noise_sd, rng):
    """A synthetic table: episode values of scenes with the given means plus normal episode noise, and labels."""
    values = np.concatenate([m + rng.normal(0.0, noise_sd, n) for m, n in zip(scene_means, sizes)])
    labels = [f"scene-{k}" for k, n in enumerate(sizes) for _ in range(n)]
    return values, labels


def test_bootstrap_ci_of_a_large_normal_sample_is_the_normal_theory_interval():
    # Textbook large-sample interval for a mean, xbar +- z_0.975 s / sqrt(n) with z_0.975 = 1.959964 (standard
    # normal table); the percentile bootstrap interval of a smooth statistic agrees with it to first order (Efron &
    # Tibshirani, An Introduction to the Bootstrap, 1993, ch. 13; from memory). Bootstrap noise with 9999
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


def test_bootstrap_ci_constant_values():
    assert bootstrap_ci([2.5] * 10) == (2.5, 2.5)
    assert bootstrap_ci([2.5] * 10) == pytest.approx(scipy_ci([2.5] * 10, "percentile"))
    assert bootstrap_ci([2.5] * 10, scenes=["a"] * 4 + ["b"] * 6) == (2.5, 2.5)


def test_bootstrap_ci_needs_two_values():
    for values in ([], [1.0], [1.0, float("nan")]):
        low, high = bootstrap_ci(values)
        assert math.isnan(low) and math.isnan(high)
    with pytest.raises(ResultsError, match="expected a confidence level between 0 and 1, got 95"):
        bootstrap_ci([1.0, 2.0], confidence=95)
    with pytest.raises(ResultsError, match="expected one scene per value, got 2 scenes for 3 values: "
                                           "pass the scene of every episode"):
        bootstrap_ci([1.0, 2.0, 3.0], scenes=["a", "b"])


def test_bootstrap_ci_covers_the_mean_of_a_normal_sample_at_the_nominal_rate():
    # common practice: a 95 % interval for the mean of n = 50 normal draws covers the true mean ~95 % of the time
    rng = np.random.default_rng(11)
    covered = sum(lo <= 0.0 <= hi for lo, hi in (bootstrap_ci(rng.normal(0, 1, 50), n_resamples=999, seed=i)
                                                 for i in range(200)))
    assert 0.88 <= covered / 200 <= 0.99


def test_one_scene_is_the_episode_bootstrap():
    # With one scene the first stage always draws it, and the two-level bootstrap is the ordinary percentile
    # bootstrap over episodes (Davison & Hinkley 1997, ch. 3.8); reference: scipy.stats.bootstrap, method
    # "percentile", which agrees within the Monte Carlo noise of 9999 resamples.
    x = np.random.default_rng(3).gamma(2.0, 2.0, size=60)
    one = bootstrap_ci(x, scenes=["kitchen"] * 60)
    assert one == bootstrap_ci(x) == bootstrap_ci(x, scenes=[None] * 60)
    half = (one[1] - one[0]) / 2
    assert one == pytest.approx(scipy_ci(x, "percentile", seed=5), abs=0.05 * half)
    assert mean_ci(x, scenes=["kitchen"] * 60) == mean_ci(x)
    y = x + np.random.default_rng(4).normal(1.0, 1.0, size=60)
    assert paired_comparison(y, x, scenes=["kitchen"] * 60) == paired_comparison(y, x)


def test_two_level_interval_covers_the_grand_mean_when_scenes_differ():
    # Scenes are a random sample of rooms: scene effects N(0, 3^2) dB, episode noise N(0, 4^2) dB, 6 scenes of
    # 10-30 episodes, true grand mean 10 dB. Over 150 synthetic tables the two-level 95 % interval covers
    # the grand mean at close to the nominal rate (with few scenes somewhat below it: the bootstrap's
    # between-scene variance is smaller by 1 - 1/a, Davison & Hinkley 1997, ch. 3.8), and is wider than the
    # episode-only interval, which treats the six scenes as fixed and misses the grand mean about half the time.
    rng = np.random.default_rng(2026)
    hits = {"two-level": 0, "episodes": 0}
    wider = 0
    for draw in range(150):
        sizes = rng.integers(10, 31, size=6)
        x, labels = scene_table(10.0 + rng.normal(0.0, 3.0, 6), sizes, 4.0, rng)
        two = bootstrap_ci(x, n_resamples=499, seed=draw, scenes=labels)
        one = bootstrap_ci(x, n_resamples=499, seed=draw)
        hits["two-level"] += two[0] <= 10.0 <= two[1]
        hits["episodes"] += one[0] <= 10.0 <= one[1]
        wider += (two[1] - two[0]) > (one[1] - one[0])
    assert 0.85 <= hits["two-level"] / 150 <= 0.99
    assert hits["episodes"] / 150 < 0.7
    assert wider == 150


def test_two_level_summary_recovers_known_scene_means():
    # Four scenes with known means 0, 4, 8 and 12 dB and 1 dB episode noise: the per-scene means and their
    # intervals recover them, and the interval of the overall mean has about the half-width the scene means'
    # spread gives (two-stage bootstrap variance sum_i (ybar_i - ybar)^2 / a^2 + sum_i s_i^2 / (a^2 b); see
    # tests/bench/test_bootstrap.py), far wider than the episode bootstrap's.
    truth = {"scene-0": 0.0, "scene-1": 4.0, "scene-2": 8.0, "scene-3": 12.0}
    x, labels = scene_table(list(truth.values()), [15] * 4, 1.0, np.random.default_rng(8))
    rows = [ep("walker", k, gain=float(v), final=0.0, bound=20.0, scene=s) for k, (v, s) in enumerate(zip(x, labels))]
    entry = summarise(rows).policies["walker"]
    assert list(entry["scenes"]) == list(truth)
    for scene, mean in truth.items():
        s = entry["scenes"][scene]
        assert s["n"] == 15 and s["gain_db"]["mean"] == pytest.approx(mean, abs=0.6)
        low, high = s["gain_db"]["ci95"]
        assert low < mean < high and high - low < 2.0
    y = x.reshape(4, 15)
    sd = math.sqrt(((y.mean(axis=1) - y.mean()) ** 2).sum() / 16 + y.var(axis=1).sum() / (16 * 15))
    low, high = entry["gain_db"]["ci95"]
    assert entry["gain_db"]["mean"] == pytest.approx(x.mean())
    assert low < 6.0 < high
    assert (high - low) / 2 == pytest.approx(1.96 * sd, rel=0.15)  # few distinct scene draws: not a normal shape
    episode_low, episode_high = bootstrap_ci(x)
    assert high - low > 3 * (episode_high - episode_low)


def test_mean_ci_ignores_none_and_nan():
    s = mean_ci([1.0, None, 3.0, float("nan"), 2.0, float("inf")])
    assert s["n"] == 3 and s["mean"] == pytest.approx(2.0)
    assert s["ci95"] == list(bootstrap_ci([1.0, 3.0, 2.0]))
    assert mean_ci([None, float("nan")]) == {"mean": None, "ci95": [None, None], "n": 0}
    assert mean_ci([4.0]) == {"mean": 4.0, "ci95": [None, None], "n": 1}
    # a dropped value takes its scene with it
    dropped = mean_ci([1.0, None, 5.0, 7.0], scenes=["a", "b", "b", "c"])
    assert dropped == mean_ci([1.0, 5.0, 7.0], scenes=["a", "b", "c"])


def test_equal_seeds_give_equal_intervals():
    x, labels = scene_table([0.0, 5.0, 9.0], [12, 20, 8], 2.0, np.random.default_rng(1))
    assert bootstrap_ci(x, seed=4, scenes=labels) == bootstrap_ci(x.copy(), seed=4, scenes=list(labels))
    assert bootstrap_ci(x, seed=4, scenes=labels) != bootstrap_ci(x, seed=5, scenes=labels)
    rows = [ep("p", k, gain=float(v), final=float(v), bound=10.0, scene=s) for k, (v, s) in enumerate(zip(x, labels))]
    rows += [ep("still", k, gain=0.0, final=0.0, bound=10.0, scene=s) for k, s in enumerate(labels)]
    first = summarise(rows, seed=3).to_dict()
    assert summarise(rows[::-1], seed=3).to_dict() == first  # nor does the order rows were written in matter
    assert summarise(rows, seed=4).to_dict() != first


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
    # a bootstrap of the differences: scipy's percentile interval of them, within Monte Carlo noise
    assert result["ci95"] == pytest.approx(list(scipy_ci(b - a, "percentile")), abs=0.05 * (high - low))
    flipped = paired_comparison(a, b)
    assert flipped["mean_difference"] == pytest.approx(-result["mean_difference"])


def test_paired_comparison_resamples_scenes_with_pairs_kept_together():
    # The policy's advantage differs by scene (1, 2 and 6 dB) while the scenes' own levels differ by 20 dB:
    # resampling pairs together, the interval reflects the spread of the advantages (not of the levels) and
    # is wider than the pairs-only bootstrap, as two-level resampling of the differences must be.
    rng = np.random.default_rng(6)
    sizes = [20, 20, 20]
    base, labels = scene_table([0.0, 20.0, 40.0], sizes, 3.0, rng)
    shift, _ = scene_table([1.0, 2.0, 6.0], sizes, 0.5, rng)
    scened = paired_comparison(base + shift, base, scenes=labels)
    plain = paired_comparison(base + shift, base)
    assert scened["mean_difference"] == plain["mean_difference"] == pytest.approx(shift.mean())
    assert scened["ci95"] == list(bootstrap_ci((base + shift) - base, scenes=labels))  # of the differences
    # stage 1 draws one scene three times with probability 1/27 each (more than 2.5 %), so the interval runs
    # from about the smallest scene advantage (1 dB) to about the largest (6 dB), nowhere near the levels' spread
    (low, high), (plain_low, plain_high) = scened["ci95"], plain["ci95"]
    assert 0.8 < low < 1.3 and 5.5 < high < 6.3 and high - low > 3 * (plain_high - plain_low)


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


def ep(policy, seed, status="ok", gain=None, final=None, bound=None, privileged=False, scene=None, **extra):
    """A row: ``bound`` is the oracle bound's gain; ``normalised_gain`` follows."""
    start = None if gain is None or final is None else final - gain
    norm = None if gain is None or not bound or bound <= 0 else gain / bound
    return {"policy": policy, "episode_seed": seed, "status": status, "gain_db": gain, "final_si_sdr_db": final,
            "start_si_sdr_db": start, "oracle_gain_db": bound, "normalised_gain": norm, "privileged": privileged,
            "scene": scene, **extra}


ROWS = [
    ep("still", 1, gain=0.0, final=-5.0, bound=10.0, scene="attic"),
    ep("still", 2, gain=1.0, final=-4.0, bound=10.0, scene="barn"),
    ep("still", 3, gain=2.0, final=-3.0, bound=10.0, scene="attic"),
    ep("still", 4, status="failed", scene="barn"),
    ep("walker", 1, gain=3.0, final=-2.0, bound=6.0, scene="attic"),
    ep("walker", 2, status="failed", gain=100.0, final=100.0, bound=1.0, scene="barn"),  # failed rows never count
    ep("walker", 3, gain=5.0, final=0.0, bound=10.0, scene="attic"),
    ep("walker", 4, gain=9.0, final=4.0, bound=10.0, scene="barn"),  # the reference failed here: not paired
    ep("walker", 5, gain=7.0, final=2.0, bound=8.75, scene="attic"),  # the reference has no row: not paired
    ep("oracle", 1, gain=10.0, final=5.0, bound=10.0, privileged=True, scene="attic"),
    ep("oracle", 2, gain=11.0, final=6.0, bound=11.0, privileged=True, scene="barn"),
]


def test_normalised_gain_is_the_ratio_of_mean_gains():
    # Worked by hand: gains -1, 2, 9 dB against bound gains 0.5, 4, 10 dB. The ratio of means is
    # (-1 + 2 + 9) / (0.5 + 4 + 10) = 10 / 14.5; the per-episode ratios -2, 0.5, 0.9 have median 0.5 and a mean
    # of -0.2, dragged below zero by the one episode with a small bound gain (the bias the ratio avoids).
    pairs = [(-1.0, 0.5), (2.0, 4.0), (9.0, 10.0)]
    rows = [ep("p", k, gain=g, final=0.0, bound=h, scene="attic") for k, (g, h) in enumerate(pairs)]
    result = normalised_gain(rows)
    assert result["ratio_of_means"] == pytest.approx(10 / 14.5)
    assert result["median"] == pytest.approx(0.5) and result["n"] == result["median_n"] == 3
    assert np.mean([r["normalised_gain"] for r in rows]) == pytest.approx(-0.2)
    # Two episodes (one scene): the resamples are {1, 1}, {1, 2} and {2, 2} (probabilities 1/4, 1/2, 1/4), so
    # with 9999 resamples the 95 % interval runs from the smaller to the larger per-episode ratio: 1/4 to 3/4.
    two = normalised_gain([ep("p", 0, gain=1.0, final=0.0, bound=4.0), ep("p", 1, gain=3.0, final=0.0, bound=4.0)])
    assert two["ratio_of_means"] == 0.5 and two["ci95"] == pytest.approx([0.25, 0.75])
    # One episode in each of two scenes: stage 1 draws {A, A}, {A, B} or {B, B}, the same three resamples.
    split = normalised_gain([ep("p", 0, gain=1.0, final=0.0, bound=4.0, scene="A"),
                             ep("p", 1, gain=3.0, final=0.0, bound=4.0, scene="B")])
    assert split["ci95"] == pytest.approx([0.25, 0.75])
    # episodes without a bound are left out; a bound gain summing to zero leaves the ratio undefined
    assert normalised_gain(rows + [ep("p", 9, gain=4.0, final=0.0)])["ratio_of_means"] == pytest.approx(10 / 14.5)
    assert normalised_gain([ep("p", 0, gain=0.0, final=0.0, bound=0.0)]) == {
        "ratio_of_means": None, "ci95": [None, None], "n": 1, "median": None, "median_ci95": [None, None],
        "median_n": 0}


def test_summarise_counts_failures_and_excludes_them_from_means():
    s = summarise(ROWS)
    assert isinstance(s, Summary) and list(s.policies) == ["still", "walker", "oracle"]
    assert s.failures == 2
    walker = s.policies["walker"]
    assert (walker["episodes"], walker["ok"], walker["failures"], walker["privileged"]) == (5, 4, 1, False)
    assert walker["gain_db"]["n"] == 4 and walker["gain_db"]["mean"] == pytest.approx(6.0)
    assert walker["final_si_sdr_db"]["mean"] == pytest.approx(1.0)
    norm = walker["normalised_gain"]  # by hand: (3 + 5 + 9 + 7) / (6 + 10 + 10 + 8.75); median of 0.5, 0.5, 0.9, 0.8
    assert norm["ratio_of_means"] == pytest.approx(24 / 34.75) and norm["n"] == 4
    assert norm["median"] == pytest.approx(0.65) and norm["median_n"] == 4
    assert s.policies["still"]["failures"] == 1 and s.policies["still"]["gain_db"]["mean"] == pytest.approx(1.0)
    oracle = s.policies["oracle"]
    assert oracle["privileged"] is True and oracle["normalised_gain"]["ratio_of_means"] == 1.0
    assert s.reference_missing is False and s.reference == "still"


def test_summarise_breaks_results_down_by_scene():
    walker = summarise(ROWS).policies["walker"]["scenes"]
    assert list(walker) == ["attic", "barn"]
    assert walker["attic"]["n"] == 3 and walker["attic"]["gain_db"]["mean"] == pytest.approx(5.0)  # 3, 5, 7
    assert walker["attic"]["normalised_gain"]["ratio_of_means"] == pytest.approx(15 / 24.75)
    assert walker["attic"]["gain_db"] == mean_ci([3.0, 5.0, 7.0])  # one scene: its episodes resampled
    assert walker["barn"] == {"n": 1, "gain_db": {"mean": 9.0, "ci95": [None, None], "n": 1},
                              "normalised_gain": {"ratio_of_means": 0.9, "ci95": [None, None], "n": 1}}
    unnamed = summarise([{k: v for k, v in r.items() if k != "scene"} for r in ROWS]).policies["walker"]
    assert list(unnamed["scenes"]) == ["(no scene)"] and unnamed["gain_db"] == mean_ci([3.0, 5.0, 9.0, 7.0])


def test_summarise_pairs_on_seeds_both_finished():
    s = summarise(ROWS)
    assert set(s.comparisons) == {"walker", "oracle"}
    walker = s.comparisons["walker"]  # seeds 1 and 3 only: 3 - 0 and 5 - 2
    assert walker["n"] == 2 and walker["mean_difference"] == pytest.approx(3.0)
    assert walker == paired_comparison([3.0, 5.0], [0.0, 2.0], scenes=["attic", "attic"])
    oracle = s.comparisons["oracle"]  # seeds 1 and 2: 10 - 0 and 11 - 1
    assert oracle["n"] == 2 and oracle["ci95"] == [10.0, 10.0] and oracle["wilcoxon_p"] is not None
    # the pairs are resampled by scene: each pair in the scene of its episode
    x, labels = scene_table([0.0, 5.0, 9.0], [6, 9, 5], 1.0, np.random.default_rng(2))
    rows = [ep(p, k, gain=float(v) if p == "p" else 0.0, final=0.0, bound=10.0, scene=scene)
            for p in ("still", "p") for k, (v, scene) in enumerate(zip(x, labels))]
    paired = summarise(rows).comparisons["p"]
    assert paired == paired_comparison(x, np.zeros_like(x), scenes=labels) != paired_comparison(x, np.zeros_like(x))


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
    assert set(doc) == {"format", "suite", "suite_hash", "code_version", "run_key", "reference", "reference_missing",
                        "policies", "comparisons"}  # the fields of DIR/summary.json, as the README lists them
    assert doc["format"] == 2 and set(doc["policies"]["walker"]) == {
        "episodes", "ok", "failures", "privileged", "gain_db", "final_si_sdr_db", "normalised_gain", "scenes"}
    assert Summary.from_dict(doc) == s
    assert format_table(Summary.from_dict(doc)) == format_table(s)
    with pytest.raises(ResultsError, match=r"got one without \['comparisons'\]"):
        Summary.from_dict({"policies": {}, "reference": "still"})


def test_summary_of_format_1_still_reads_and_prints():
    # a summary.json written before normalised gain became a ratio of means: no format, no scenes
    old = {"suite": "test", "reference": "still", "reference_missing": False, "comparisons": {},
           "policies": {"still": {"episodes": 2, "ok": 2, "failures": 0, "privileged": False,
                                  "gain_db": {"mean": 0.5, "ci95": [0.0, 1.0], "n": 2},
                                  "final_si_sdr_db": {"mean": -3.0, "ci95": [-4.0, -2.0], "n": 2},
                                  "normalised_gain": {"mean": -0.29, "ci95": [-0.4, -0.1], "n": 2}}}}
    summary = Summary.from_dict(old)
    assert summary.format == 1 and Summary.from_dict(summary.to_dict()) == summary
    text = format_table(summary)
    assert "per scene" not in text and "-0.29" not in text  # the biased per-episode mean is not shown as the ratio
