"""The plain-text table of a benchmark :class:`~hearnav.bench.stats.Summary`, as ``hearnav bench`` prints it."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from hearnav.bench.stats import METRICS, Summary


def _num(x: float | None, fmt: str = "{:.2f}") -> str:
    return "n/a" if x is None else fmt.format(x)


def _mean_ci(s: Mapping[str, Any] | None, mean_key: str = "mean") -> str:
    if not s or s.get(mean_key) is None:
        return "n/a"
    low, high = s["ci95"]
    return f"{_num(s[mean_key])} [{_num(low)}, {_num(high)}]"


def format_table(result: Summary) -> str:
    """A plain-text table of a :class:`Summary`.

    Columns: policy, privileged, n (episodes finished ``"ok"``), failures, then mean [95 % CI] of
    gain dB, final SI-SDR dB and normalised gain, then the paired difference in gain dB against the
    reference (mean [CI]), the number of episode pairs it uses, and its Wilcoxon p-value. Undefined numbers
    print as ``n/a``.

    Parameters
    ----------
    result : Summary
        The output of :func:`summarise`.

    Returns
    -------
    str
        Lines separated by ``"\\n"``, no trailing newline.
    """
    reference = result.reference
    header = ["policy", "privileged", "n", "failures", "gain dB", "final SI-SDR dB", "normalised gain",
              f"vs {reference}: diff dB", "pairs", "p"]
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
        body.append([name, "yes" if entry["privileged"] else "no", str(entry["ok"]), str(entry["failures"]),
                     *(_mean_ci(entry.get(m)) for m in METRICS), vs, pairs, p])
    widths = [max(len(row[i]) for row in [header, *body]) for i in range(len(header))]
    lines = ["  ".join(cell.ljust(w) for cell, w in zip(row, widths)).rstrip() for row in [header, *body]]
    lines.insert(1, "  ".join("-" * w for w in widths))
    if result.reference_missing:
        lines.append(f"(no rows from reference policy {reference!r}: no comparisons)")
    return "\n".join(lines)
