"""Shared fixtures: small scenes built from dictionaries, fast acoustic settings, a private cache folder."""

from __future__ import annotations

import copy

import pytest

from hearnav.acoustics.settings import AcousticSettings
from hearnav.scene.loader import from_dict


def shoebox_dict(size=(6.0, 4.0, 3.0), absorption=0.2, scattering=0.0, spots=None, obstacles=None,
                 spacing=1.0, ear_height=1.5, start=None, name="test-box") -> dict:
    """A rectangular room with flat absorption on every surface (a 'custom' material)."""
    lx, ly, lz = size
    mat = {"absorption": [absorption] * 7, "scattering": scattering}
    return {
        "name": name,
        "description": "test room",
        "split": "train",
        "ceiling_height": lz,
        "outline": [[0, 0], [lx, 0], [lx, ly], [0, ly], [0, 0]],
        "materials": {"walls": mat, "floor": mat, "ceiling": mat},
        "obstacles": copy.deepcopy(obstacles or []),
        "grid": {"spacing": spacing, "ear_height": ear_height,
                 "start_region": {"box": start or [0, 0, lx, ly]}},
        "spots": copy.deepcopy(spots or [{"name": "a", "position": [1.0, 1.0], "height": 1.5}]),
    }


def make_scene(**kw):
    """A validated scene from :func:`shoebox_dict` arguments."""
    return from_dict(shoebox_dict(**kw), "test")


@pytest.fixture
def fast_settings() -> AcousticSettings:
    """Settings that keep test builds to a second or two."""
    return AcousticSettings(ism_order=2, n_rays=1500, max_response_s=0.4)


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    """Every test gets its own response cache folder."""
    monkeypatch.setenv("HEARNAV_CACHE", str(tmp_path / "cache"))
    return tmp_path / "cache"


@pytest.fixture
def scene():
    """The tiny test room at 1 m spacing."""
    return make_scene(spacing=1.0)


@pytest.fixture
def built(scene, fast_settings):
    """(responses, path, key) of :func:`scene`, built through the response cache."""
    from hearnav.acoustics import cache

    responses = cache.load_or_build(scene, fast_settings)
    path = cache.cache_path(scene, fast_settings)
    assert path.is_file()
    return responses, path, cache.cache_key(scene, fast_settings)
