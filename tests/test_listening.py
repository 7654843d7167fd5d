"""The listening API against reference convolutions: continuity, reverberant carry-over, the target
reference, cross-fades after a move, peek and bad input.

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
# exactly 35 samples, so the reference delay (with the 32-sample lead) is the integer 67.
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


# --- the target reference ---------------------------------------------------------------------------------


def test_direct_path_geometry(responses):
    # straight-line travel time r / c and spherical spreading 1 / r (textbook acoustics), air absorption off
    for cell in (NEAR_A, GENERIC, FAR):
        for spot, spec in enumerate(SPOTS):
            r = np.hypot(*(np.asarray(spec["position"]) - responses.centres[cell]))
            assert responses.line_of_sight[cell, spot]
            assert responses.first_delay[cell, spot] == pytest.approx(r / SPEED, rel=1e-5)
            assert responses.first_gain[cell, spot] == pytest.approx(1 / r, rel=1e-5)


def test_reference_is_the_dry_target_delayed_and_scaled_integer_case(responses, world):
    sources = noise_sources(world)
    delay = responses.first_delay[NEAR_A, 0] * FS + responses.lead
    assert delay == pytest.approx(67, abs=1e-3)  # the geometry gives an integer delay
    gain = float(responses.first_gain[NEAR_A, 0])
    session = ListeningSession(world, sources, target=0)
    ref = concat([session.listen(NEAR_A, 3) for _ in range(N_WINDOWS)], "reference")
    t = np.arange(world.warmup, world.warmup + N_WINDOWS * WINDOW)
    assert_close(ref, gain * sources[0].signal[t - 67])


def test_reference_delay_is_the_cross_correlation_peak_fractional_case(responses, world):
    sources = noise_sources(world)
    delay = responses.first_delay[GENERIC, 1] * FS + responses.lead
    assert abs(delay - round(delay)) > 0.1  # a truly fractional delay
    session = ListeningSession(world, sources, target=1)
    ref = concat([session.listen(GENERIC, 0) for _ in range(N_WINDOWS)], "reference")
    t0 = world.warmup
    dry = sources[1].signal[t0 - 200 : t0 + N_WINDOWS * WINDOW]  # dry samples from 200 before the first window
    xc = ss.correlate(ref, dry, mode="full")
    lags = ss.correlation_lags(len(ref), len(dry), mode="full") + 200
    peak = lags[np.argmax(xc)]
    assert abs(peak - delay) <= 1.0
    # an all-pass delay keeps the level: the scale is the earliest path's gain
    lagged = sources[1].signal[t0 - round(delay) : t0 - round(delay) + len(ref)]
    assert np.sqrt(np.mean(ref**2)) / np.sqrt(np.mean(lagged**2)) == pytest.approx(
        float(responses.first_gain[GENERIC, 1]), rel=0.02)


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
    for field in ("mixture", "target_image", "reference", "images"):
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
        for field in ("mixture", "target_image", "reference", "images"):
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


# --- the mix's frequency-domain paths ---------------------------------------------------------------


@pytest.mark.parametrize("cell, spot", [(NEAR_A, 0), (GENERIC, 1), (FAR, 0)])
def test_mixed_reference_equals_the_time_domain_filter(world, cell, spot):
    # The reference filter applied by FFT in the mix must equal direct convolution (numpy.convolve).
    sources = noise_sources(world)
    win = world.mix(cell, 1, sources, world.warmup, target=spot)
    np.testing.assert_allclose(win.reference, world.reference(cell, sources[spot], world.warmup), atol=2e-5)
