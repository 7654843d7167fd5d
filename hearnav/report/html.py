"""The self-contained HTML report of a run: tables, figures embedded as base64 PNG, players for the saved WAVs.

The page is plain HTML and CSS with no script and no remote resource, so it opens offline. Figures are embedded
(each links to its SVG file beside it); audio players link to the WAV files by relative paths, and only to files
that exist when the report is written.
"""

from __future__ import annotations

import base64
import html
import os
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from hearnav import files
from hearnav.bench.audio import LOUDNESS_LUFS, TRUE_PEAK_DBTP
from hearnav.bench.stats import Summary
from hearnav.errors import ConfigError
from hearnav.report.table import SCENE_TITLE, overall_cells, scene_cells

REPORT_FILE = "report.html"
TRACKS = ("mixture", "estimate", "reference")
_WAV = re.compile(r"^episode(\d{4})-(mixture|estimate|reference)\.wav$")
PLACE = files.Place("the report", "choose a writable --out path",
                    "free some space there, or choose an --out path on a disk with room", ConfigError)
CAUTION = (f"Start playback quietly. Each file is normalised to {LOUDNESS_LUFS:g} LUFS (ITU-R BS.1770-4) with a "
           f"true-peak ceiling of {TRUE_PEAK_DBTP:g} dBTP, but simulated rooms can still be loud.")

CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0 auto;max-width:1400px;padding:1.2em 2em;
color:#1b1b1b;background:#fff;line-height:1.45}
h1{font-size:1.6em;margin-bottom:.2em}h2{font-size:1.25em;border-bottom:2px solid #0072B2;padding-bottom:.2em;margin-top:1.8em}
h3{font-size:1.05em;margin:1.2em 0 .4em}
.meta{color:#555;font-size:.9em}
.scroll{overflow-x:auto}table{border-collapse:collapse;font-size:.85em;margin:.6em 0}
th,td{border:1px solid #d0d0d0;padding:.3em .6em;text-align:left;white-space:nowrap}
th{background:#eef4fa}tr:nth-child(even) td{background:#fafafa}
.note{color:#444;font-size:.9em;max-width:60em}
.caution{border-left:4px solid #D55E00;background:#fdf2ea;padding:.5em .9em;max-width:60em}
figure{margin:1em 0}figure img{max-width:100%;height:auto;border:1px solid #e3e3e3}
figcaption{font-size:.85em;color:#444}
.tracks{display:flex;flex-wrap:wrap;gap:1em;align-items:center}
.tracks div{font-size:.85em}audio{display:block;width:240px}
"""


@dataclass(frozen=True)
class FigureEntry:
    """A figure of the report: its title, a caption, the PNG to embed and the SVG to link (if written)."""

    title: str
    caption: str
    png: Path
    svg: Path | None = None


def _rel(path: Path, folder: Path) -> str:
    """``path`` relative to the report's folder, as a URL path."""
    return Path(os.path.relpath(Path(path).resolve(), folder.resolve())).as_posix()


def table_html(header: Sequence[str], body: Sequence[Sequence[str]]) -> str:
    """An HTML table of text cells (escaped)."""
    head = "".join(f"<th>{html.escape(h)}</th>" for h in header)
    rows = "".join("<tr>" + "".join(f"<td>{html.escape(c)}</td>" for c in row) + "</tr>" for row in body)
    return f"<div class='scroll'><table><thead><tr>{head}</tr></thead><tbody>{rows}</tbody></table></div>"


def category_cells(rows: Sequence[dict]) -> tuple[list[str], list[list[str]]]:
    """Mean gain (dB) and episode count per policy and target category, from the finished rows."""
    groups: dict[tuple[str, str], list[float]] = {}
    for r in rows:
        if r.get("status") == "ok" and r.get("gain_db") is not None:
            groups.setdefault((str(r["policy"]), str(r.get("target_category") or "(not recorded)")), []).append(
                float(r["gain_db"]))
    body = [[p, c, str(len(v)), f"{sum(v) / len(v):.2f}"] for (p, c), v in sorted(groups.items())]
    return ["policy", "target category", "n", "mean gain dB"], body


def figure_html(entry: FigureEntry, folder: Path) -> str:
    """A figure embedded as a base64 PNG, linking to its SVG when that file exists."""
    data = base64.b64encode(Path(entry.png).read_bytes()).decode("ascii")
    link = ""
    if entry.svg is not None and Path(entry.svg).is_file():
        link = f' <a href="{html.escape(_rel(entry.svg, folder))}">SVG</a>'
    return (f'<figure><img alt="{html.escape(entry.title)}" src="data:image/png;base64,{data}">'
            f"<figcaption><b>{html.escape(entry.title)}</b>. {html.escape(entry.caption)}{link}</figcaption></figure>")


def audio_files(run_folder: Path) -> dict[str, dict[int, dict[str, Path]]]:
    """{policy folder: {episode index: {track: path}}} of the WAVs saved in ``run_folder/audio``."""
    found: dict[str, dict[int, dict[str, Path]]] = {}
    root = Path(run_folder) / "audio"
    if not root.is_dir():
        return found
    for sub in sorted(p for p in root.iterdir() if p.is_dir()):
        for wav in sorted(sub.iterdir()):
            m = _WAV.match(wav.name)
            if m and wav.is_file():
                found.setdefault(sub.name, {}).setdefault(int(m.group(1)), {})[m.group(2)] = wav
    return found


def audio_html(run_folder: Path, folder: Path) -> str:
    """Players for every saved episode (mixture, separator estimate, target reference), with the caution."""
    found = audio_files(run_folder)
    if not found:
        return "<p class='note'>No audio was saved for this run (run 'hearnav bench' with --save-audio K).</p>"
    parts = [f"<p class='caution'>{html.escape(CAUTION)}</p>"]
    names = {"mixture": "mixture at the ears", "estimate": "separator's estimate", "reference": "target (reference)"}
    for policy, episodes in found.items():
        parts.append(f"<h3>{html.escape(policy)}</h3>")
        for index, tracks in sorted(episodes.items()):
            players = "".join(
                f"<div>{html.escape(names[t])}<audio controls preload='none' "
                f"src='{html.escape(_rel(tracks[t], folder))}'></audio></div>" for t in TRACKS if t in tracks)
            parts.append(f"<div class='tracks'><div><b>episode {index}</b></div>{players}</div>")
    return "\n".join(parts)


def render(run_folder: Path, summary: Summary | None, rows: Sequence[dict], figures: Sequence[FigureEntry],
           folder: Path, title: str, notes: Sequence[str] = ()) -> str:
    """The whole page as text; ``folder`` is where it will be written (links are relative to it)."""
    esc = html.escape
    out = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>{esc(title)}</title>"
           f"<meta name='viewport' content='width=device-width, initial-scale=1'><style>{CSS}</style></head><body>",
           f"<h1>{esc(title)}</h1>"]
    if summary is not None:
        out.append(f"<p class='meta'>suite {esc(str(summary.suite))} &middot; code {esc(str(summary.code_version))} "
                   f"&middot; result key {esc(str(summary.run_key))} &middot; reference policy "
                   f"{esc(summary.reference)} &middot; results from simulation only</p>")
    out += [f"<p class='note'>{esc(n)}</p>" for n in notes]
    out.append("<h2>Summary</h2>")
    if summary is None:
        out.append("<p class='note'>No summary.json in the run folder: rerun 'hearnav bench' into it.</p>")
    else:
        out.append("<p class='note'>Means with 95 % two-level bootstrap intervals (scenes, then episodes). The "
                   "normalised gain is the ratio of mean gains (policy over oracle bound). The last three columns "
                   "are the paired comparison with the reference policy on the same episodes (Wilcoxon p).</p>")
        out.append(table_html(*overall_cells(summary)))
        header, body = scene_cells(summary)
        if body:
            out += ["<h2>Per scene</h2>", f"<p class='note'>{esc(SCENE_TITLE)}</p>", table_html(header, body)]
        comp = [[name, str(c.get("n")), _num(c.get("mean_difference")), _ci(c.get("ci95")),
                 _p(c.get("wilcoxon_p"))] for name, c in summary.comparisons.items()]
        if comp:
            out += ["<h2>Paired comparisons</h2>",
                    f"<p class='note'>Gain of each policy minus the gain of {esc(summary.reference)} on the same "
                    "episodes.</p>",
                    table_html(["policy", "pairs", "mean difference dB", "95 % interval dB", "Wilcoxon p"], comp)]
    header, body = category_cells(rows)
    if body:
        out += ["<h2>By target category</h2>", table_html(header, body)]
    if figures:
        out.append("<h2>Figures</h2>")
        out += [figure_html(f, folder) for f in figures]
    out += ["<h2>Listen</h2>", audio_html(run_folder, folder), "</body></html>"]
    return "\n".join(out)


def _num(x: float | None) -> str:
    """A dB value with two decimals, or n/a."""
    return "n/a" if x is None else f"{x:.2f}"


def _p(x: float | None) -> str:
    """A p-value with three significant digits, or n/a."""
    return "n/a" if x is None else f"{x:.3g}"


def _ci(pair) -> str:
    if not pair or pair[0] is None or pair[1] is None:
        return "n/a"
    return f"[{pair[0]:.2f}, {pair[1]:.2f}]"


def write_report(path: Path, text: str) -> Path:
    """Write the page atomically; returns its path."""
    data = text.encode("utf-8")
    return files.atomic_write(path, lambda fh: fh.write(data), PLACE)
