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


def test_workers_are_capped_at_the_episodes_and_cpus_and_the_cli_says_so(capsys, tmp_path, monkeypatch):
    import os

    from hearnav.bench.session import worker_count

    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    assert [worker_count(n, 8) for n in (1, 2, 1000)] == [1, 2, 2]
    assert worker_count(1000, 1) == 1
    suite = tmp_path / "one.yaml"
    suite.write_text("name: one\nepisodes: 1\nseed: 3\nenv: {scenes: [maple-flat]}\n")
    # The note comes before any work; a bad policy then stops the run, so nothing is built.
    code = main(["bench", "--suite", str(suite), "--policy", "no-such-policy", "--workers", "1000", "--out",
                 str(tmp_path / "o")])
    err = capsys.readouterr().err.splitlines()
    assert code == 2
    assert err[0] == "hearnav: note: --workers 1000 capped at 1 (at most one per episode, 1, and one per CPU, 2)"
    assert err[1].startswith("hearnav: error: unknown policy 'no-such-policy'")
