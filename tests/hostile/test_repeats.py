"""One row per policy and episode: a policy given twice, under any spelling, is refused before any work."""

import pytest

from hearnav.bench.session import canonical_reference
from hearnav.cli import main


@pytest.mark.parametrize("first, second", [("still", "still"), ("./my_p.py:Turn", "my_p.py:Turn"),
                                           ("a/../my_p.py:Turn", "my_p.py:Turn")])
def test_a_policy_given_twice_is_one_line_and_exit_2(first, second, capsys, tmp_path):
    code = main(["bench", "--suite", "smoke", "--policy", first, "--policy", second, "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err.strip()
    assert code == 2 and len(err.splitlines()) == 1
    assert err.endswith(f"policy {second!r} is given twice (expected each policy once, got it as {first!r} too); "
                        f"drop the repeat")
    assert not (tmp_path / "o").exists()


def test_file_references_are_normalised_and_names_kept():
    assert canonical_reference("./x/../p.py:A") == "p.py:A"
    assert canonical_reference("still") == "still"
    assert canonical_reference("pkg.mod:A") == "pkg.mod:A"
