"""The plain-text tables of a benchmark summary: overall, then per scene."""

import re

from hearnav.bench.stats import summarise
from hearnav.report import format_table
from hearnav.report.table import SCENE_TITLE
from tests.bench.test_stats import ROWS


def cells(line: str) -> list[str]:
    return re.split(r"\s{2,}", line)


def test_format_table():
    text = format_table(summarise(ROWS))
    lines = text.split("\n")
    assert cells(lines[0]) == ["policy", "privileged", "n", "failures", "gain dB", "final SI-SDR dB", "normalised gain",
                               "median normalised", "vs still: diff dB", "pairs", "p"]
    assert set(lines[1]) <= {"-", " "}
    walker = cells(next(line for line in lines if line.startswith("walker")))
    assert walker[:4] == ["walker", "no", "4", "1"]  # 4 ok episodes, 1 failure
    assert walker[4].startswith("6.00 [") and walker[5].startswith("1.00 [")
    assert walker[6].startswith("0.69 [") and walker[7].startswith("0.65 [")  # 24 / 34.75; median of 0.5 .. 0.9
    assert walker[8:] == ["3.00 [3.00, 3.00]", "2", "0.5"]
    still = next(line for line in lines if line.startswith("still"))
    assert "(reference)" in still
    oracle = next(line for line in lines if line.startswith("oracle"))
    assert " yes " in oracle and "10.00 [10.00, 10.00]" in oracle and "1.00 [1.00, 1.00]" in oracle


def test_format_table_breaks_results_down_by_scene():
    lines = format_table(summarise(ROWS)).split("\n")
    start = lines.index(SCENE_TITLE)
    assert lines[start - 1] == "" and cells(lines[start + 1]) == ["policy", "scene", "n", "gain dB", "normalised gain"]
    scenes = [cells(line)[:3] for line in lines[start + 3:]]
    assert scenes == [["still", "attic", "2"], ["still", "barn", "1"], ["walker", "attic", "3"],
                      ["walker", "barn", "1"], ["oracle", "attic", "1"], ["oracle", "barn", "1"]]
    walker_attic = cells(lines[start + 5])  # gains 3, 5, 7 against bound gains 6, 10, 8.75
    assert walker_attic[3] == "5.00 [3.00, 7.00]" and walker_attic[4].startswith("0.61 [")  # 15 / 24.75
    assert cells(lines[start + 6])[3:] == ["9.00 [n/a, n/a]", "0.90 [n/a, n/a]"]  # one episode: no interval


def test_format_table_without_reference():
    missing = format_table(summarise([r for r in ROWS if r["policy"] == "walker"]))
    assert "no rows from reference policy 'still'" in missing and "n/a" in missing
    lines = missing.split("\n")
    assert lines.index("(no rows from reference policy 'still': no comparisons)") < lines.index(SCENE_TITLE)
