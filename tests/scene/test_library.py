"""The bundled scene library: every scene loads and is plausible, splits, names, caching, schema."""

from __future__ import annotations

import pytest

from hearnav.errors import ConfigError, SceneError
from hearnav.scene import build_grid, library
from tests.scene.geometry_checks import grid_moves_cross_solids

BUNDLED = library.scene_files()
BAND_500, BAND_1K = 2, 3




@pytest.fixture(autouse=True)
def _fresh_cache():
    library.clear_cache()
    yield
    library.clear_cache()


def test_at_least_twelve_bundled_scenes():
    assert len(BUNDLED) >= 12


@pytest.mark.parametrize("path", BUNDLED, ids=[p.stem for p in BUNDLED])
def test_bundled_scene_is_plausible(path):
    scene = library.load_named(path.stem)
    grid = build_grid(scene)
    assert scene.name == path.stem
    assert path.read_text(encoding="utf-8").startswith("# ")
    assert grid.n_cells > 0 and grid.n_cells < 350
    assert grid.start_cells.size >= 3
    assert 4 <= len(scene.spots) <= 6
    assert all(0.6 <= sp.position[2] <= 1.8 for sp in scene.spots)
    assert len(scene.obstacles) <= 8
    assert 25.0 <= scene.floor_area <= 120.0
    assert 2.4 <= scene.height <= 3.2
    assert 1.2 <= scene.ear_height <= 1.6
    assert scene.spec.grid.spacing == 0.5
    rt = scene.eyring_rt60()
    for band in (BAND_500, BAND_1K):
        assert 0.15 <= rt[band] <= 1.0, f"{scene.name}: Eyring RT60 {rt[band]:.2f} s in band {band}"


@pytest.mark.parametrize("path", BUNDLED, ids=[p.stem for p in BUNDLED])
def test_grid_moves_do_not_cross_obstacles(path):
    scene = library.load_named(path.stem)
    assert grid_moves_cross_solids(scene, build_grid(scene)) == 0


def test_split_counts():
    counts = {split: len(library.scene_names(split)) for split in library.SPLITS}
    assert counts["train"] >= 6 and counts["val"] >= 2 and counts["test"] >= 2
    assert sum(counts.values()) == len(library.scene_names())


def test_studio_is_dry():
    rt = library.load_named("aspen-studio").eyring_rt60()
    assert 0.15 <= rt[BAND_500] <= 0.35 and 0.15 <= rt[BAND_1K] <= 0.35


def test_default_scene():
    scene = library.load_named(library.DEFAULT_SCENE)
    assert library.DEFAULT_SCENE in library.scene_names()
    assert scene.split in ("train", "val")
    assert 50.0 <= scene.floor_area <= 70.0
    assert len(scene.spots) >= 4
    assert 0.3 <= scene.eyring_rt60(band=BAND_1K) <= 0.9


def test_scenes_dir_is_next_to_package():
    assert (library.scenes_dir() / f"{library.DEFAULT_SCENE}.yaml").is_file()


def test_load_named_is_cached():
    assert library.load_named("maple-flat") is library.load_named("maple-flat")


def test_generated_name():
    scene = library.load_named("gen-4")
    assert scene.name == "gen-4"
    assert library.load_named("gen-4") is scene
    assert "gen-4" not in library.scene_names()


def test_unknown_name_suggests_close_names():
    with pytest.raises(SceneError) as err:
        library.load_named("mapel-flat")
    assert "unknown scene 'mapel-flat'" in str(err.value)
    assert "'maple-flat'" in str(err.value)


def test_unknown_name_lists_valid_names():
    with pytest.raises(SceneError) as err:
        library.load_named("qqq")
    text = str(err.value)
    assert all(name in text for name in library.scene_names())


def test_unknown_split():
    with pytest.raises(ConfigError, match="unknown split"):
        library.scene_names("dev")


def _copy_scene(src_name: str, folder, new_name: str, description: str = "copy") -> None:
    text = (library.scenes_dir() / f"{src_name}.yaml").read_text(encoding="utf-8")
    text = text.replace(f"name: {src_name}", f"name: {new_name}", 1)
    text = "\n".join(f"description: {description}" if line.startswith("description:") else line
                     for line in text.splitlines()) + "\n"
    (folder / f"{new_name}.yaml").write_text(text, encoding="utf-8")


def test_env_folder_adds_and_overrides(tmp_path, monkeypatch):
    _copy_scene("maple-flat", tmp_path, "spruce-extra")
    _copy_scene("birch-studio-flat", tmp_path, "birch-studio-flat", description="overridden")
    monkeypatch.setenv(library.ENV_VAR, str(tmp_path))
    assert "spruce-extra" in library.scene_names()
    assert library.load_named("birch-studio-flat").spec.description == "overridden"
    assert library.scene_names().count("birch-studio-flat") == 1


def test_env_folder_must_exist(tmp_path, monkeypatch):
    monkeypatch.setenv(library.ENV_VAR, str(tmp_path / "missing"))
    with pytest.raises(ConfigError, match=library.ENV_VAR):
        library.scene_names()


def test_file_name_must_match_scene_name(tmp_path, monkeypatch):
    _copy_scene("maple-flat", tmp_path, "pine-a")
    (tmp_path / "pine-a.yaml").rename(tmp_path / "pine-b.yaml")
    monkeypatch.setenv(library.ENV_VAR, str(tmp_path))
    with pytest.raises(SceneError, match="does not match the file name"):
        library.load_named("pine-b")


def test_schema_file_is_up_to_date():
    committed = (library.scenes_dir() / "scene.schema.json").read_text(encoding="utf-8")
    assert committed == library.schema_text(), "regenerate with: python -m hearnav.scene.library"


def test_write_schema(tmp_path):
    path = library.write_schema(tmp_path / "schema.json")
    assert path.read_text(encoding="utf-8") == library.schema_text()
