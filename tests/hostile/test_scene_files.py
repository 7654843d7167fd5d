"""Crafted scene files against ``hearnav scenes check`` and ``scenes list``: one line per problem, the right exit
code, and no traceback; a bad file never stops the other files from being checked or listed.

Every file in ``scenes/`` is ``plain-room.yaml`` (which passes) with one thing changed; its first line says what.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from pydantic import ValidationError

from hearnav.cli import main
from hearnav.errors import ConfigError, SceneError
from hearnav.scene import checks, library, limits
from hearnav.scene.loader import from_dict, load_scene
from hearnav.yamlfile import MAX_INT_DIGITS, YamlRefused, load_yaml_text
from tests.conftest import shoebox_dict

HERE = Path(__file__).parent / "scenes"
# A hang guard, not a speed goal: before the bounds, the 2 km outline ran for 40 s into a MemoryError.
pytestmark = pytest.mark.timeout(60)
FINITE = "not a finite number (expected a finite number, got {})"


@pytest.fixture(autouse=True)
def _fresh_library():
    library.clear_cache()
    yield
    library.clear_cache()


def _run(argv, capsys) -> tuple[int, str, str]:
    code = main(argv)
    out = capsys.readouterr()
    return code, out.out, out.err


def test_the_plain_room_passes(capsys):
    code, out, _ = _run(["scenes", "check", str(HERE / "plain-room.yaml")], capsys)
    assert code == 0 and out.splitlines() == [f"ok: {HERE / 'plain-room.yaml'}"]


@pytest.mark.parametrize("name, first_line", [
    # item 3: NaN or inf anywhere is one line for its field (a NaN corner used to be a GEOS traceback)
    ("nan-coordinate", "outline[1][0]: " + FINITE.format("nan")),
    ("inf-ceiling", "ceiling_height: " + FINITE.format("inf")),
    ("nan-ceiling", "ceiling_height: " + FINITE.format("nan")),  # used to read "expected between 0 and nan"
    ("nan-ear-height", "grid.ear_height: " + FINITE.format("nan")),
    ("overflow-ceiling", "ceiling_height: " + FINITE.format("inf")),  # 1e400 reads as infinity
    # item 4: physical bounds, before any geometry
    ("huge-ceiling", "ceiling_height: room too high (expected at most 20 m, got 1e+300)"),
    ("two-km-outline", "outline: room too large (expected at most 100 m across in x and in y, got 2000 x 2000 m); "
                       "check the units (metres)"),
    ("too-many-corners", "outline: too many corners (expected at most 2000, got 2001)"),
    ("long-integer", f"(top level): refused: an integer with 100000 digits (expected at most {MAX_INT_DIGITS} "
                     f"digits) at line 5, column 17"),
    # item 12: strict types
    ("string-number", "ceiling_height: wrong type (expected a number, got the text '2.6'); write the number "
                      "without quotes"),
    ("bool-number", "grid.ear_height: wrong type (expected a number, got the boolean true)"),
    ("binary-name", "name: wrong type (expected text, got binary data (!!binary) b'binary-name'); write the text "
                    "without the !!binary tag"),
    # item 12: names, and the inverted start box that read "no navigable cell"
    ("renamed-room", "name: scene name does not match the file name (expected 'renamed-room', got 'other-room'); "
                     "rename the file or the scene"),
    ("gen-7", "name: name 'gen-7' takes the prefix 'gen-' reserved for generated scenes (expected a name not "
              "starting with 'gen-'); rename the scene and its file"),
    ("inverted-start-box", "grid.start_region.box: start_region.box must be [xmin, ymin, xmax, ymax] with xmin < xmax "
                           "and ymin < ymax (got [6.0, 4.0, 0.0, 0.0]); swap the corners"),
])
def test_scenes_check_refuses_in_one_line(name, first_line, capsys):
    path = HERE / f"{name}.yaml"
    code, out, err = _run(["scenes", "check", str(path)], capsys)
    assert code == 1
    assert out.splitlines() == [f"{path}: {first_line}"]
    assert err.splitlines() == ["1 of 1 scene files have problems"]


def test_bounds_are_checked_before_any_geometry(monkeypatch):
    def no_geometry(*args, **kwargs):
        raise AssertionError("geometry ran on a scene beyond the bounds")

    monkeypatch.setattr(checks, "closed_polygon", no_geometry)
    with pytest.raises(SceneError, match="room too large"):
        load_scene(HERE / "two-km-outline.yaml")


@pytest.mark.parametrize("edit, line", [
    (lambda d: d.update(obstacles=[{"name": f"b{k}", "box": [0.1, 0.1, 0.5, 0.5], "height": 1.0,
                                    "material": "wood_16mm"} for k in range(limits.MAX_OBSTACLES + 1)]),
     f"obstacles: too many obstacles (expected at most {limits.MAX_OBSTACLES}, got {limits.MAX_OBSTACLES + 1})"),
    (lambda d: d.update(spots=[{"name": f"s{k}", "position": [1.0, 1.0], "height": 1.0}
                               for k in range(limits.MAX_SPOTS + 1)]),
     f"spots: too many spots (expected at most {limits.MAX_SPOTS}, got {limits.MAX_SPOTS + 1})"),
    (lambda d: d["spots"][0].update(position=[1.0, 1e300]),
     "spots[0].position: coordinate too far from the origin (expected every coordinate within +/-10000 m, "
     "got 1e+300); move the plan near (0, 0)"),
    # this partition's normal used to overflow to NaN inside GEOS
    (lambda d: d.update(obstacles=[{"name": "w", "partition": {"start": [0, 0], "end": [1e308, 1e308]},
                                    "height": 1.0, "material": "wood_16mm"}]),
     "obstacles[0].partition: coordinate too far from the origin (expected every coordinate within +/-10000 m, "
     "got 1e+308); move the plan near (0, 0)"),
    (lambda d: d.update(outline=[[0, 0], [100, 0], [100, 100], [0, 100], [0, 0]], grid={
        "spacing": 0.1, "ear_height": 1.5, "start_region": {"box": [0, 0, 6, 4]}}),
     "grid.spacing: grid too fine for the room (expected at most 100000 lattice points, got 1000 x 1000 at 0.1 m); "
     "raise the spacing"),
], ids=["obstacles", "spots", "far-spot", "overflowing-partition", "fine-grid"])
def test_size_bounds(edit, line, monkeypatch):
    monkeypatch.setattr(checks, "closed_polygon", lambda *a: pytest.fail("geometry ran beyond the bounds"))
    data = shoebox_dict(spacing=0.5)
    edit(data)
    with pytest.raises(SceneError) as info:
        from_dict(data, "room.yaml")
    assert info.value.problems == [f"room.yaml: {line}"]


def test_a_scene_at_the_bounds_still_loads():
    data = shoebox_dict(size=(limits.MAX_EXTENT, 4.0, limits.MAX_CEILING), spacing=0.5, ear_height=1.5)
    assert from_dict(data, "room.yaml").height == limits.MAX_CEILING


def _folder(tmp_path: Path, *names: str) -> Path:
    for name in names:
        shutil.copy(HERE / f"{name}.yaml", tmp_path / f"{name}.yaml")
    return tmp_path


def test_check_goes_on_past_a_bad_file(tmp_path, monkeypatch, capsys):
    folder = _folder(tmp_path, "nan-coordinate", "plain-room", "gen-7")
    monkeypatch.setenv(library.ENV_VAR, str(folder))
    code, out, err = _run(["scenes", "check"], capsys)
    assert code == 1
    lines = out.splitlines()
    assert f"{folder / 'nan-coordinate.yaml'}: outline[1][0]: {FINITE.format('nan')}" in lines
    assert f"{folder / 'gen-7.yaml'}: name: name 'gen-7' takes the prefix 'gen-' reserved for generated scenes " \
           f"(expected a name not starting with 'gen-'); rename the scene and its file" in lines
    assert f"ok: {folder / 'plain-room.yaml'}" in lines
    assert f"ok: {library.scenes_dir() / 'maple-flat.yaml'}" in lines
    assert err.splitlines() == [f"2 of {len(library.scene_files())} scene files have problems"]


def test_list_shows_the_good_scenes_and_one_line_per_bad_file(tmp_path, monkeypatch, capsys):
    folder = _folder(tmp_path, "nan-coordinate", "plain-room")
    monkeypatch.setenv(library.ENV_VAR, str(folder))
    code, out, err = _run(["scenes", "list", "--split", "train"], capsys)
    # exit 1 for a listing that had to skip something: GNU ls does the same for "minor problems (e.g., cannot
    # access subdirectory)" (GNU coreutils manual, ls invocation, exit status)
    assert code == 1
    names = [line.split()[0] for line in out.splitlines()[1:-1]]
    assert "plain-room" in names and "maple-flat" in names and "nan-coordinate" not in names
    bad = folder / "nan-coordinate.yaml"
    assert err.splitlines() == [f"hearnav: {bad}: skipped: outline[1][0]: {FINITE.format('nan')}; run "
                                f"'hearnav scenes check {bad}' for every problem"]


def test_a_reserved_file_name_is_not_silently_shadowed(tmp_path, monkeypatch):
    folder = _folder(tmp_path, "gen-7")
    monkeypatch.setenv(library.ENV_VAR, str(folder))
    assert "gen-7" not in library.scene_names()
    with pytest.raises(SceneError) as info:
        library.load_named("gen-7")
    assert str(info.value) == (f"{folder / 'gen-7.yaml'}: name: file name 'gen-7' is reserved for generated scenes "
                               f"(expected a name not starting with 'gen-'); rename the file and its scene")


@pytest.mark.parametrize("name, shown", [
    ("gen-" + "9" * 100_000, "'gen-99999999999999999...9999999999999999999999'"),  # int() would raise ValueError
    ("gen-kitchen", "'gen-kitchen'"),
])
def test_malformed_generated_names(name, shown):
    with pytest.raises(SceneError) as info:
        library.load_named(name)
    assert str(info.value) == (f"scene name {shown} takes the prefix 'gen-' of generated scenes (expected "
                               f"gen-<seed> with a seed of 1 to 20 digits, e.g. gen-17)")


# --- the YAML loader's numbers -----------------------------------------------------------------------------


def test_exponent_numbers_are_numbers_and_long_integers_are_refused():
    # YAML 1.2.2, section 10.2.1.4 (core schema): 1e300 is a float; YAML 1.1 (PyYAML) needs a dot
    assert load_yaml_text("a: [1e300, -2E-3, 7, 0x1F, '1e3']") == {"a": [1e300, -0.002, 7, 31, "1e3"]}
    assert load_yaml_text("a: " + "9" * MAX_INT_DIGITS) == {"a": int("9" * MAX_INT_DIGITS)}
    with pytest.raises(YamlRefused, match=r"^an integer with 101 digits \(expected at most 100 digits\) at line 1"):
        load_yaml_text("a: " + "9" * (MAX_INT_DIGITS + 1))


@pytest.mark.parametrize("text, message", [
    ("a: 2001-13-45", "a value that cannot be read (expected plain numbers, text, lists and mappings, got "
                      "ValueError: 'month must be in 1..12')"),
    ("a: !!int abc", "a value that cannot be read (expected plain numbers, text, lists and mappings, got "
                     "ValueError: \"invalid literal for int() with base 10: 'abc'\")"),
])
def test_values_the_constructor_cannot_build_are_one_line(text, message):
    with pytest.raises(YamlRefused) as info:
        load_yaml_text(text)
    assert str(info.value) == message


# --- strict scalars in the environment options and suites --------------------------------------------------


@pytest.mark.parametrize("options, message", [
    ({"step_s": "0.5"}, "option 'step_s': expected a valid number (got '0.5')"),
    ({"budget": True}, "option 'budget': expected a valid integer (got True)"),
    ({"separator": b"delay-and-sum"}, "option 'separator': expected a valid string (got b'delay-and-sum')"),
    ({"fov_deg": float("nan")}, "option 'fov_deg': expected a finite number (got nan)"),
    ({"acoustics": {"fs": "16000"}}, "option 'acoustics.fs': expected a valid integer (got '16000')"),
    ({"acoustics": {"air_absorption": "yes"}}, "option 'acoustics.air_absorption': expected a valid boolean "
                                               "(got 'yes')"),
])
def test_env_options_are_strict(options, message):
    from hearnav.env import make_config

    with pytest.raises(ConfigError) as info:
        make_config(options)
    assert str(info.value) == message


def test_env_options_still_take_yaml_ints_and_lists():
    from hearnav.env import make_config

    cfg = make_config(load_yaml_text("step_s: 1\ndistractors: [1, 2]\ndistractor_level_db: [-3, 3]\n"
                                     "acoustics: {speed_of_sound: 343}\n"))
    assert cfg.step_s == 1.0 and cfg.distractors == (1, 2) and cfg.acoustics.speed_of_sound == 343.0


@pytest.mark.parametrize("field, value, kind", [
    ("episodes", "5", "int_type"), ("seed", True, "int_type"), ("name", b"x", "string_type"),
])
def test_suite_fields_are_strict(field, value, kind):
    from hearnav.bench.suites import Suite

    with pytest.raises(ValidationError) as info:
        Suite.model_validate({"name": "s", "episodes": 5, "seed": 1, field: value})
    assert [e["type"] for e in info.value.errors()] == [kind]
