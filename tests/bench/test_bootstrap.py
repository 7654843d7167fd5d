"""The two-level (cluster) bootstrap of Davison & Hinkley, Bootstrap Methods and their Application (1997), ch. 3.8."""

from __future__ import annotations

import numpy as np
import pytest

from hearnav.bench.bootstrap import (percentile_interval, resample_weights, scene_codes, weighted_means,
                                     weighted_medians, weighted_ratios)
from hearnav.bench.results import ResultsError


def test_weights_draw_whole_scenes_then_episodes_within_them():
    scenes = ["b"] * 5 + ["a"] * 3 + ["c"] * 2
    w = resample_weights(scenes, n_resamples=2000, seed=3)
    assert w.shape == (2000, 10) and np.all(w == np.round(w)) and np.all(w >= 0)
    sizes = {"a": 3, "b": 5, "c": 2}
    drawn = np.zeros((2000, 3))
    for k, s in enumerate("abc"):
        members = [i for i, label in enumerate(scenes) if label == s]
        total = w[:, members].sum(axis=1)
        assert np.all(total % sizes[s] == 0)  # stage 2: a scene drawn m times brings m * n_s episodes
        drawn[:, k] = total / sizes[s]
    assert np.all(drawn.sum(axis=1) == 3)  # stage 1: as many scenes as there are, with replacement
    # each scene is drawn once on average, with the binomial(3, 1/3) spread: variance 2/3
    assert drawn.mean(axis=0) == pytest.approx([1, 1, 1], abs=0.06)
    assert drawn.var(axis=0) == pytest.approx([2 / 3] * 3, abs=0.06)
    assert not w.flags.writeable


def test_one_scene_is_the_ordinary_bootstrap_over_episodes():
    w = resample_weights(["only"] * 7, n_resamples=4000, seed=1)
    assert np.all(w.sum(axis=1) == 7)  # every resample has the sample's size
    assert w.mean(axis=0) == pytest.approx(np.ones(7), abs=0.06)  # multinomial(7, 1/7): mean 1, variance 6/7
    assert w.var(axis=0) == pytest.approx(np.full(7, 6 / 7), abs=0.08)
    assert np.array_equal(w, resample_weights([None] * 7, n_resamples=4000, seed=1))


def test_weights_depend_on_the_seed_and_the_scene_order_only():
    scenes = ["x", "y", "x", "z", "y"]
    w = resample_weights(scenes, n_resamples=50, seed=9)
    assert np.array_equal(w, resample_weights(list(scenes), n_resamples=50, seed=9))
    assert np.array_equal(w, resample_weights(["p", "q", "p", "r", "q"], n_resamples=50, seed=9))  # same order
    assert not np.array_equal(w, resample_weights(scenes, n_resamples=50, seed=10))
    assert list(scene_codes(["b", None, "a", "b"])) == [2, 0, 1, 2]
    with pytest.raises(ResultsError, match="expected at least one episode to resample, got none"):
        resample_weights([])


def test_bootstrap_variance_of_the_mean_is_the_two_stage_formula():
    # Balanced one-way layout (a scenes of b episodes), the design of Davison & Hinkley 1997, ch. 3.8. By the
    # law of total variance over the two stages, the bootstrap variance of the grand mean is
    #   sum_i (ybar_i - ybar)^2 / a^2  +  sum_i s_i^2 / (a^2 b),  s_i^2 = mean_j (y_ij - ybar_i)^2.
    a, b = 4, 8
    y = np.random.default_rng(5).normal(0.0, 1.0, (a, b)) + np.array([[0.0], [3.0], [5.0], [9.0]])
    scene_means = y.mean(axis=1)
    expected = ((scene_means - y.mean()) ** 2).sum() / a**2 + y.var(axis=1).sum() / (a**2 * b)
    w = resample_weights(np.repeat(np.arange(a), b).tolist(), n_resamples=40000, seed=2)
    got = weighted_means(w, y.ravel()).var()
    assert got == pytest.approx(expected, rel=0.04)  # Monte Carlo error of a variance from 40000 draws: ~1 %
    episodes_only = y.var() / y.size  # the ordinary bootstrap's variance, far smaller when scenes differ
    assert expected > 5 * episodes_only


def test_weighted_statistics_match_numpy_on_the_repeated_values():
    # reference: numpy.mean / numpy.median of each resample written out value by value
    rng = np.random.default_rng(4)
    x = rng.normal(size=9)
    x[3] = x[5]  # ties
    h = rng.uniform(0.5, 2.0, size=9)
    w = resample_weights(["a"] * 4 + ["b"] * 5, n_resamples=300, seed=0)
    for row, mean, median, ratio in zip(w, weighted_means(w, x), weighted_medians(w, x), weighted_ratios(w, x, h)):
        counts = row.astype(int)
        assert mean == pytest.approx(np.mean(np.repeat(x, counts)))
        assert median == np.median(np.repeat(x, counts))
        assert ratio == pytest.approx(np.repeat(x, counts).sum() / np.repeat(h, counts).sum())
    ratios = weighted_ratios(np.array([[1.0, 0.0], [0.0, 1.0]]), np.array([1.0, 1.0]), np.array([2.0, 0.0]))
    assert ratios[0] == 0.5 and np.isnan(ratios[1])  # a resample whose denominator is not positive


def test_percentile_interval():
    r = np.random.default_rng(0).normal(size=1001)
    assert percentile_interval(r, 0.9) == pytest.approx(tuple(np.quantile(r, [0.05, 0.95])), rel=1e-12)
    low, high = percentile_interval(np.append(r, np.nan))
    assert np.isnan(low) and np.isnan(high)  # an undefined replicate makes the interval undefined
    with pytest.raises(ResultsError, match=r"expected a confidence level between 0 and 1, got 95: use e\.g\. 0\.95"):
        percentile_interval(r, 95)
