"""The plain-text tables of a benchmark :class:`~hearnav.bench.stats.Summary`, as ``hearnav bench`` prints them."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from hearnav.bench.stats import METRICS, Summary

#: The line between the overall table and the per-scene breakdown.
SCENE_TITLE = ("per scene (finished episodes of each scene; intervals resample them; normalised gain is the "
               "ratio of mean gains):")


def _num(x: float | None, fmt: str = "{:.2f}") -> str:
    return "n/a" if x is None else fmt.format(x)


def _mean_ci(s: Mapping[str, Any] | None, mean_key: str = "mean", ci_key: str = "ci95") -> str:
    if not s or s.get(mean_key) is None:
        return "n/a"
    low, high = s.get(ci_key) or (None, None)
    return f"{_num(s[mean_key])} [{_num(low)}, {_num(high)}]"


def _columns(header: Sequence[str], body: Sequence[Sequence[str]]) -> list[str]:
    """Left-aligned columns two spaces apart, a dashed line under the header, no trailing blanks."""
    widths = [max(len(row[i]) for row in [header, *body]) for i in range(len(header))]
    lines = ["  ".join(cell.ljust(w) for cell, w in zip(row, widths)).rstrip() for row in [header, *body]]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return lines


def _overall(result: Summary) -> list[str]:
    return _columns(*overall_cells(result))


def overall_cells(result: Summary) -> tuple[list[str], list[list[str]]]:
    """(header, body) of the overall table as text cells (see :func:`format_table`); the HTML report uses them."""
    reference = result.reference
    header = ["policy", "privileged", "n", "failures", "gain dB", "final SI-SDR dB", "normalised gain",
              "median normalised", f"vs {reference}: diff dB", "pairs", "p"]
    body: list[list[str]] = []
    for name, entry in result.policies.items():
        comp = result.comparisons.get(name)
        if name == reference:
            vs, pairs, p = "(reference)", "", ""
        elif comp is None:
            vs, pairs, p = "n/a", "0", "n/a"
        else:
            vs, pairs = _mean_ci(comp, "mean_difference"), str(comp["n"])
            p = _num(comp["wilcoxon_p"], "{:.3g}")
        norm = entry.get("normalised_gain")
        body.append([name, "yes" if entry["privileged"] else "no", str(entry["ok"]), str(entry["failures"]),
                     *(_mean_ci(entry.get(m)) for m in METRICS), _mean_ci(norm, "ratio_of_means"),
                     _mean_ci(norm, "median", "median_ci95"), vs, pairs, p])
    return header, body


def scene_cells(result: Summary) -> tuple[list[str], list[list[str]]]:
    """(header, body) of the per-scene table as text cells; the body is empty for a summary of format 1."""
    body = [[name, scene, str(s["n"]), _mean_ci(s.get("gain_db")), _mean_ci(s.get("normalised_gain"), "ratio_of_means")]
            for name, entry in result.policies.items() for scene, s in entry.get("scenes", {}).items()]
    return ["policy", "scene", "n", "gain dB", "normalised gain"], body


def _per_scene(result: Summary) -> list[str]:
    header, body = scene_cells(result)
    if not body:  # a summary of format 1, or one without finished episodes
        return []
    return ["", SCENE_TITLE, *_columns(header, body)]


def format_table(result: Summary) -> str:
    """The plain-text tables of a :class:`Summary`: overall, then per scene.

    Overall columns: policy, privileged, n (episodes finished ``"ok"``), failures, then mean [95 % CI] of
    gain dB and final SI-SDR dB, the normalised gain (ratio of mean gains [CI]), the median of the
    per-episode normalised gains [CI], then the paired difference in gain dB against the reference (mean
    [CI]), the number of episode pairs it uses, and its Wilcoxon p-value. All intervals are two-level
    bootstraps (scenes, then episodes). The per-scene table has one line per policy and scene: n, mean gain
    dB [CI] and normalised gain [CI] over that scene's episodes. Undefined numbers print as ``n/a``; a
    summary of format 1 (no scenes) prints the overall table only, its normalised gains as ``n/a``.

    Parameters
    ----------
    result : Summary
        The output of :func:`summarise`.

    Returns
    -------
    str
        Lines separated by ``"\\n"``, no trailing newline.
    """
    lines = _overall(result)
    if result.reference_missing:
        lines.append(f"(no rows from reference policy {result.reference!r}: no comparisons)")
    return "\n".join(lines + _per_scene(result))
