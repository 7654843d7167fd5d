"""Broken scene files: each gets one pinned problem line ``file: field.path: what is wrong (expected ..., got ...)``."""

from __future__ import annotations

import re

import pytest
import yaml

from hearnav.errors import SceneError
from hearnav.scene.checks import SPACING_RANGE, SPOT_CLEARANCE
from hearnav.scene.loader import from_dict, load_scene, parse_text
from hearnav.scene.materials import N_BANDS

SRC = "room.yaml"


def lines_of(info: pytest.ExceptionInfo) -> list[str]:
    """The problem lines of a raised SceneError, after checking what every message must satisfy."""
    exc = info.value
    assert exc.problems, "a SceneError must carry at least one problem line"
    for line in exc.problems:
        assert line.startswith(f"{SRC}: "), line
        assert "\n" not in line, line
        assert "Traceback" not in line, line
        assert "expected" in line, line  # every line says what was expected
    assert str(exc) == "; ".join(exc.problems)
    return exc.problems


def build(data: dict) -> None:
    from_dict(data, SRC)


# --- the file itself ------------------------------------------------------------------------------


def test_base_scene_is_valid(base_scene, base_yaml):
    assert from_dict(base_scene, SRC).name == "test-room"
    assert parse_text(base_yaml, SRC).name == "test-room"


def test_not_yaml():
    # the part after the position is PyYAML's own wording of the syntax error (yaml.MarkedYAMLError.problem)
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: (top level): not valid YAML (expected YAML text, got a syntax error at line 1, column 16: "
            "expected ',' or ']', but got '<stream end>')")) as info:
        parse_text("name: [unclosed", SRC)
    assert lines_of(info) == [str(info.value)]


@pytest.mark.parametrize("text", ["", "   \n\t\n  "], ids=["empty", "whitespace"])
def test_empty_file(text):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: (top level): file is empty (expected a YAML mapping of scene fields, got nothing)")) as info:
        parse_text(text, SRC)
    lines_of(info)


def test_comment_only_file_is_not_a_mapping():
    # a file with only a comment parses to None, which is not a mapping
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: (top level): wrong type (expected a YAML mapping of scene fields, got NoneType)")) as info:
        parse_text("# nothing here\n", SRC)
    lines_of(info)


def test_top_level_list():
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: (top level): wrong type (expected a YAML mapping of scene fields, got list)")) as info:
        parse_text("- name: a\n- name: b\n", SRC)
    lines_of(info)


def test_message_starts_with_the_source_name(base_scene):
    base_scene["ceiling_height"] = -1.0
    source = "scenes/private/odd name.yaml"
    with pytest.raises(SceneError) as info:
        parse_text(yaml.safe_dump(base_scene), source)
    assert str(info.value).startswith(f"{source}: ceiling_height: ")
    assert all(p.startswith(f"{source}: ") for p in info.value.problems)
    assert "Traceback" not in str(info.value)


def test_missing_file_names_the_file(tmp_path):
    path = tmp_path / "no-such-scene.yaml"
    with pytest.raises(SceneError, match=re.escape(
            f"{path}: (top level): cannot read the file (expected a readable UTF-8 YAML file, got FileNotFoundError: "
    )) as info:
        load_scene(path)
    assert str(info.value).startswith(str(path))
    assert "Traceback" not in str(info.value)
    assert len(info.value.problems) == 1


def test_file_that_is_not_utf8(tmp_path):
    path = tmp_path / "latin1.yaml"
    path.write_bytes("description: caf\xe9\n".encode("latin-1"))
    with pytest.raises(SceneError, match=re.escape(f"{path}: (top level): cannot read the file (expected a readable "
                                                   f"UTF-8 YAML file, got UnicodeDecodeError: ")):
        load_scene(path)


def test_load_scene_from_a_file_uses_the_path_as_source(tmp_path, base_scene):
    path = tmp_path / "room.yaml"
    base_scene["grid"]["spacing"] = 3
    path.write_text(yaml.safe_dump(base_scene), encoding="utf-8")
    with pytest.raises(SceneError, match=re.escape(f"{path}: grid.spacing: grid spacing out of range")):
        load_scene(path)


# --- fields ---------------------------------------------------------------------------------------


def test_missing_field(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: ceiling_height: missing field (expected a value for 'ceiling_height'; add it)")) as info:
        build(scene_edit(drop=["ceiling_height"]))
    assert lines_of(info) == [
        "room.yaml: ceiling_height: missing field (expected a value for 'ceiling_height'; add it)"]


def test_missing_nested_field(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: grid.start_region: missing field (expected a value for 'start_region'; add it)")) as info:
        build(scene_edit(drop=["grid.start_region"]))
    lines_of(info)


def test_unknown_field_suggests_the_close_name(scene_edit):
    data = scene_edit(fn=lambda d: d.update(ceilng_height=d.pop("ceiling_height")))
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: ceilng_height: unknown field (expected one of name, description, split, ceiling_height, "
            "outline, materials, obstacles, grid, spots); did you mean 'ceiling_height'?")) as info:
        build(data)
    # the typo also leaves the real field missing: both are reported
    assert sorted(lines_of(info)) == sorted([
        "room.yaml: ceiling_height: missing field (expected a value for 'ceiling_height'; add it)",
        "room.yaml: ceilng_height: unknown field (expected one of name, description, split, ceiling_height, "
        "outline, materials, obstacles, grid, spots); did you mean 'ceiling_height'?",
    ])


def test_unknown_nested_field(scene_edit):
    data = scene_edit(fn=lambda d: d["grid"].update(spacng=d["grid"].pop("spacing")))
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: grid.spacng: unknown field (expected one of spacing, ear_height, start_region); "
            "did you mean 'spacing'?")) as info:
        build(data)
    # spacing has a default, so the typo is the only problem
    assert len(lines_of(info)) == 1


def test_unknown_field_in_a_list_item(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0].hight: unknown field (expected one of name, polygon, box, partition, height, "
            "material); did you mean 'height'?")):
        build(scene_edit({"obstacles.0.hight": 0.75}))


# --- outline --------------------------------------------------------------------------------------


def test_outline_not_closed(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: outline: polygon is not closed (expected the last corner to repeat the first [0, 0], "
            "got [0, 4]); append the first corner")) as info:
        build(scene_edit({"outline": [[0, 0], [6, 0], [6, 4], [0, 4]]}))
    assert len(lines_of(info)) == 1


def test_outline_crosses_itself(scene_edit):
    bow_tie = [[0, 0], [6, 4], [6, 0], [0, 4], [0, 0]]
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: outline: polygon crosses itself (expected a simple polygon whose edges meet only at "
            "consecutive corners); reorder the corners")) as info:
        build(scene_edit({"outline": bow_tie}))
    assert len(lines_of(info)) == 1


def test_outline_with_too_few_corners(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: outline: polygon has too few corners (expected at least 3 distinct corners, got 2)")) as info:
        build(scene_edit({"outline": [[0, 0], [6, 0], [0, 0]]}))
    assert len(lines_of(info)) == 1


def test_outline_with_too_few_corners_but_unchecked_obstacles_and_spots_stay_quiet(scene_edit):
    # without a room, obstacles and spots cannot be placed: only the outline is reported
    with pytest.raises(SceneError) as info:
        build(scene_edit({"outline": [[0, 0], [0, 0]]}))
    assert lines_of(info) == [
        "room.yaml: outline: polygon has too few corners (expected at least 3 distinct corners, got 1)"]


# --- heights --------------------------------------------------------------------------------------


@pytest.mark.parametrize("height", [0, -2.5])
def test_ceiling_not_positive(scene_edit, height):
    with pytest.raises(SceneError, match=re.escape(
            f"room.yaml: ceiling_height: height must be positive (expected a value > 0 m, got {height:g})")) as info:
        build(scene_edit({"ceiling_height": height}))
    # spot heights cannot be judged against a broken ceiling, so they add no follow-on lines
    assert lines_of(info) == [
        f"room.yaml: ceiling_height: height must be positive (expected a value > 0 m, got {height:g})"]


@pytest.mark.parametrize("height", [0, -0.5])
def test_obstacle_height_not_positive(scene_edit, height):
    with pytest.raises(SceneError, match=re.escape(
            f"room.yaml: obstacles[0].height: height must be positive (expected a value > 0 m, got {height:g})")) as info:
        build(scene_edit({"obstacles.0.height": height}))
    assert len(lines_of(info)) == 1


def test_obstacle_taller_than_the_room(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0].height: obstacle is taller than the room (expected <= 2.5 m or 'ceiling', "
            "got 3)")):
        build(scene_edit({"obstacles.0.height": 3}))


def test_obstacle_height_of_the_wrong_kind(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0].height: expected a height in metres or 'ceiling', got 'roof'")):
        build(scene_edit({"obstacles.0.height": "roof"}))


def test_ceiling_below_ear_height(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: grid.ear_height: ear height is not below the ceiling (expected < 2.5 m, got 2.6); "
            "lower the ears or raise the ceiling")) as info:
        build(scene_edit({"grid.ear_height": 2.6}))
    assert len(lines_of(info)) == 1


def test_ear_height_not_positive(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: grid.ear_height: height must be positive (expected a value > 0 m, got 0)")):
        build(scene_edit({"grid.ear_height": 0}))


# --- obstacles ------------------------------------------------------------------------------------


def test_obstacle_outside_the_outline(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0]: obstacle 'table' is outside the outline (expected it inside the room, got "
            "bounds [7.0, 1.0, 8.0, 2.0])")) as info:
        build(scene_edit({"obstacles.0.box": [7.0, 1.0, 8.0, 2.0]}))
    assert len(lines_of(info)) == 1


def test_obstacle_touching_the_outline_from_outside_is_outside(scene_edit):
    with pytest.raises(SceneError, match=re.escape("room.yaml: obstacles[0]: obstacle 'table' is outside the outline")):
        build(scene_edit({"obstacles.0.box": [6.0, 1.0, 7.0, 2.0]}))


def test_obstacle_cutting_a_wall(scene_edit):
    # box [-0.5, 1] - [1, 2]: 0.5 m x 1 m of it lies west of the wall x = 0
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0]: obstacle 'table' cuts a wall (expected it wholly inside the outline, got "
            "0.5 m^2 outside); move or shrink it")) as info:
        build(scene_edit({"obstacles.0.box": [-0.5, 1.0, 1.0, 2.0]}))
    assert len(lines_of(info)) == 1


def test_obstacle_against_a_wall_is_allowed(scene_edit):
    # sharing the wall's line is not cutting it; the desk spot moves away from the table's new place
    from_dict(scene_edit({"obstacles.0.box": [0.0, 1.0, 1.0, 2.0]}), SRC)


def test_overlapping_obstacles(scene_edit):
    chair = {"name": "chair", "box": [1.5, 1.5, 2.5, 2.2], "height": 0.5, "material": "wood_16mm"}
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[2]: obstacle 'chair' overlaps obstacle 'table' (expected separate solids); "
            "merge them into one polygon or move one")) as info:
        build(scene_edit(fn=lambda d: d["obstacles"].append(chair)))
    assert len(lines_of(info)) == 1


def test_obstacle_overlapping_a_partition(scene_edit):
    cabinet = {"name": "cabinet", "box": [3.5, 0.5, 4.5, 1.0], "height": 1.0, "material": "wood_16mm"}
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[2]: obstacle 'cabinet' overlaps obstacle 'divider' (expected separate solids)")):
        build(scene_edit(fn=lambda d: d["obstacles"].append(cabinet)))


def test_obstacle_needs_exactly_one_shape(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0]: an obstacle needs exactly one shape (expected one of polygon, box, partition; "
            "got polygon, box)")):
        build(scene_edit({"obstacles.0.polygon": [[1, 1], [2, 1], [2, 2], [1, 1]]}))


def test_empty_box(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0].box: box is empty (expected [xmin, ymin, xmax, ymax] with xmax > xmin and "
            "ymax > ymin, got [2.0, 1.0, 1.0, 1.8])")):
        build(scene_edit({"obstacles.0.box": [2.0, 1.0, 1.0, 1.8]}))


def test_partition_too_thin_to_keep_a_solid(scene_edit):
    # obstacles are shrunk by SOLID_GAP = 5 mm on every side; a 4 mm wall would vanish without a word
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[1]: obstacle 'divider' is too thin (expected every part at least 0.01 m across, "
            "got a shape that vanishes or splits when shrunk by 0.005 m); thicken it")):
        build(scene_edit({"obstacles.1.partition.thickness": 0.004}))


# --- spots ----------------------------------------------------------------------------------------


def test_spot_inside_an_obstacle(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: spots[1].position: spot 'desk' is inside obstacle 'table' (expected free air, got "
            "[1.5, 1.4] at height 0.5 m)")) as info:
        build(scene_edit({"spots.1.position": [1.5, 1.4], "spots.1.height": 0.5}))
    assert len(lines_of(info)) == 1


def test_spot_above_a_low_obstacle_is_allowed(scene_edit):
    # table top at 0.75 m, spot at 1.2 m: 0.45 m of clearance
    from_dict(scene_edit({"spots.1.position": [1.5, 1.4], "spots.1.height": 1.2}), SRC)


def test_spot_outside_the_outline(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: spots[1].position: spot 'desk' is outside the outline (expected a point inside the room, "
            "got [7, 1])")) as info:
        build(scene_edit({"spots.1.position": [7.0, 1.0]}))
    assert len(lines_of(info)) == 1


def test_spot_height_above_the_ceiling(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: spots[1].height: spot height out of range (expected between 0 and 2.5 m, got 3)")):
        build(scene_edit({"spots.1.height": 3.0}))


@pytest.mark.parametrize(
    ("changes", "got"),
    [
        ({"spots.1.position": [0.2, 1.0]}, 0.20),  # 0.2 m from the west wall
        ({"spots.1.height": 0.25}, 0.25),  # 0.25 m above the floor
        ({"spots.1.height": 2.3}, 0.20),  # 0.2 m below the 2.5 m ceiling
        # obstacles are measured as the solids the acoustics uses, shrunk by SOLID_GAP = 5 mm on every side:
        # the table's east face is at 1.995, the partition's west face at 3.955
        ({"spots.1.position": [2.145, 1.4], "spots.1.height": 0.5}, 0.15),  # east of the table's side
        ({"spots.1.position": [1.5, 1.4], "spots.1.height": 0.95}, 0.20),  # 0.2 m above the 0.75 m table top
        ({"spots.1.position": [3.805, 1.0]}, 0.15),  # west of the partition
    ],
    ids=["wall", "floor", "ceiling", "obstacle-side", "obstacle-top", "partition"],
)
def test_spot_too_close_to_a_surface(scene_edit, changes, got):
    assert SPOT_CLEARANCE == 0.3  # the project's margin for a source body near a surface (common practice)
    with pytest.raises(SceneError, match=re.escape(
            f"room.yaml: spots[1].position: spot 'desk' is too close to a surface (expected at least 0.3 m of "
            f"clearance, got {got:.2f} m)")) as info:
        build(scene_edit(changes))
    assert len(lines_of(info)) == 1


def test_spot_exactly_at_the_clearance_is_allowed(scene_edit):
    from_dict(scene_edit({"spots.1.position": [0.3, 1.0], "spots.1.height": 0.3}), SRC)


def test_unknown_spot_category(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: spots[3].categories[0]: unknown sound category 'singer' (expected a registered category); "
            "valid names: alarm, hum, music, noise, talker")):
        build(scene_edit({"spots.3.categories": ["singer"]}))
    with pytest.raises(SceneError, match=re.escape("spots[3].categories[1]: unknown sound category 'talkr' "
                                                   "(expected a registered category); did you mean 'talker'")):
        build(scene_edit({"spots.3.categories": ["music", "talkr"]}))


def test_spot_categories_may_name_a_registered_plug_in(scene_edit):
    import numpy as np

    from hearnav import sounds

    sounds.register_category("user-bell", lambda v, p, t, d, fs: np.sin(np.arange(round(d * fs)) * 0.3))
    try:
        scene = from_dict(scene_edit({"spots.3.categories": ["user-bell", "talker"]}), SRC)
        assert scene.spots[3].categories == ("user-bell", "talker")
    finally:
        sounds.unregister_category("user-bell")


# --- materials ------------------------------------------------------------------------------------


def test_unknown_material_lists_close_names(scene_edit):
    # close names come from difflib.get_close_matches (Python standard library) with its default cutoff 0.6
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: materials.walls: unknown material 'plasterbord' (expected a name from the material table or "
            "explicit absorption coefficients); did you mean 'plasterboard', 'ceiling_plasterboard'?")) as info:
        build(scene_edit({"materials.walls": "plasterbord"}))
    assert len(lines_of(info)) == 1


def test_unknown_named_material_of_an_obstacle(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0].material: unknown material 'wood_16' (expected a name from the material table "
            "or explicit absorption coefficients); did you mean 'wood_16mm'")):
        build(scene_edit({"obstacles.0.material": {"name": "wood_16", "scattering": 0.2}}))


def test_unknown_material_far_from_any_name_lists_valid_names(scene_edit):
    with pytest.raises(SceneError, match=r"room\.yaml: materials\.ceiling: unknown material 'qqqq' .*; valid names: "
                                         r"acoustical_plaster_25mm, .*\bplasterboard\b"):
        build(scene_edit({"materials.ceiling": "qqqq"}))


@pytest.mark.parametrize(("value", "bound"), [(1.2, "<= 1.0"), (-0.1, ">= 0.0")])
def test_absorption_outside_unit_range(scene_edit, value, bound):
    absorption = [0.1, 0.2, 0.3, value, 0.1, 0.1, 0.1]
    with pytest.raises(SceneError, match=re.escape(
            f"room.yaml: materials.walls.absorption[3]: out of range (expected a value {bound}, got {value})")) as info:
        build(scene_edit({"materials.walls": {"absorption": absorption}}))
    assert len(lines_of(info)) == 1


def test_absorption_with_the_wrong_number_of_bands(scene_edit):
    assert N_BANDS == 7  # octave bands centred 125 Hz ... 8 kHz, the preferred frequencies of ISO 266
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: materials.walls: absorption needs one value per octave band 125 Hz - 8 kHz "
            "(expected 7 values, got 6)")) as info:
        build(scene_edit({"materials.walls": {"absorption": [0.1] * 6}}))
    assert len(lines_of(info)) == 1


def test_absorption_band_count_of_an_obstacle_material(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[0].material: absorption needs one value per octave band 125 Hz - 8 kHz "
            "(expected 7 values, got 6)")):
        build(scene_edit({"obstacles.0.material": {"absorption": [0.1] * 6}}))


def test_scattering_out_of_range(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: materials.floor.scattering: out of range (expected a value <= 1.0, got 1.5)")):
        build(scene_edit({"materials.floor.scattering": 1.5}))


# --- grid -----------------------------------------------------------------------------------------


@pytest.mark.parametrize("spacing", [0.05, 3])
def test_grid_spacing_out_of_range(scene_edit, spacing):
    assert SPACING_RANGE == (0.1, 2.0)  # the project's allowed range (common practice for room-scale grids)
    with pytest.raises(SceneError, match=re.escape(
            f"room.yaml: grid.spacing: grid spacing out of range (expected 0.1 to 2 m, got {spacing:g})")) as info:
        build(scene_edit({"grid.spacing": spacing}))
    assert len(lines_of(info)) == 1


@pytest.mark.parametrize("spacing", [0.1, 2.0])
def test_grid_spacing_at_the_bounds_is_allowed(scene_edit, spacing):
    # at 2 m the lattice points (1, 1), (3, 1), (1, 3), (3, 3), (5, 1), (5, 3) include some in the start region
    from_dict(scene_edit({"grid.spacing": spacing}), SRC)


def test_start_region_far_from_free_floor(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: grid: no navigable cell (expected free floor at least 0.2 m from every surface connected to "
            "the start region [10.0, 10.0, 11.0, 11.0], got none); move the start region or reduce the spacing")) as info:
        build(scene_edit({"grid.start_region.box": [10.0, 10.0, 11.0, 11.0]}))
    assert len(lines_of(info)) == 1


def test_start_region_inside_an_obstacle(scene_edit):
    with pytest.raises(SceneError, match=re.escape("room.yaml: grid: no navigable cell (expected free floor")):
        build(scene_edit({"grid.start_region.box": [1.2, 1.2, 1.8, 1.6]}))


def test_room_too_small_for_any_cell(scene_edit):
    # 0.6 x 0.6 m at 0.3 m spacing: lattice points at 0.15 and 0.45 m, each 0.15 m < 0.2 m from a wall.
    # The spot in the middle still has exactly 0.3 m of clearance, so only the grid is at fault.
    data = scene_edit({
        "outline": [[0, 0], [0.6, 0], [0.6, 0.6], [0, 0.6], [0, 0]],
        "obstacles": [],
        "spots": [{"name": "middle", "position": [0.3, 0.3], "height": 1.0}],
        "grid.spacing": 0.3,
        "grid.start_region.box": [0.0, 0.0, 0.6, 0.6],
    })
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: grid: no navigable cell (expected free floor at least 0.2 m from every surface connected to "
            "the start region [0.0, 0.0, 0.6, 0.6], got none)")) as info:
        build(data)
    assert len(lines_of(info)) == 1


def test_spots_in_a_sealed_room_cannot_be_heard(scene_edit):
    # the partition now runs wall to wall (x = 4, y = 0..4): shelf and window are shut off from the start side.
    # Lattice cells at x = 3.75 and 4.25 are both 0.2 m clear of the 0.1 m wall, yet must not be joined across it.
    with pytest.raises(SceneError) as info:
        build(scene_edit({"obstacles.1.partition.end": [4.0, 4.0]}))
    sealed = ("cannot be heard from any reachable cell (expected air connecting it to the start region's cells, "
              "got a region sealed off by full-height obstacles); add a doorway or move the spot")
    assert lines_of(info) == [f"room.yaml: spots[2]: spot 'shelf' {sealed}",
                              f"room.yaml: spots[3]: spot 'window' {sealed}"]


def test_spots_behind_a_low_wall_can_be_heard(scene_edit):
    # the same wall at 2 m height lets air over it, though the listener cannot walk round it
    from_dict(scene_edit({"obstacles.1.partition.end": [4.0, 4.0], "obstacles.1.height": 2.0}), SRC)


# --- names ----------------------------------------------------------------------------------------


def test_duplicate_spot_names(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: spots[2].name: duplicate spot name (expected unique names, got 'lamp' twice)")) as info:
        build(scene_edit({"spots.2.name": "lamp"}))
    assert len(lines_of(info)) == 1


def test_duplicate_obstacle_names(scene_edit):
    with pytest.raises(SceneError, match=re.escape(
            "room.yaml: obstacles[1].name: duplicate obstacle name (expected unique names, got 'table' twice)")) as info:
        build(scene_edit({"obstacles.1.name": "table"}))
    assert len(lines_of(info)) == 1


def test_bad_scene_name(scene_edit):
    with pytest.raises(SceneError, match=re.escape("room.yaml: name: wrong type or value (String should match "
                                                   "pattern '^[a-z0-9][a-z0-9-]*$', got 'Test Room')")):
        build(scene_edit({"name": "Test Room"}))


# --- several problems -----------------------------------------------------------------------------


def test_several_structural_problems_are_all_reported(scene_edit, line_form):
    data = scene_edit(
        {"grid.spacng": 0.5, "split": "training", "obstacles.0.height": "roof"},
        drop=["description"],
    )
    with pytest.raises(SceneError) as info:
        parse_text(yaml.safe_dump(data), SRC)
    lines = lines_of(info)
    paths = sorted(line_form.match(line)["path"] for line in lines)
    assert paths == ["description", "grid.spacng", "obstacles[0].height", "split"]
    assert "room.yaml: split: not an allowed value (expected one of 'train', 'val' or 'test', got 'training')" in lines


def test_several_geometric_problems_are_all_reported(scene_edit, line_form):
    data = scene_edit({
        "grid.spacing": 3,  # out of range: must not hide the obstacle problems below
        "materials.walls": "plasterbord",
        "obstacles.0.box": [7.0, 1.0, 8.0, 2.0],
        "obstacles.1.name": "table",
        "spots.1.position": [7.0, 1.0],
        "spots.2.name": "lamp",
        "spots.3.height": 2.4,
    })
    with pytest.raises(SceneError) as info:
        build(data)
    lines = lines_of(info)
    assert [line_form.match(line)["path"] for line in lines] == [
        "grid.spacing", "materials.walls", "obstacles[0]", "obstacles[1].name", "spots[1].position", "spots[2].name",
        "spots[3].position",
    ]
    assert len(set(lines)) == len(lines) == 7
    assert all(line_form.match(line)["source"] == SRC for line in lines)


def test_every_line_has_the_problem_form(scene_edit, line_form):
    data = scene_edit({"ceiling_height": 1.4, "obstacles.0.height": -1, "materials.floor": {"name": "linolium"}})
    with pytest.raises(SceneError) as info:
        build(data)
    for line in lines_of(info):
        m = line_form.match(line)
        assert m, line
        assert re.search(r"\(expected [^)]*\)", m["what"]), line
