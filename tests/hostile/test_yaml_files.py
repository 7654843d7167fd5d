"""Crafted YAML files against every YAML entry point: one line, the right exit code, and no waiting.

The alias bomb is the 'billion laughs' construction (nested aliases, 10^10 values once expanded), a known
attack on YAML and XML parsers (common practice; CWE-776, "Improper Restriction of Recursive Entity
References").
"""

from pathlib import Path

import pytest

from hearnav.cli import main
from hearnav.errors import ConfigError, short_repr
from hearnav.yamlfile import MAX_DEPTH, MAX_NODES, YamlRefused, load_yaml_text

HERE = Path(__file__).parent
# A hang guard, not a speed goal: before the loader's limits, rendering the bomb ran for minutes.
pytestmark = pytest.mark.timeout(60)
BOMB = f"more than {MAX_NODES} values once its aliases are expanded (expected a plain document; write the values out)"
DEEP = f"nesting deeper than {MAX_DEPTH} levels (expected a shallower document)"
DUPLICATE = "duplicate key 'episodes' (expected each key once in a mapping)"


def _run(argv, capsys):
    code = main(argv)
    out = capsys.readouterr()
    return code, out.out + out.err


@pytest.mark.parametrize("name, first_line", [
    ("bomb-scene", f"bomb-scene.yaml: (top level): refused: {BOMB} at line 2, column 1"),
    ("deep", f"deep.yaml: (top level): refused: {DEEP} at line 2, column 70"),
    ("duplicate-key", f"duplicate-key.yaml: (top level): refused: {DUPLICATE} at line 4, column 1"),
])
def test_scenes_check_refuses_in_one_line(name, first_line, capsys):
    code, text = _run(["scenes", "check", str(HERE / f"{name}.yaml")], capsys)
    assert code == 1
    assert text.splitlines()[0].endswith(first_line)
    assert "Traceback" not in text


@pytest.mark.parametrize("name, message", [
    ("bomb-suite", f"bomb-suite.yaml: refused: {BOMB} at line 2, column 1"),
    ("deep", f"deep.yaml: refused: {DEEP} at line 2, column 70"),
    ("duplicate-key", f"duplicate-key.yaml: refused: {DUPLICATE} at line 4, column 1"),
])
def test_bench_refuses_a_hostile_suite_in_one_line(name, message, capsys, tmp_path):
    code, text = _run(["bench", "--suite", str(HERE / f"{name}.yaml"), "--policy", "still", "--out",
                              str(tmp_path / "out")], capsys)
    assert code == 2
    assert len(text.strip().splitlines()) == 1 and text.strip().endswith(message)
    assert not (tmp_path / "out" / "episodes.jsonl").exists()


def test_an_env_config_bomb_is_a_config_error():
    from hearnav.env import make_config

    with pytest.raises(ConfigError, match=r"bomb-env.yaml: refused: more than \d+ values once its aliases"):
        make_config(str(HERE / "bomb-env.yaml"))


def test_short_repr_is_bounded_for_shared_structures():
    # The expanded bomb as Python objects: lists that share their items. A plain repr would render 10^10
    # values; short_repr renders a few items per level.
    value = ["x"] * 10
    for _ in range(9):
        value = [value] * 10
    assert len(short_repr(value)) <= 60


def test_plain_aliases_within_the_limits_still_load():
    data = load_yaml_text("base: &b {absorption: 0.2}\nwalls: *b\nfloor: *b\n")
    assert data["walls"] == data["floor"] == {"absorption": 0.2}
    with pytest.raises(YamlRefused):
        load_yaml_text("a: 1\na: 2\n")
