"""The ``hearnav scenes`` subcommands: tables, one-line errors, exit codes, files written."""

import subprocess
import sys

import yaml

from hearnav.cli import main
from hearnav.scene.library import DEFAULT_SCENE, scene_names
from tests.conftest import shoebox_dict


def _write(tmp_path, data):
    path = tmp_path / f"{data['name']}.yaml"  # a scene file is named after its scene
    path.write_text(yaml.safe_dump(data))
    return path


def test_list_prints_every_scene(capsys):
    assert main(["scenes", "list"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out[0].split() == ["name", "split", "area_m2", "cells", "spots", "eyring_s", "t30_s"]
    listed = {line.split()[0] for line in out[1:-1]}
    assert listed == set(scene_names())


def test_check_good_and_bad_files(tmp_path, capsys):
    good = _write(tmp_path, shoebox_dict(name="good"))
    bad_data = shoebox_dict(name="bad")
    bad_data["ceiling_height"] = -1
    bad_data["grid"]["spacing"] = 5
    bad = _write(tmp_path, bad_data)
    assert main(["scenes", "check", str(good)]) == 0
    assert main(["scenes", "check", str(good), str(bad)]) == 1
    out = capsys.readouterr().out
    lines = [line for line in out.splitlines() if line.startswith(str(bad))]
    assert len(lines) == 2
    assert f"{bad}: ceiling_height: height must be positive (expected a value > 0 m, got -1)" in lines
    assert f"{bad}: grid.spacing: grid spacing out of range (expected 0.1 to 2 m, got 5)" in lines


def test_check_bundled_scenes_pass(capsys):
    assert main(["scenes", "check"]) == 0


def test_show_writes_png(tmp_path, capsys):
    out = tmp_path / "plan.png"
    assert main(["scenes", "show", DEFAULT_SCENE, "--out", str(out)]) == 0
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_build_a_scene_file(tmp_path, capsys):
    path = _write(tmp_path, shoebox_dict(spacing=1.0))
    assert main(["scenes", "build", str(path)]) == 0
    out = capsys.readouterr().out
    assert "test-box:" in out and "cache" in out


def test_unknown_scene_is_one_line_without_traceback():
    # The console script prints one line and exits 2: no traceback reaches the terminal.
    proc = subprocess.run([sys.executable, "-m", "hearnav", "scenes", "show", "mapel-flat", "--out", "x.png"],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "unknown scene 'mapel-flat'" in lines[0] and "did you mean 'maple-flat'" in lines[0]
