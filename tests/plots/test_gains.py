"""Gain figures from synthetic rows: axis labels, privileged policies set apart, paired differences by hand."""

import numpy as np
import pytest

from hearnav.plots import gains
from hearnav.plots.rundata import Run


def _row(policy, seed, gain, scene="s1", privileged=False, mean_gain=None, bound=5.0):
    return {"policy": policy, "episode_seed": seed, "episode_index": seed, "status": "ok", "scene": scene,
            "gain_db": gain, "mean_gain_db": mean_gain, "oracle_gain_db": bound, "privileged": privileged}


ROWS = ([_row("oracle-ish", s, 4.0 + s, privileged=True) for s in range(4)] +
        [_row("still", s, 0.0, scene="s1" if s < 2 else "s2") for s in range(4)] +
        [_row("walker", s, 1.0 * s, scene="s1" if s < 2 else "s2", mean_gain=0.5 * s) for s in range(4)] +
        [{"policy": "walker", "episode_seed": 9, "status": "failed", "error": "x"}])
RUN = Run(folder=None, rows=ROWS, manifest={}, summary={"reference": "still"})


def test_privileged_policies_and_the_bound_are_set_apart_on_the_right():
    fig = gains.distribution_figure(RUN)
    ax = fig.axes[0]
    labels = [t.get_text() for t in ax.get_xticklabels()]
    assert labels == ["still", "walker", "oracle-ish", gains.BOUND_LABEL]
    assert ax.get_ylabel() == "gain of the end pose over the start (dB)" and ax.get_xlabel() == "policy"
    assert "by policy" in ax.get_title()


def test_paired_differences_match_on_seeds_by_scene():
    diffs = gains.paired_differences(RUN, "still")
    assert set(diffs) == {"oracle-ish", "walker"}
    assert diffs["walker"]["s1"].tolist() == [0.0, 1.0] and diffs["walker"]["s2"].tolist() == [2.0, 3.0]
    fig = gains.paired_figure(RUN, "still")
    ax = fig.axes[0]
    assert [t.get_text() for t in ax.get_xticklabels()] == ["s1", "s2"]
    assert ax.get_ylabel() == "gain minus still's gain, same episode (dB)" and ax.get_xlabel() == "scene"


def test_rows_without_per_step_gains_get_the_two_point_view():
    fig = gains.timing_figure(RUN)
    ax = fig.axes[0]
    assert ax.get_ylabel() == "paired gain over the start pose (dB)"
    walker = next(c for c in ax.containers if c.get_label() == "walker")
    xs, ys = walker.lines[0].get_data()
    # numpy's default (linear) percentile: medians of [0, .5, 1, 1.5] and [0, 1, 2, 3]
    assert np.asarray(ys) == pytest.approx([0.75, 1.5])
    bound = [line for line in ax.get_lines() if line.get_label().startswith(gains.BOUND_LABEL)]
    assert bound and bound[0].get_ydata()[0] == pytest.approx(5.0)


def test_one_bound_per_episode():
    assert sorted(r["episode_seed"] for r in gains.bound_rows(RUN)) == [0, 1, 2, 3]


def test_gain_against_step_is_the_median_with_an_interquartile_band():
    # Four episodes of a walker whose per-step gains are k * step (k = 0..3) and one unscored step (None):
    # numpy's linear percentiles of [0, 1, 2, 3] * t give the median 1.5 t and quartiles 0.75 t and 2.25 t.
    rows = [{**_row("walker", k, 3.0 * k), "step_gains_db": [k * 1.0, None, k * 3.0]} for k in range(4)]
    fig = gains.timing_figure(Run(folder=None, rows=rows, manifest={}, summary={"reference": "walker"}))
    ax = fig.axes[0]
    assert ax.get_xlabel() == "step" and ax.get_ylabel() == "gain over the start pose, same window (dB)"
    line = next(line for line in ax.get_lines() if line.get_label() == "walker")
    x, y = line.get_data()
    assert list(x) == [1, 2, 3] and y[0] == pytest.approx(1.5) and np.isnan(y[1]) and y[2] == pytest.approx(4.5)
    band = np.concatenate([path.vertices for path in ax.collections[0].get_paths()])
    assert band[:, 1].min() == pytest.approx(0.75) and band[:, 1].max() == pytest.approx(2.25 * 3)
