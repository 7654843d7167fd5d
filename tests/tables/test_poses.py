"""The pose tables' computations against direct per-pose computations.

References: the bearing of a point is atan2 of its offset minus the heading, wrapped to [-pi, pi) (plane
geometry, common practice); delay-and-sum weights w = d / (d^H d) of the steering vector d (Van Trees,
*Optimum Array Processing*, 2002) pass the look direction undistorted, w^H d = 1.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from hearnav.tables.poses import fill_das, spot_directions
from hearnav.separation import SeparationContext, steering_vector
from hearnav.separation.beamform import das_weights
from hearnav.physics.steering import das_conjugates
from hearnav.separation.stft import stft_freqs

FS = 16000


@pytest.fixture
def world(make_env):
    env = make_env()
    env.reset(seed=0)
    return env


def test_spot_directions_equal_the_plane_geometry_of_each_pose(world):
    grid = world.world.grid
    spots = np.array([s.position[:2] for s in world.world.scene.spots])
    distance, bearing = spot_directions(grid, spots)
    assert distance.shape == (grid.n_cells, len(spots)) and bearing.shape == (grid.n_cells, grid.n_headings, len(spots))
    for cell in range(0, grid.n_cells, 7):
        x, y = grid.centres[cell]
        for heading in range(grid.n_headings):
            for s, (sx, sy) in enumerate(spots):
                b = math.atan2(sy - y, sx - x) - 2 * math.pi * heading / grid.n_headings
                assert bearing[cell, heading, s] == pytest.approx((b + math.pi) % (2 * math.pi) - math.pi, abs=1e-12)
                assert distance[cell, s] == pytest.approx(math.hypot(sx - x, sy - y), abs=1e-12)
    assert (bearing >= -math.pi).all() and (bearing < math.pi).all()


def test_filled_weights_are_the_delay_and_sum_weights_of_each_bearing(world):
    bearing = np.random.default_rng(1).uniform(-np.pi, np.pi, (3, 4, 2))
    das = np.empty((3, 4, 2, 2, 257), np.complex64)
    fill_das(bearing, FS, 512, 0.0875, 343.0, das)
    for idx in [(0, 0, 0), (1, 3, 1), (2, 2, 0)]:
        d = steering_vector(bearing[idx], stft_freqs(512, FS), radius=0.0875, c=343.0)  # (F, 2)
        np.testing.assert_allclose(das[idx], np.conj(das_weights(d)).T, rtol=1e-6, atol=1e-7)  # w = d / (d^H d)
        np.testing.assert_allclose(np.sum(das[idx] * d.T, axis=0), 1.0, atol=1e-6)  # w^H d = 1


def test_vectorised_weights_are_delay_and_sum_of_the_steering_vector(world):
    # Delay-and-sum weights w = d / (d^H d) of the head model's steering vector d, conjugated, pass the look
    # direction undistorted: w^H d = 1 (Van Trees, Optimum Array Processing, 2002, ch. 2).
    az = np.random.default_rng(0).uniform(-np.pi, np.pi, (3, 4))
    freqs = stft_freqs(512, FS)
    table = das_conjugates(az, freqs)
    assert table.shape == (3, 4, 2, 257) and table.dtype == np.complex64
    for idx in np.ndindex(az.shape):
        d = steering_vector(float(az[idx]), freqs)  # (F, 2)
        np.testing.assert_allclose(table[idx], np.conj(das_weights(d)).T, rtol=1e-5, atol=1e-6)
        np.testing.assert_allclose(np.sum(table[idx] * d.T, axis=0), 1.0, atol=1e-5)


def test_the_env_hands_the_separator_the_weights_of_its_bearing(world):
    # The tables are a cache: the weights the env passes must be those the context computes for the bearing the
    # target's earliest path arrives from (the spot's own in line of sight).
    spot = world.plan.sources[0].spot
    for cell, heading in [(0, 0), (5, 2), (world.world.grid.n_cells - 1, 3)]:
        ctx = world.context(cell, heading)
        assert np.shares_memory(ctx.das, world.world.poses.das[cell, heading, spot])  # the store's row, not a copy
        own = SeparationContext(FS, ctx.azimuth, radius=ctx.radius, c=ctx.c).das_conjugate()
        np.testing.assert_array_equal(ctx.das_conjugate(), own)
        assert ctx.azimuth == world.world.poses.arrival[cell, heading, spot]
        if world.world.poses.line_of_sight[cell, spot]:
            assert ctx.azimuth == pytest.approx(world.target_bearing(cell, heading)[1], abs=1e-5)
