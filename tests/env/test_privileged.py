"""The privileged view: what it answers agrees with what the environment then does."""

import fast_bss_eval
import numpy as np
import pytest

from hearnav.env import Action, next_pose


def test_view_answers_pose_target_and_budget(make_env):
    env = make_env(budget=5)
    _, info = env.reset(seed=1)
    view = env.privileged
    assert view.pose == (env.cell, env.heading)
    target = info["sources"][0]["spot"]
    spot = next(s for s in env.world.scene.spots if s.name == target)
    np.testing.assert_array_equal(view.target_xy, spot.position[:2])
    assert view.steps_left == 5
    env.step(Action.STAY)
    assert view.steps_left == 4


def test_view_moves_with_the_transition_function(make_env):
    env = make_env()
    env.reset(seed=2)
    view, grid = env.privileged, env.world.grid
    for cell in range(0, grid.n_cells, 7):
        for heading in range(grid.n_headings):
            for action in Action:
                assert view.next_pose(cell, heading, action) == next_pose(env.moves, cell, heading, action)[:2]


def test_last_window_is_what_was_scored(make_env):
    # The reported score is the mean over the ears of the SI-SDR of the last window's estimate at each ear against
    # that ear's early image, and the separation-only score the same against the full image; checked with
    # fast_bss_eval (PyPI), an SI-SDR implementation independent of hearnav's (Scheibler 2021).
    env = make_env()
    env.reset(seed=5)
    *_, info = env.step(Action.FORWARD)
    heard = env.privileged.last_window()
    body = env.embodiment
    assert heard["mixture"].shape == (2, body.window_len)
    m = body.window_len - body.fade_len
    assert heard["estimate"].shape == heard["reference"].shape == heard["full_image"].shape == (2, m)

    def score(reference, estimate):
        return float(np.mean(fast_bss_eval.si_sdr(reference.astype(np.float64), estimate.astype(np.float64),
                                                  zero_mean=False)))

    mixture = heard["mixture"][:, body.fade_len:]
    assert info["si_sdr_db"] == pytest.approx(score(heard["reference"], heard["estimate"]), abs=1e-3)
    assert info["full_si_sdr_db"] == pytest.approx(score(heard["full_image"], heard["estimate"]), abs=1e-3)
    assert info["input_si_sdr_db"] == pytest.approx(score(heard["reference"], mixture), abs=1e-3)
    assert info["input_full_si_sdr_db"] == pytest.approx(score(heard["full_image"], mixture), abs=1e-3)


def test_embodiment_is_the_environments_own(make_env):
    env = make_env(n_bands=16, step_s=0.4)
    _, info = env.reset(seed=0)
    body = info["embodiment"]
    acoustics = env.config.acoustics
    assert (body.fs, body.n_headings) == (acoustics.fs, acoustics.n_headings)
    assert (body.head_radius, body.speed_of_sound) == (acoustics.head_radius, acoustics.speed_of_sound)
    assert body.window_len == round(0.4 * acoustics.fs) and body.n_bands == 16
    # Log-spaced bands from 100 Hz to the Nyquist frequency (the observation's documented bands).
    assert body.band_edges[0] == pytest.approx(100.0) and body.band_edges[-1] == pytest.approx(acoustics.fs / 2)
    ratios = np.diff(np.log(body.band_edges))
    np.testing.assert_allclose(ratios, ratios[0])
    assert body.heading_step == pytest.approx(2 * np.pi / acoustics.n_headings)
