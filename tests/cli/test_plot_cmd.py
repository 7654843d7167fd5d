"""``hearnav plot``, ``score-map``, ``report`` and ``demo`` from the command line: files written, where they are
printed, one-line errors."""

import pytest

from hearnav.cli import main
from tests.plots import run_fixtures
from tests.plots.run_fixtures import non_blank

# the shared tiny run and the fixtures it needs (assigned, so the test functions' parameters use them)
env_cache = run_fixtures.env_cache
private_cache = run_fixtures.private_cache
run_dir = run_fixtures.run_dir
scene_dir = run_fixtures.scene_dir
suite_file = run_fixtures.suite_file


def _one_line_error(capsys) -> str:
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    return err[0]


@pytest.mark.parametrize("kind", ["gains", "trajectories"])
def test_bad_run_dir_is_one_line(kind, tmp_path, capsys):
    assert main(["plot", kind, str(tmp_path / "none"), "--out", str(tmp_path / "f")]) == 2
    assert _one_line_error(capsys) == (f"hearnav: error: RUN_DIR '{tmp_path / 'none'}': expected a benchmark run "
                                       f"folder, found nothing there; give the --out folder of a finished 'hearnav "
                                       f"bench' run")
    assert not (tmp_path / "f").exists()


def test_empty_run_dir_is_one_line(tmp_path, capsys):
    (tmp_path / "episodes.jsonl").write_bytes(b"")
    assert main(["report", str(tmp_path)]) == 2
    assert _one_line_error(capsys).startswith(f"hearnav: error: RUN_DIR '{tmp_path}': expected episode rows in "
                                              f"episodes.jsonl, found an empty file")
    assert not (tmp_path / "report.html").exists()


def test_plot_gains_writes_figures_and_says_where(run_dir, tmp_path, capsys):
    out = tmp_path / "figs"
    assert main(["plot", "gains", str(run_dir), "--out", str(out)]) == 0
    stdout = capsys.readouterr().out
    assert stdout.splitlines()[0] == f"6 figure file(s) in {out.resolve()}"
    for stem in ("gains-distribution", "gains-paired", "gains-timing"):
        assert non_blank(out / f"{stem}.png") and (out / f"{stem}.svg").stat().st_size > 1000


def test_plot_trajectories_with_score_map(run_dir, suite_file, tmp_path, capsys):
    out = tmp_path / "figs"
    assert main(["plot", "trajectories", str(run_dir), "--episodes", "0,2", "--policy", "still", "--score-map",
                 "--suite", str(suite_file), "--out", str(out)]) == 0
    assert capsys.readouterr().out.splitlines()[0] == f"4 figure file(s) in {out.resolve()}"
    assert all(non_blank(out / f"trajectories-episode000{k}.png") for k in (0, 2))


def test_plot_trajectories_without_the_suite_is_one_line(run_dir, tmp_path, capsys):
    assert main(["plot", "trajectories", str(run_dir), "--first", "1", "--out", str(tmp_path)]) == 2
    assert _one_line_error(capsys).startswith("hearnav: error: suite 'plots-test' not found")


def test_score_map_of_one_arrangement(tmp_path, capsys):
    out = tmp_path / "maps" / "a.png"
    assert main(["score-map", "env-test-room", "--target", "a", "--distractor", "c", "--windows", "1",
                 "--config", "default", "--out", str(out)]) == 0
    assert non_blank(out) and out.with_suffix(".svg").is_file()
    assert str(out.parent.resolve()) in capsys.readouterr().out


@pytest.mark.parametrize("args, message", [
    (["--target", "a", "--distractor", "zz"], "hearnav: error: unknown spot 'zz'"),
    (["--target", "a", "--distractor", "a"], "hearnav: error: --target and --distractor: expected different spots, "
                                             "found a, a; name each spot once"),
    (["--target", "a"], "hearnav: error: --distractor: expected at least one distractor spot, found none; add "
                        "--distractor SPOT"),
])
def test_score_map_bad_spots_are_one_line(args, message, tmp_path, capsys):
    assert main(["score-map", "env-test-room", *args, "--out", str(tmp_path / "a.png")]) == 2
    assert _one_line_error(capsys).startswith(message)


def test_report_command_with_training_curves(run_dir, suite_file, tmp_path, capsys):
    from tests.plots.test_training import ROWS, _write

    train = _write(tmp_path / "train", ROWS)
    out = tmp_path / "r" / "report.html"
    assert main(["report", str(run_dir), "--suite", str(suite_file), "--train", str(train), "--out", str(out)]) == 0
    stdout = capsys.readouterr().out.splitlines()
    assert stdout[0] == f"report: {out.resolve()}"
    assert out.is_file() and (out.parent / "figures" / "trajectories-episode0000.svg").is_file()
    assert "<b>Training</b>" in out.read_text() and (out.parent / "figures" / "training.svg").is_file()


def test_report_without_the_suite_notes_the_missing_trajectories(run_dir, tmp_path):
    out = tmp_path / "report.html"
    assert main(["report", str(run_dir), "--out", str(out)]) == 0
    assert "No trajectory figures: ConfigError: suite &#x27;plots-test&#x27; not found" in out.read_text()


def test_demo_on_a_tiny_suite(monkeypatch, suite_file, tmp_path, capsys):
    from hearnav.cli import demo_cmd

    monkeypatch.setattr(demo_cmd, "DEMO_SUITE", str(suite_file))
    monkeypatch.setattr(demo_cmd, "DEMO_POLICIES", ("still", "approach", "no-such-policy"))
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out), "--workers", "1"]) == 0
    captured = capsys.readouterr()
    assert "hearnav: skipping policy 'no-such-policy': not registered in this installation" in captured.err
    assert captured.out.splitlines()[-1] == f"report: {out / 'report.html'}  (open it in a browser; it works offline)"
    assert (out / "report.html").is_file() and (out / "audio" / "still" / "episode0000-mixture.wav").is_file()
    assert non_blank(out / "figures" / "gains-distribution.png")


def test_demo_suite_is_short_and_on_the_default_scene():
    from hearnav.bench.suites import load_suite
    from hearnav.scene.library import DEFAULT_SCENE

    suite = load_suite("demo")
    assert suite.env["scenes"] == [DEFAULT_SCENE] == ["maple-flat"]
    assert suite.episodes <= 8 and suite.env_config().budget <= 12


@pytest.mark.slow
def test_full_demo(tmp_path, capsys):
    """The real demo: the demo suite on maple-flat with every registered baseline (minutes; builds the scene)."""
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out)]) == 0
    assert (out / "report.html").is_file() and non_blank(out / "figures" / "trajectories-episode0000.png")


def test_out_under_a_file_is_one_line_and_the_file_is_kept(run_dir, tmp_path, capsys):
    a_file = tmp_path / "a_file"
    a_file.write_text("the user's file")
    assert main(["plot", "gains", str(run_dir), "--out", str(a_file / "sub")]) == 2
    assert _one_line_error(capsys) == (f"hearnav: error: --out '{a_file / 'sub'}': expected a folder path that can be "
                                       f"created, found a file on its way, '{a_file}'; give a new or existing folder "
                                       f"you can write to")
    assert a_file.read_text() == "the user's file"
