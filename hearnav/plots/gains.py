"""Gain figures of a run: per-episode gains by policy, paired differences per scene, gains during vs at the end."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from hearnav.plots import style
from hearnav.plots.rundata import Run

#: Half-width of the horizontal jitter of a strip plot, in category units.
JITTER = 0.12
BOUND_LABEL = "oracle bound"


def _jitter(n: int, seed: int) -> np.ndarray:
    """Fixed horizontal offsets for ``n`` points (seeded, so a figure is reproducible)."""
    return np.random.default_rng(np.random.SeedSequence(seed)).uniform(-JITTER, JITTER, n)


def _values(rows: Sequence[dict], key: str) -> np.ndarray:
    return np.array([r[key] for r in rows if r.get(key) is not None], float)


def _strip_box(ax, x: float, values: np.ndarray, colour: str, seed: int) -> None:
    """A box (median, quartiles, whiskers to 1.5 IQR) with every episode as a dot beside it."""
    if values.size == 0:
        return
    ax.boxplot([values], positions=[x], widths=0.5, showfliers=False, patch_artist=True,
               boxprops=dict(fc="none", ec=colour, lw=1.3), medianprops=dict(c=colour, lw=2),
               whiskerprops=dict(c=colour), capprops=dict(c=colour))
    ax.scatter(x + _jitter(values.size, seed), values, s=14, c=colour, alpha=0.7, lw=0, zorder=3)


def ordered_policies(run: Run) -> tuple[list[str], list[str]]:
    """(agents, privileged): the run's policies split by their rows' ``privileged`` flag."""
    privileged = {r["policy"] for r in run.rows if r.get("privileged")}
    return [p for p in run.policies if p not in privileged], [p for p in run.policies if p in privileged]


def bound_rows(run: Run) -> list[dict]:
    """One row per episode that knows the oracle bound's gain."""
    seen: dict[int, dict] = {}
    for r in run.ok_rows:
        if r.get("oracle_gain_db") is not None:
            seen.setdefault(int(r["episode_seed"]), r)
    return list(seen.values())


def distribution_figure(run: Run):
    """Per-episode end gain (gain_db) of every policy, privileged policies and the bound set apart on the right."""
    agents, privileged = ordered_policies(run)
    colours = {p: style.policy_colour(k) for k, p in enumerate(run.policies)}
    columns = agents + privileged + [BOUND_LABEL]
    fig, ax = style.new_figure(max(5.0, 1.1 * len(columns) + 2), 4.2)
    ok = run.ok_rows
    for x, name in enumerate(columns):
        if name == BOUND_LABEL:
            values, colour = _values(bound_rows(run), "oracle_gain_db"), style.BOUND_COLOUR
        else:
            values, colour = _values([r for r in ok if r["policy"] == name], "gain_db"), colours[name]
        _strip_box(ax, x, values, colour, seed=x)
    split = len(agents) - 0.5  # the bound is privileged too: the shaded part always holds it
    ax.axvspan(split, len(columns) - 0.5, color="0.93", zorder=0)
    ax.text(split + 0.1, 0.98, "privileged: references, not agents", transform=ax.get_xaxis_transform(),
            fontsize=7.5, va="top", color="0.3")
    ax.axhline(0, c="0.4", lw=0.8)
    ax.set_xticks(range(len(columns)), columns, rotation=20, ha="right")
    ax.set_xlim(-0.6, len(columns) - 0.4)
    ax.set_xlabel("policy")
    ax.set_ylabel("gain of the end pose over the start (dB)")
    ax.set_title(f"End-of-episode gain per episode, by policy ({len(bound_rows(run))} episodes; box: quartiles)",
                 fontsize=9.5)
    style.tidy(ax)
    return fig


def paired_differences(run: Run, reference: str) -> dict[str, dict[str, np.ndarray]]:
    """{policy: {scene: gain_db(policy) - gain_db(reference)}} over the episodes both finished."""
    ref = {int(r["episode_seed"]): r for r in run.ok_rows if r["policy"] == reference and r.get("gain_db") is not None}
    out: dict[str, dict[str, list[float]]] = {}
    for r in run.ok_rows:
        seed = int(r["episode_seed"])
        if r["policy"] == reference or r.get("gain_db") is None or seed not in ref:
            continue
        scene = str(r.get("scene") or "(no scene)")
        out.setdefault(r["policy"], {}).setdefault(scene, []).append(r["gain_db"] - ref[seed]["gain_db"])
    return {p: {s: np.array(v) for s, v in scenes.items()} for p, scenes in out.items()}


def paired_figure(run: Run, reference: str):
    """Paired differences of gain against the reference policy, per scene: every pair a dot, the mean a bar."""
    diffs = paired_differences(run, reference)
    scenes = sorted({s for by_scene in diffs.values() for s in by_scene})
    names = [p for p in run.policies if p in diffs]
    colours = {p: style.policy_colour(k) for k, p in enumerate(run.policies)}
    fig, ax = style.new_figure(max(5.0, 1.6 + 0.9 * max(1, len(scenes)) * max(1, len(names))), 4.2)
    width = 0.8 / max(1, len(names))
    for i, scene in enumerate(scenes):
        for j, name in enumerate(names):
            values = diffs[name].get(scene, np.array([]))
            if values.size == 0:
                continue
            x = i - 0.4 + width * (j + 0.5)
            ax.scatter(x + _jitter(values.size, i * 100 + j) * width * 2, values, s=14, c=colours[name], alpha=0.7,
                       lw=0, zorder=3, label=name if i == 0 else None)
            ax.plot([x - width * 0.4, x + width * 0.4], [values.mean()] * 2, c=colours[name], lw=2.5, zorder=4)
    ax.axhline(0, c="0.4", lw=0.8)
    ax.set_xticks(range(len(scenes)), scenes, rotation=15 if len(scenes) > 3 else 0)
    ax.set_xlim(-0.6, max(1, len(scenes)) - 0.4)
    ax.set_xlabel("scene")
    ax.set_ylabel(f"gain minus {reference}'s gain, same episode (dB)")
    ax.set_title(f"Paired difference in end gain against {reference}, per scene (dot: episode; bar: mean)",
                 fontsize=9.5)
    if names:
        ax.legend(fontsize=7.5, frameon=False, loc="best")
    style.tidy(ax)
    return fig


def timing_figure(run: Run):
    """The paired gain over the start pose against step, per policy: the median over episodes with the
    interquartile range as a band, and the bound's median as a line. Each point is S(pose_t, w_t) - S(pose_0, w_t)
    on the window heard at step t (``step_gains_db``); runs written before rows carried it get the two-point
    view of :func:`_two_point_figure` instead."""
    if not any(r.get("step_gains_db") for r in run.ok_rows):
        return _two_point_figure(run)
    colours = {p: style.policy_colour(k) for k, p in enumerate(run.policies)}
    fig, ax = style.new_figure(6.8, 4.2)
    for name in run.policies:
        series = [r["step_gains_db"] for r in run.ok_rows if r["policy"] == name and r.get("step_gains_db")]
        if not series:
            continue
        steps = max(len(g) for g in series)
        table = np.full((len(series), steps), np.nan)
        for i, gains_ in enumerate(series):
            table[i, :len(gains_)] = [np.nan if g is None else g for g in gains_]
        x = np.arange(1, steps + 1)
        keep = np.any(~np.isnan(table), axis=0)
        q1, med, q3 = (np.full(steps, np.nan) for _ in range(3))
        q1[keep], med[keep], q3[keep] = np.nanpercentile(table[:, keep], [25, 50, 75], axis=0)
        ax.plot(x, med, c=colours[name], lw=1.6, label=name)
        ax.fill_between(x, q1, q3, color=colours[name], alpha=0.15, lw=0)
    bounds = _values(bound_rows(run), "oracle_gain_db")
    if bounds.size:
        ax.axhline(float(np.median(bounds)), c=style.BOUND_COLOUR, ls="--", lw=1.2, label=f"{BOUND_LABEL} (median)")
    ax.axhline(0, c="0.4", lw=0.8)
    ax.set_xlabel("step")
    ax.set_ylabel("gain over the start pose, same window (dB)")
    ax.set_title("Gain over the start pose against step, by policy (median; band: interquartile range)",
                 fontsize=9.5)
    fig.legend(fontsize=7.5, frameon=False, loc="outside right upper")
    style.tidy(ax)
    return fig


def _two_point_figure(run: Run):
    """Median and interquartile range of the gain during the episode (mean_gain_db: the mean over its scored steps
    of the paired gain over the start pose) and at its end (gain_db), per policy, with the bound's median: for
    rows without per-step gains."""
    colours = {p: style.policy_colour(k) for k, p in enumerate(run.policies)}
    fig, ax = style.new_figure(6.4, 4.2)
    stages = (("mean_gain_db", "during the episode\n(mean over its steps)"), ("gain_db", "at its end\n(eval windows)"))
    offsets = np.linspace(-0.25, 0.25, max(1, len(run.policies)))
    for k, name in enumerate(run.policies):
        rows = [r for r in run.ok_rows if r["policy"] == name]
        xs, meds, lows, highs = [], [], [], []
        for i, (key, _) in enumerate(stages):
            values = _values(rows, key)
            if values.size:
                q1, med, q3 = np.percentile(values, [25, 50, 75])
                xs.append(i + offsets[k]), meds.append(med), lows.append(med - q1), highs.append(q3 - med)
        if xs:
            ax.errorbar(xs, meds, yerr=[lows, highs], fmt="-o", c=colours[name], ms=5, lw=1.5, capsize=3, label=name)
    bounds = _values(bound_rows(run), "oracle_gain_db")
    if bounds.size:
        ax.axhline(float(np.median(bounds)), c=style.BOUND_COLOUR, ls="--", lw=1.2,
                   label=f"{BOUND_LABEL} (median)")
    ax.axhline(0, c="0.4", lw=0.8)
    ax.set_xticks(range(len(stages)), [label for _, label in stages])
    ax.set_xlim(-0.6, len(stages) - 0.4)
    ax.set_xlabel("when the gain is measured")
    ax.set_ylabel("paired gain over the start pose (dB)")
    ax.set_title("Gain during vs at the end of the episode, by policy (median, IQR bars;\n"
                 "rows written before per-step gains were recorded)", fontsize=9.5)
    fig.legend(fontsize=7.5, frameon=False, loc="outside right upper")
    style.tidy(ax)
    return fig
