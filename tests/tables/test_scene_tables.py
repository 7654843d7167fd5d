"""A scene's tables in the store against independent computations, and their keys.

References: the DFT of a response is numpy.fft.rfft in double precision; the bearing of a point is atan2 of its offset minus the heading, wrapped
to [-pi, pi) (plane geometry, common practice); delay-and-sum weights w = d / (d^H d) of the steering vector d
(Van Trees, Optimum Array Processing, 2002, ch. 2) pass the look direction undistorted, w^H d = 1.
"""

from __future__ import annotations

import dataclasses
import math
import os

import numpy as np
import pytest

from hearnav.acoustics import AcousticSettings
from hearnav.acoustics.cache import load_or_build
from hearnav.tables.maps import occupancy_patch
from hearnav.scene.grid import build_grid
from hearnav.scene.library import load_named
from hearnav.separation import steering_vector
from hearnav.separation.beamform import das_weights
from hearnav.separation.stft import stft_freqs
from hearnav.tables import pose_tables, pose_maps, response_spectra, store, tables_dir
from tests.world_fixtures import FAST_ACOUSTICS, ROOM

WINDOW = 1600
SETTINGS = AcousticSettings(**FAST_ACOUSTICS)


@pytest.fixture
def scene():
    return load_named(ROOM)


def test_stored_spectra_are_the_dft_of_every_response(scene):
    spectra = response_spectra(scene, SETTINGS, WINDOW)
    responses = load_or_build(scene, SETTINGS)
    n_fft = 2 * (spectra.spectra.shape[-1] - 1)
    assert n_fft >= WINDOW + spectra.fade + responses.length - 1  # room for a window, its fade and a response
    assert spectra.spectra.dtype == np.complex64 and not spectra.spectra.flags.writeable
    c, h, s = responses.early.shape[:3]
    assert spectra.spectra.shape[:4] == (c, h, s, 2)
    for cell, heading, spot in [(0, 0, 0), (c // 2, h - 1, s - 1), (c - 1, 1, 2)]:
        want = np.fft.rfft(responses.response(cell, heading, spot).astype(np.float64), n_fft, axis=-1)
        got = spectra.spectra[cell, heading, spot]
        assert np.abs(got - want).max() <= 1e-6 * np.abs(want).max()


def test_stored_pose_tables_are_the_plane_geometry_of_each_pose(scene):
    tables = pose_tables(scene, SETTINGS)
    grid = tables.grid
    spots = scene.spots_xy
    for cell in range(0, grid.n_cells, 7):
        x, y = grid.centres[cell]
        for heading in range(grid.n_headings):
            for s, (sx, sy) in enumerate(spots):
                b = math.atan2(sy - y, sx - x) - 2 * math.pi * heading / grid.n_headings
                assert tables.bearing[cell, heading, s] == pytest.approx((b + math.pi) % (2 * math.pi) - math.pi,
                                                                         abs=1e-12)
                assert tables.distance[cell, s] == pytest.approx(math.hypot(sx - x, sy - y), abs=1e-12)


def test_arrival_is_the_spot_s_bearing_in_line_of_sight_and_a_reflection_s_behind_a_wall(scene):
    # Plane geometry: with the straight line open, the earliest path is the direct one, from the spot's bearing.
    # Behind the partition it is a reflection (the image method: an image source mirrored in a wall, Allen &
    # Berkley 1979), which comes from elsewhere, and lies farther than the straight line.
    tables = pose_tables(scene, SETTINGS)
    los = tables.line_of_sight
    assert los.any() and (~los).any()
    seen = np.broadcast_to(los[:, None, :], tables.arrival.shape)
    np.testing.assert_allclose(tables.arrival[seen], tables.bearing[seen], atol=1e-5)
    turned = np.abs(np.angle(np.exp(1j * (tables.arrival - tables.bearing))))[~seen]
    assert np.median(turned) > 0.1
    assert np.all(tables.first_delay[~los] * 343.0 > tables.distance[~los] - 1e-3)


def test_stored_weights_are_the_delay_and_sum_weights_of_each_arrival(scene):
    tables = pose_tables(scene, SETTINGS)
    c, h, s = tables.bearing.shape
    assert tables.das.shape == (c, h, s, 2, 257) and tables.das.dtype == np.complex64
    freqs = stft_freqs(512, SETTINGS.fs)
    for cell, heading, spot in [(0, 0, 0), (3, 1, 2), (c - 1, h - 1, s - 1)]:
        d = steering_vector(tables.arrival[cell, heading, spot], freqs, SETTINGS.head_radius, SETTINGS.speed_of_sound)
        wh = tables.das[cell, heading, spot]
        np.testing.assert_allclose(wh, np.conj(das_weights(d)).T, rtol=1e-6, atol=1e-7)  # w = d / (d^H d)
        np.testing.assert_allclose(np.sum(wh * d.T, axis=0), 1.0, atol=1e-6)  # w^H d = 1


def test_the_stored_grid_and_maps_are_those_of_the_scene(scene):
    tables = pose_tables(scene, SETTINGS)
    built = build_grid(scene, SETTINGS.n_headings)
    for name in ("origin", "index", "ij", "start_cells", "open_moves"):
        np.testing.assert_array_equal(getattr(tables.grid, name), getattr(built, name))
    assert [tables.grid.forward(c, h) for c in range(built.n_cells) for h in range(4)] == \
        [built.forward(c, h) for c in range(built.n_cells) for h in range(4)]
    views = pose_maps(scene, SETTINGS, 9, math.radians(120))
    for cell, heading in [(0, 0), (5, 3), (built.n_cells - 1, 2)]:
        np.testing.assert_array_equal(views.occupancy[cell, heading], occupancy_patch(built, cell, heading, 9))


def _folders() -> set[str]:
    return {p.name for p in tables_dir().iterdir() if p.is_dir()}


def test_parts_are_reused_for_identical_inputs_only(scene):
    response_spectra(scene, SETTINGS, WINDOW)
    pose_maps(scene, SETTINGS, 9, 1.0)
    before = _folders()
    mtimes = {name: os.stat(tables_dir() / name).st_mtime_ns for name in before}
    store.forget_open()
    response_spectra(scene, SETTINGS, WINDOW)  # identical inputs: the same folders, untouched
    pose_maps(scene, SETTINGS, 9, 1.0)
    assert _folders() == before
    assert {name: os.stat(tables_dir() / name).st_mtime_ns for name in before} == mtimes
    response_spectra(scene, SETTINGS, WINDOW + 16)  # another window: new spectra only (poses do not depend on it)
    pose_maps(scene, SETTINGS, 7, 1.0)  # another patch size: new maps only
    new = _folders() - before
    assert sorted(name.split("-")[-2] for name in new) == ["maps", "spectra"]


def test_a_changed_scene_byte_or_setting_gives_new_keys(scene):
    from hearnav.tables.scene import poses_key

    edited = dataclasses.replace(scene, text=scene.text + " ")  # one more byte in the file
    assert edited.digest != scene.digest
    assert poses_key(edited, SETTINGS) != poses_key(scene, SETTINGS)
    other = AcousticSettings(**{**FAST_ACOUSTICS, "head_radius": 0.09})
    assert poses_key(scene, other) != poses_key(scene, SETTINGS)
    assert poses_key(scene, AcousticSettings(**FAST_ACOUSTICS, n_threads=2)) == poses_key(scene, SETTINGS)


def test_a_damaged_spectra_file_is_rebuilt_with_one_line(scene, capsys):
    store.forget_open()
    first = np.array(response_spectra(scene, SETTINGS, WINDOW).spectra[2])
    folder = next(path for path in store._open if "-spectra-" in path.name)
    with open(folder / "spectra.npy", "r+b") as f:
        f.seek(-100, os.SEEK_END)
        f.write(b"\xff" * 50)
    store.forget_open()
    capsys.readouterr()
    again = response_spectra(scene, SETTINGS, WINDOW)
    err = capsys.readouterr().err
    assert err == f"hearnav: note: {folder / 'spectra.npy'}: CRC-32 mismatch (the bytes differ from those written); rebuilding\n"
    np.testing.assert_array_equal(again.spectra[2], first)
