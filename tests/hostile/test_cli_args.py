"""Hostile command-line arguments: each is refused in one line with a pinned message and exit code, never a
traceback; and the README's custom-policy example runs exactly as written."""

from __future__ import annotations

import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

from hearnav.bench import registry
from hearnav.bench.policy import as_policy
from hearnav.cli import main, scenes_cmd
from hearnav.cli.scenes_cmd import image_formats
from hearnav.errors import ConfigError, PolicyError
from hearnav.scene.library import DEFAULT_SCENE

HERE = Path(__file__).parent
ROOT = HERE.parent.parent
POLICIES = HERE / "cli" / "raising_policies.py"
# The first 8 bytes of every PNG file (PNG specification, ISO/IEC 15948, section 5.2).
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
FOLDER = "expected a folder path that can be created"
FILE = "expected a file path whose folder can be created"
FIX = "give a new or existing folder you can write to"
pytestmark = pytest.mark.timeout(120)  # a hang guard only


def _run(argv, capsys) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    out = capsys.readouterr()
    assert "Traceback" not in out.out + out.err
    return code, out.out, out.err


def _first_error(argv, capsys) -> tuple[int, str]:
    code, _, err = _run(argv, capsys)
    lines = err.strip().splitlines()
    assert len(lines) == 1, lines
    return code, lines[0]


@pytest.fixture
def a_file(tmp_path) -> Path:
    path = tmp_path / "notes.txt"
    path.write_text("the user's file")
    return path


# -- --out of both subcommands: one shared check ---------------------------------------------------------------

def _out_attacks(a_file: Path) -> list[tuple[list[str], str]]:
    under = a_file / "sub"
    return [
        (["bench", "--policy", "still", "--out", a_file], f"--out '{a_file}': {FOLDER}, found an existing file; {FIX}"),
        (["bench", "--policy", "still", "--out", under],
         f"--out '{under}': {FOLDER}, found a file on its way, '{a_file}'; {FIX}"),
        (["scenes", "show", DEFAULT_SCENE, "--out", under / "plan.png"],
         f"--out '{under / 'plan.png'}': {FILE}, found a file on its way, '{a_file}'; {FIX}"),
    ]


@pytest.mark.parametrize("k", range(3))
def test_out_naming_a_file_or_a_path_under_a_file_is_one_line(k, a_file, capsys):
    argv, message = _out_attacks(a_file)[k]
    code, line = _first_error(argv, capsys)
    assert (code, line) == (2, f"hearnav: error: {message}")
    assert a_file.read_text() == "the user's file"  # nothing the user made is lost


# /proc refuses new entries: ENOENT there, or EACCES for a user without rights (POSIX mkdir errors).
PROC_REASONS = ("No such file or directory", "Permission denied")


@pytest.mark.skipif(not Path("/proc").is_dir(), reason="needs Linux's /proc")
@pytest.mark.parametrize("argv, shown, expected, failed", [
    (["bench", "--policy", "still", "--out", "/proc/x"], "/proc/x", FOLDER, "/proc/x"),
    (["bench", "--policy", "still", "--out", "/proc/x/y"], "/proc/x/y", FOLDER, "/proc/x"),
    (["scenes", "show", DEFAULT_SCENE, "--out", "/proc/x.png"], "/proc/x.png", FILE, "/proc"),
])
def test_out_that_cannot_be_written_is_one_line(argv, shown, expected, failed, capsys):
    code, line = _first_error(argv, capsys)
    assert code == 2
    assert line in {f"hearnav: error: --out '{shown}': {expected}, found that '{failed}' cannot be written "
                    f"({reason}); {FIX}" for reason in PROC_REASONS}


def test_the_out_check_leaves_nothing_behind(tmp_path, capsys):
    out = tmp_path / "new" / "deeper" / "results"
    code, line = _first_error(["bench", "--policy", "still", "--suite", "no-such-suite", "--out", out], capsys)
    assert code == 2 and line.startswith("hearnav: error: suite 'no-such-suite' not found")
    assert list(tmp_path.iterdir()) == []  # the folders made to check the path are gone again


# -- scenes show --out --------------------------------------------------------------------------------------------

def test_show_unknown_extension_lists_the_supported_ones(tmp_path, capsys):
    out = tmp_path / "plan.unknownext"
    code, line = _first_error(["scenes", "show", DEFAULT_SCENE, "--out", out], capsys)
    supported = ", ".join(image_formats())
    assert (code, line) == (2, f"hearnav: error: --out '{out}': expected an image file name ending in a supported "
                               f"format or an existing folder, found the suffix '.unknownext'; supported: "
                               f"{supported} (e.g. plan.png)")
    assert "png" in supported.split(", ") and not out.exists()


def test_show_to_a_new_path_without_suffix_is_refused(tmp_path, capsys):
    out = tmp_path / "plan"
    code, line = _first_error(["scenes", "show", DEFAULT_SCENE, "--out", out], capsys)
    assert code == 2
    assert line.startswith(f"hearnav: error: --out '{out}': expected an image file name ending in a supported "
                           f"format or an existing folder, found no suffix; supported: ")
    assert not out.exists() and not out.with_suffix(".png").exists()


def test_show_to_a_folder_writes_scene_png_and_prints_that_path(tmp_path, capsys):
    code, out, err = _run(["scenes", "show", DEFAULT_SCENE, "--out", tmp_path], capsys)
    written = tmp_path / f"{DEFAULT_SCENE}.png"
    assert (code, out, err) == (0, f"wrote {written}\n", "")
    assert sorted(tmp_path.iterdir()) == [written]
    assert written.read_bytes()[:8] == PNG_SIGNATURE


def test_show_prints_only_the_path_it_wrote(tmp_path, capsys):
    out = tmp_path / "a" / "b" / "plan.SVG"
    code, printed, _ = _run(["scenes", "show", DEFAULT_SCENE, "--out", out], capsys)
    assert (code, printed) == (0, f"wrote {out}\n")
    assert out.read_bytes().lstrip().startswith(b"<?xml")


# -- scenes build --threads -----------------------------------------------------------------------------------------

@pytest.mark.parametrize("threads", ["1000", "0", "-3", "5"])
def test_build_threads_out_of_range_is_one_line(threads, monkeypatch, capsys):
    monkeypatch.setattr(os, "cpu_count", lambda: 4)
    code, line = _first_error(["scenes", "build", DEFAULT_SCENE, "--threads", threads], capsys)
    assert (code, line) == (2, f"hearnav: error: --threads must be 1 to 4 (this machine's CPU count, 4, at most "
                               f"64), got {threads}; use 4 or fewer")


def test_build_threads_are_capped_at_64_on_big_machines(monkeypatch):
    monkeypatch.setattr(os, "cpu_count", lambda: 256)
    assert scenes_cmd.thread_count(64) == 64
    with pytest.raises(ConfigError, match=r"^--threads must be 1 to 64 \(this machine's CPU count, 256, at most 64\), "
                                        r"got 65; use 64 or fewer$"):
        scenes_cmd.thread_count(65)


# -- policies whose own code raises while being made --------------------------------------------------------------

@pytest.mark.parametrize("attr, message", [
    ("Bad", "could not be made: its constructor raised ValueError: boom (fix the policy)"),
    ("broken_factory", "could not be made: its factory raised RuntimeError: model file 'weights.zip' is missing "
                       "(fix the policy)"),
])
def test_a_policy_that_raises_while_being_made_is_one_policy_error_line(attr, message, tmp_path, capsys):
    reference = f"{POLICIES}:{attr}"
    code, line = _first_error(["bench", "--policy", reference, "--out", tmp_path / "out"], capsys)
    assert (code, line) == (2, f"hearnav: error: policy '{reference}' {message}")
    assert not (tmp_path / "out").exists()


def test_a_policy_class_needing_arguments_says_which(tmp_path, capsys):
    code, line = _first_error(["bench", "--policy", f"{POLICIES}:Needs", "--out", tmp_path / "out"], capsys)
    assert (code, line) == (2, "hearnav: error: policy class Needs must take no arguments (got the signature "
                               "'(model_path)'); give it defaults or use a factory")


def test_a_type_error_inside_a_constructor_is_not_called_an_argument_problem():
    class Broken:
        def __init__(self):
            raise TypeError("unsupported operand")

    with pytest.raises(PolicyError, match=r"^policy 'p.py:Broken' could not be made: its constructor raised "
                                          r"TypeError: unsupported operand \(fix the policy\)$"):
        as_policy(Broken, "p.py:Broken")


# -- the last-resort guard in hearnav/cli/main.py ------------------------------------------------------------------

def _raise(exc: BaseException):
    def run(args):
        raise exc

    return run


def test_an_os_error_is_one_line_with_path_reason_and_errno(monkeypatch, capsys):
    monkeypatch.setattr(scenes_cmd, "run_list", _raise(PermissionError(13, "Permission denied", "/data/x.npy")))
    code, line = _first_error(["scenes", "list"], capsys)
    assert (code, line) == (2, "hearnav: error: no permission for '/data/x.npy': Permission denied (errno 13 "
                               "EACCES; check the path, its permissions and the free space)")


def test_an_os_error_on_two_paths_names_both(monkeypatch, capsys):
    monkeypatch.setattr(scenes_cmd, "run_list", _raise(OSError(18, "Invalid cross-device link", "a.tmp", None, "b")))
    code, line = _first_error(["scenes", "list"], capsys)
    assert (code, line) == (2, "hearnav: error: cannot use 'a.tmp' -> 'b': Invalid cross-device link (errno 18 "
                               "EXDEV; check the path, its permissions and the free space)")


BUG = "(this is a bug; rerun with HEARNAV_DEBUG=1 to see the traceback and please report it)"


def test_any_other_exception_is_an_internal_error_line_with_exit_3(monkeypatch, capsys):
    monkeypatch.delenv("HEARNAV_DEBUG", raising=False)
    monkeypatch.setattr(scenes_cmd, "run_list", _raise(KeyError("x" * 5000 + "\nsecond line")))
    code, line = _first_error(["scenes", "list"], capsys)
    assert code == 3
    assert line == f"hearnav: internal error: KeyError: '{'x' * 196}... {BUG}"


def test_hearnav_debug_adds_the_traceback(monkeypatch, capsys):
    monkeypatch.setenv("HEARNAV_DEBUG", "1")
    monkeypatch.setattr(scenes_cmd, "run_list", _raise(ZeroDivisionError("division by zero")))
    assert main(["scenes", "list"]) == 3
    err = capsys.readouterr().err.strip().splitlines()
    assert err[0] == "Traceback (most recent call last):"
    assert err[-1] == f"hearnav: internal error: ZeroDivisionError: division by zero {BUG}"


# -- README's custom-policy example, exactly as written -------------------------------------------------------------

def _readme_example() -> tuple[str, str, list[str]]:
    """(file name, code, command) of the README's complete policy: the python block headed '# NAME -- run with:'."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    found = re.findall(r"```python\n(# (\S+\.py) -- run with: (hearnav [^\n]+)\n.*?)```", text, re.S)
    assert len(found) == 1, "README.md should hold one complete policy example"
    code, name, command = found[0]
    return name, code, shlex.split(command)


def test_readme_example_names_resolve(tmp_path, monkeypatch):
    name, code, command = _readme_example()
    (tmp_path / name).write_text(code)
    monkeypatch.chdir(tmp_path)
    references = [command[k + 1] for k, arg in enumerate(command) if arg == "--policy"]
    for reference in references:
        shown, policy = registry.load_policy(reference)
        assert shown == reference and callable(policy.act)
    # the bare registered name alone is not known: the message says how to name it with its file
    with pytest.raises(PolicyError, match=r"a name registered in your file is path/to/file.py:name\)$"):
        registry.load_policy("turn-to-target-not-imported")


@pytest.mark.slow
def test_readme_example_runs_as_written(tmp_path):
    name, code, command = _readme_example()
    (tmp_path / name).write_text(code)
    assert command[:2] == ["hearnav", "bench"]
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")])}
    proc = subprocess.run([sys.executable, "-m", *command], cwd=tmp_path, env=env, capture_output=True, text=True,
                          timeout=600)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert "Traceback" not in proc.stderr
    out = tmp_path / command[command.index("--out") + 1]
    assert (out / "episodes.jsonl").is_file() and (out / "summary.json").is_file()


# -- reset(options=...) and min_start_distance, which were ignored silently -----------------------------------------

FIELDS = ("scenes, procedural_pool, sound_categories, target_category, distractors, sound_pool, "
          "distractor_level_db, target_cue, standoff_m, min_start_distance, step_s, budget, eval_windows, separator, reward_clip, n_bands, n_segments, "
          "patch_size, fov_deg, acoustics")
RESET = "reset(options=...) got the unknown key {} (expected no keys: reset takes no options); "


@pytest.mark.parametrize("options, message", [
    ({"min_start_distanse": 3}, RESET.format("'min_start_distanse'") + "environment options are given when making "
                                                                       "it (did you mean 'min_start_distance'?)"),
    ({"budget": 5}, RESET.format("'budget'") + "'budget' is an environment option: make the environment with "
                                               "HearNavEnv(budget=...) instead"),
    ({("k",) * 1000: 1}, RESET.format("('k', 'k', 'k', 'k', ...)") + "drop it (environment options are given when "
                                                                   "making the environment: " + FIELDS + ")"),
    ("scene=maple-flat", "reset(options=...) expected a dict or None, got str; pass options=None"),
])
def test_reset_options_are_never_ignored(options, message):
    from hearnav.env import HearNavEnv
    from hearnav.errors import ConfigError

    env = HearNavEnv()  # reset refuses the options before building any world
    with pytest.raises(ConfigError) as caught:
        env.reset(seed=0, options=options)
    assert str(caught.value) == message


def test_no_options_are_accepted_as_before():
    from hearnav.env.core import check_reset_options

    assert check_reset_options(None) is None and check_reset_options({}) is None


@pytest.fixture(scope="module")
def two_spot_room():
    from hearnav.scene.grid import build_grid
    from hearnav.scene.loader import from_dict
    from tests.conftest import shoebox_dict

    spots = [{"name": "corner", "position": [1.0, 1.0], "height": 1.2},
             {"name": "middle", "position": [3.0, 2.0], "height": 2.0}]
    scene = from_dict(shoebox_dict(size=(6.0, 4.0, 2.7), spacing=0.5, spots=spots, name="two-spots"), "test")
    return scene, build_grid(scene)


def _draw(room, distance, seed=0):
    import numpy as np

    from hearnav.env import make_config
    from hearnav.env.episode import draw_episode

    scene, grid = room
    cfg = make_config(None, scenes=["two-spots"], min_start_distance=distance)
    return draw_episode(np.random.default_rng(seed), cfg, "two-spots", scene, grid)


@pytest.mark.parametrize("distance", [3.26, 50.0])
def test_an_impossible_min_start_distance_names_the_largest_possible(two_spot_room, distance):
    from hearnav.errors import ConfigError

    # From the middle spot (3, 2) of a 6 x 4 m room the farthest navigable cell centre is 3.25 m away
    # (cells at 0.5 m spacing, kept clear of the walls).
    with pytest.raises(ConfigError) as caught:
        _draw(two_spot_room, distance)
    assert str(caught.value) == (f"option 'min_start_distance': {distance:g} m cannot be met in scene 'two-spots' "
                                 f"(expected at most 3.25 m: no navigable cell outside the stand-off rings is "
                                 f"farther from target spot 'middle'); lower min_start_distance or standoff_m, or "
                                 f"choose other scenes")


def test_the_largest_named_distance_is_met_every_time(two_spot_room):
    import numpy as np

    scene, grid = two_spot_room
    for seed in range(20):
        plan = _draw(two_spot_room, 3.25, seed)
        target = scene.spots[plan.sources[0].spot].position[:2]
        assert np.hypot(*(grid.centres[plan.start_cell] - target)) >= 3.25


def test_out_through_a_broken_link_says_so(tmp_path, capsys):
    link = tmp_path / "results"
    link.symlink_to(tmp_path / "gone")
    code, line = _first_error(["bench", "--policy", "still", "--out", link / "run"], capsys)
    assert (code, line) == (2, f"hearnav: error: --out '{link / 'run'}': {FOLDER}, found a broken symbolic link on "
                               f"its way, '{link}'; {FIX}")
