"""The listening API against reference convolutions: continuity, reverberant carry-over, the target's early
image, cross-fades after a move, peek and bad input.

Reference convolution: scipy.signal.fftconvolve (full linear convolution) of each dry signal with the
full response ``Responses.response(cell, heading, spot)``, per ear.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal as ss

from hearnav.acoustics.cache import load_or_build
from hearnav.errors import ConfigError
from hearnav.listening import ListeningSession, ListeningWorld, Source
from tests.conftest import make_scene

WINDOW = 1600  # 0.1 s at 16 kHz
N_WINDOWS = 4
SPEED = 343.0  # fast_settings' speed of sound
FS = 16000
# Spot "a" sits 35 * 343 / 16000 m east of cell 0's centre (0.5, 0.5) at ear height: its direct path takes
# exactly 35 samples, so its direct path (with the 32-sample lead) arrives at sample 67.
A_OFFSET = 35 * SPEED / FS
SPOTS = [{"name": "a", "position": [0.5 + A_OFFSET, 0.5], "height": 1.5},
         {"name": "b", "position": [4.5, 3.0], "height": 1.5}]
NEAR_A, FAR = 0, 23  # cell 0 centre (0.5, 0.5); cell 23 centre (5.5, 3.5)
GENERIC = 10  # cell (2.5, 2.5): a fractional delay to spot b


@pytest.fixture
def responses(fast_settings):
    return load_or_build(make_scene(spacing=1.0, spots=SPOTS), fast_settings)


@pytest.fixture
def world(responses):
    return ListeningWorld.of(responses, WINDOW)


def noise_sources(world: ListeningWorld, n_windows: int = N_WINDOWS, seed: int = 0) -> list[Source]:
    rng = np.random.default_rng(seed)
    n = world.signal_length(n_windows)
    return [Source(0, rng.standard_normal(n)), Source(1, 0.5 * rng.standard_normal(n))]


def reference_image(responses, signal: np.ndarray, cell: int, heading: int, spot: int) -> np.ndarray:
    """(2, len(signal) + length - 1) full linear convolution with the response, per ear."""
    h = responses.response(cell, heading, spot)
    return np.stack([ss.fftconvolve(signal, h[ear]) for ear in range(2)])


def assert_close(got: np.ndarray, want: np.ndarray, rel: float = 1e-4) -> None:
    """Equal within ``rel`` of the reference's peak (the mixing runs in single precision)."""
    assert got.shape == want.shape
    scale = np.abs(want).max()
    assert scale > 0
    assert np.abs(got - want).max() <= rel * scale


def concat(windows, field: str) -> np.ndarray:
    return np.concatenate([getattr(w, field) for w in windows], axis=-1)


def raised_cosine(n: int) -> np.ndarray:
    """Fade-in gain sin^2(pi (k + 1/2) / 2n), k = 0..n-1: a raised-cosine ramp sampled at mid-points
    (common practice)."""
    return np.sin(np.pi * (np.arange(n) + 0.5) / (2 * n)) ** 2


# --- continuity at a fixed pose -----------------------------------------------------------------------


def test_consecutive_windows_equal_the_full_convolution(responses, world):
    sources = noise_sources(world)
    cell, heading = GENERIC, 1
    session = ListeningSession(world, sources, target=1, all_images=True)
    windows = [session.listen(cell, heading) for _ in range(N_WINDOWS)]
    assert [w.start for w in windows] == [world.warmup + k * WINDOW for k in range(N_WINDOWS)]
    assert all(w.mixture.shape == (2, WINDOW) for w in windows)
    times = slice(world.warmup, world.warmup + N_WINDOWS * WINDOW)  # emission-time samples
    images = np.stack([reference_image(responses, s.signal, cell, heading, s.spot)[:, times] for s in sources])
    assert_close(concat(windows, "mixture"), images.sum(axis=0))
    assert_close(concat(windows, "images"), images)
    assert_close(concat(windows, "target_image"), images[1])


def test_windows_without_images_carry_none_and_the_same_mixture(world):
    sources = noise_sources(world, 2)
    with_images = ListeningSession(world, sources, all_images=True)
    without = ListeningSession(world, sources)
    for _ in range(2):
        a, b = with_images.listen(3, 2), without.listen(3, 2)
        assert b.images is None
        assert np.allclose(a.mixture, b.mixture, rtol=0, atol=1e-6)
        assert np.allclose(a.target_image, b.target_image, rtol=0, atol=1e-6)


def test_silent_source_still_brings_its_reverberant_tail(responses, world):
    # the source stops at the start of the second window: that window holds only its tail
    rng = np.random.default_rng(3)
    signal = rng.standard_normal(world.signal_length(2))
    stop = world.warmup + WINDOW
    signal[stop:] = 0.0
    session = ListeningSession(world, [Source(0, signal)])
    first, second = session.listen(GENERIC, 0), session.listen(GENERIC, 0)
    assert second.start == stop
    want = reference_image(responses, signal, GENERIC, 0, 0)[:, stop : stop + WINDOW]
    assert_close(second.mixture, want)
    rms = lambda x: float(np.sqrt(np.mean(x**2)))  # noqa: E731
    # clearly non-zero all the way to its end: the room's RT60 is about 0.6 s, so 0.1 s after the source
    # stops the tail is only some 10 dB down (60 dB per RT60, the definition of RT60)
    assert 0.3 < responses.rt60[1:6].max() < 1.0
    assert rms(second.mixture) > 0.2 * rms(first.mixture)
    assert rms(second.mixture[:, -WINDOW // 4 :]) > 0.1 * rms(first.mixture)


# --- the target's early image ---------------------------------------------------------------------------


def test_direct_path_geometry(responses):
    # straight-line travel time r / c and spherical spreading 1 / r (textbook acoustics), air absorption off
    for cell in (NEAR_A, GENERIC, FAR):
        for spot, spec in enumerate(SPOTS):
            r = np.hypot(*(np.asarray(spec["position"]) - responses.centres[cell]))
            assert responses.line_of_sight[cell, spot]
            assert responses.first_delay[cell, spot] == pytest.approx(r / SPEED, rel=1e-5)
            assert responses.first_gain[cell, spot] == pytest.approx(1 / r, rel=1e-5)


def c50_split(h: np.ndarray, fs: int = FS) -> np.ndarray:
    """(2, L) early part of a binaural response, written out here from ISO 3382-1 independently of the package:
    onset = the first sample (of either ear) within 20 dB of the peak, then 50 ms (C50's boundary), with a
    2 ms raised-cosine taper centred on the boundary."""
    power = (h.astype(np.float64) ** 2).max(axis=0)
    first = int(np.flatnonzero(power >= power.max() / 100)[0])
    t = np.arange(h.shape[1])
    w = np.clip((t - (first + 0.05 * fs - 0.001 * fs)) / (0.002 * fs), 0, 1)
    return h * (0.5 + 0.5 * np.cos(np.pi * w))


@pytest.mark.parametrize("cell, heading, spot", [(NEAR_A, 3, 0), (GENERIC, 0, 1), (FAR, 2, 0)])
def test_early_image_is_the_target_through_its_response_cut_50_ms_after_the_first_arrival(responses, world, cell,
                                                                                          heading, spot):
    sources = noise_sources(world)
    session = ListeningSession(world, sources, target=spot)
    windows = [session.listen(cell, heading) for _ in range(N_WINDOWS)]
    early = c50_split(responses.response(cell, heading, spot))
    times = slice(world.warmup, world.warmup + N_WINDOWS * WINDOW)
    want = np.stack([ss.fftconvolve(sources[spot].signal, early[ear]) for ear in range(2)])[:, times]
    assert_close(concat(windows, "early"), want)
    full = reference_image(responses, sources[spot].signal, cell, heading, spot)[:, times]
    assert_close(concat(windows, "target_image"), full)
    # the response holds more than its first 50 ms here: the early image is a strict part of the full one
    assert np.abs(full - want).max() > 1e-3 * np.abs(full).max()


def test_early_image_starts_at_the_direct_path_at_each_ear(responses, world):
    # The first arrival of spot a at each ear is its direct path, 67 samples after emission (35 samples of
    # travel, r / c, plus the 32-sample lead) give or take the half head width (Woodworth's delay <= 0.33 ms).
    # It is the first lag where the cross-correlation with the dry signal comes within 20 dB of its peak (the
    # onset rule of ISO 3382-1): at the shadowed ear a wall reflection from the other side can be the peak.
    sources = noise_sources(world)
    session = ListeningSession(world, sources, target=0)
    early = concat([session.listen(NEAR_A, 3) for _ in range(N_WINDOWS)], "early")
    t0 = world.warmup
    dry = sources[0].signal[t0 - 200: t0 + N_WINDOWS * WINDOW]
    for ear in range(2):
        xc = ss.correlate(early[ear], dry, mode="full")
        lags = ss.correlation_lags(len(early[ear]), len(dry), mode="full") + 200
        causal = (lags >= 0) & (lags < 200)  # within the 200 dry samples before the windows
        xc, lags = np.abs(xc[causal]), lags[causal]
        first = lags[np.flatnonzero(xc >= 0.1 * xc.max())[0]]
        assert abs(first - 67) <= 0.00033 * FS + 1


def test_identity_scores_the_early_to_late_energy_ratio_without_distractors(responses, world):
    # Issue 12's check: with the target alone in a room, the unprocessed mixture at an ear scores within 0.5 dB of
    # 10 log10(early / late energy) of that ear's rendered target signal, the two parts rendered here independently
    # (scipy.signal.fftconvolve with c50_split's parts: ISO 3382-1's C50 is the same split of the response itself).
    # White noise makes the two parts nearly orthogonal, so the SI-SDR of their sum against the early part is
    # their energy ratio (Le Roux et al. 2019: alpha = 1 when the error is orthogonal to the reference).
    from hearnav.env.scoring import binaural_scores

    signal = np.random.default_rng(8).standard_normal(world.signal_length(N_WINDOWS))
    times = slice(world.warmup, world.warmup + WINDOW * N_WINDOWS)
    for cell, heading in [(NEAR_A, 3), (GENERIC, 0), (FAR, 2)]:
        session = ListeningSession(world, [Source(0, signal)])
        windows = [session.listen(cell, heading) for _ in range(N_WINDOWS)]
        mixture, early = concat(windows, "mixture"), concat(windows, "early")
        h = responses.response(cell, heading, 0).astype(np.float64)
        parts = c50_split(h), h - c50_split(h)
        rendered = [np.stack([ss.fftconvolve(signal, part[ear])[times] for ear in range(2)]) for part in parts]
        ratio = 10 * np.log10(np.sum(rendered[0] ** 2, axis=1) / np.sum(rendered[1] ** 2, axis=1))
        for ear in range(2):
            got = binaural_scores(early[[ear, ear]], mixture[[ear, ear]])[0]
            assert got == pytest.approx(ratio[ear], abs=0.5), (cell, heading, ear)
        assert binaural_scores(early, mixture)[0] == pytest.approx(ratio.mean(), abs=0.5)


def test_in_free_field_the_early_image_is_the_direct_path_and_the_identity_scores_the_ceiling(fast_settings):
    # Issue 12's check: in a fully absorbing room (alpha = 1: free field) the response is the direct path at each
    # ear, all within the first 50 ms, so the early image is the whole image and the unprocessed mixture of the
    # target alone scores +inf in exact arithmetic. The mixing runs in single precision (24-bit significand,
    # IEEE 754), which leaves a numerical ceiling far above 60 dB.
    from hearnav.env.scoring import binaural_scores

    free = load_or_build(make_scene(spacing=1.0, spots=SPOTS, absorption=1.0), fast_settings)
    world = ListeningWorld.of(free, WINDOW)
    signal = np.random.default_rng(4).standard_normal(world.signal_length(2))
    for cell, heading in [(NEAR_A, 3), (GENERIC, 1)]:
        session = ListeningSession(world, [Source(0, signal)])
        windows = [session.listen(cell, heading) for _ in range(2)]
        mixture, early, full = (concat(windows, f) for f in ("mixture", "early", "target_image"))
        assert_close(early, full, rel=1e-5)
        times = slice(world.warmup, world.warmup + 2 * WINDOW)
        assert_close(early, reference_image(free, signal, cell, heading, 0)[:, times])
        assert binaural_scores(early, mixture)[0] > 60.0


# --- a move ---------------------------------------------------------------------------------------------


def low_tone(world: ListeningWorld, n_windows: int = 2) -> list[Source]:
    n = world.signal_length(n_windows)
    return [Source(0, np.sin(2 * np.pi * 150.0 * np.arange(n) / FS)), Source(1, np.zeros(n))]


def test_a_move_cross_fades_from_the_old_pose(world):
    sources = noise_sources(world, 2)
    session = ListeningSession(world, sources, target=0, all_images=True)
    session.listen(NEAR_A, 0)
    start = session.time
    moved = session.listen(FAR, 2)
    old = world.mix(NEAR_A, 0, sources, start, 0, all_images=True)
    new = world.mix(FAR, 2, sources, start, 0, all_images=True)
    fade = world.fade
    assert fade == round(0.02 * FS)
    ramp = raised_cosine(fade)
    for field in ("mixture", "target_image", "early", "images"):
        o, n, got = getattr(old, field), getattr(new, field), getattr(moved, field)
        want = n[..., :WINDOW].copy()
        want[..., :fade] = (1 - ramp) * o[..., :fade] + ramp * n[..., :fade]
        assert_close(got, want)
        # the cross-fade is over after `fade` samples: the rest is the new pose alone
        assert np.allclose(got[..., fade:], n[..., fade:WINDOW], rtol=0, atol=1e-6 * np.abs(n).max())


def _boundary_and_inside_steps(world: ListeningWorld, sources) -> tuple[float, float]:
    session = ListeningSession(world, sources)
    a = session.listen(NEAR_A, 0).mixture
    b = session.listen(FAR, 2).mixture
    boundary = float(np.abs(b[:, 0] - a[:, -1]).max())
    inside = float(max(np.abs(np.diff(a, axis=1)).max(), np.abs(np.diff(b, axis=1)).max()))
    return boundary, inside


def test_a_move_does_not_click(responses, world):
    sources = low_tone(world)
    boundary, inside = _boundary_and_inside_steps(world, sources)
    assert boundary <= 1.5 * inside
    # control: without the cross-fade the same move jumps (so the check above has teeth)
    hard, hard_inside = _boundary_and_inside_steps(ListeningWorld.of(responses, WINDOW, fade_s=0.0), sources)
    assert hard > 3 * hard_inside


# --- peek -----------------------------------------------------------------------------------------------


def test_peek_does_not_change_state(world):
    sources = noise_sources(world, 3)
    plain = ListeningSession(world, sources, all_images=True)
    peeked = ListeningSession(world, sources, all_images=True)
    first = plain.listen(NEAR_A, 0)
    assert peeked.peek(NEAR_A, 0).mixture.shape == (2, WINDOW)
    peek_first = peeked.peek(NEAR_A, 0)
    assert np.array_equal(peek_first.mixture, first.mixture)  # nothing to cross-fade from yet
    assert np.array_equal(peeked.listen(NEAR_A, 0).mixture, first.mixture)
    time = peeked.time
    peeked.peek(FAR, 3)
    peeked.peek(GENERIC, 1)
    assert peeked.time == time
    for _ in range(2):  # a move after the peeks still fades from the last *listened* pose
        a, b = plain.listen(FAR, 1), peeked.listen(FAR, 1)
        for field in ("mixture", "target_image", "early", "images"):
            assert np.array_equal(getattr(a, field), getattr(b, field)), field


# --- bad input ------------------------------------------------------------------------------------------


@pytest.mark.parametrize("window", [0, -160])
def test_window_must_be_positive(responses, window):
    with pytest.raises(ConfigError, match=rf"window_len must be a positive number of samples \(got {window}\)"):
        ListeningWorld.of(responses, window)


@pytest.mark.parametrize("target", [2, -1])
def test_target_must_index_a_source(world, target):
    with pytest.raises(ConfigError, match=rf"target must index one of the 2 sources \(got {target}\)"):
        ListeningSession(world, noise_sources(world, 1), target=target)


# --- the early parts of the responses -------------------------------------------------------------------


def test_stored_early_parts_are_the_c50_split_of_every_response(responses, world):
    early = world.tables.early
    assert early.shape[:4] == responses.early.shape[:3] + (2,) and early.dtype == np.float32
    for cell in range(early.shape[0]):
        for heading in range(early.shape[1]):
            for spot in range(early.shape[2]):
                want = c50_split(responses.response(cell, heading, spot))
                assert np.all(want[:, early.shape[-1]:] == 0)  # nothing of the early part is left out
                assert_close(early[cell, heading, spot], want[:, : early.shape[-1]], rel=1e-6)
