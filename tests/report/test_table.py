"""The plain-text table of a benchmark summary."""

import re

from hearnav.bench.stats import summarise
from hearnav.report import format_table
from tests.bench.test_stats import ROWS


def test_format_table():
    text = format_table(summarise(ROWS))
    lines = text.split("\n")
    assert lines[0].split("  ")[0] == "policy" and "vs still: diff dB" in lines[0]
    assert set(lines[1]) <= {"-", " "}
    walker = re.split(r"\s{2,}", next(line for line in lines if line.startswith("walker")))
    assert walker[:4] == ["walker", "no", "4", "1"]  # 4 ok episodes, 1 failure
    assert walker[4].startswith("6.00 [") and walker[7:] == ["3.00 [3.00, 3.00]", "2", "0.5"]
    still = next(line for line in lines if line.startswith("still"))
    assert "(reference)" in still
    oracle = next(line for line in lines if line.startswith("oracle"))
    assert " yes " in oracle and "10.00 [10.00, 10.00]" in oracle
    missing = format_table(summarise([r for r in ROWS if r["policy"] == "walker"]))
    assert "no rows from reference policy 'still'" in missing and "n/a" in missing
