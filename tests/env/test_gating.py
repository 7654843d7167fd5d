"""Which windows are scored: energies per window by hand, and the 20 dB-below-median rule."""

import numpy as np

from hearnav import sounds

from hearnav.env.gating import QUIET_DB, scored_windows, window_energies


def test_window_energies_by_hand():
    # Windows of 4 samples from sample 2, the first sample of each skipped: [2, 3, 4, 5] -> 3+4+5 squared...
    signal = np.arange(14, dtype=float)
    e = window_energies(signal, start=2, window_len=4, skip=1, count=3)
    assert e.tolist() == [3**2 + 4**2 + 5**2, 7**2 + 8**2 + 9**2, 11**2 + 12**2 + 13**2]
    # past the signal's end counts as zero
    assert window_energies(signal, start=10, window_len=4, skip=0, count=2).tolist() == [10**2 + 11**2 + 12**2 + 13**2, 0]


def test_quiet_rule_is_20_db_below_the_median():
    # Median energy 1.0: 10^(-20/10) = 0.01 is exactly on the floor and scored; just below is not; silence is not.
    assert QUIET_DB == 20.0
    energies = np.array([1.0, 1.0, 0.01, 0.0099, 0.0, 2.0, 1.0])
    assert scored_windows(energies).tolist() == [True, True, True, False, False, True, True]


def _gappy(voice, pool, take, duration_s, fs):
    """A tone at full level for 1.5 s, then 40 dB down for 1.5 s, and so on (a target with quiet stretches)."""
    t = np.arange(round(duration_s * fs)) / fs
    return np.sin(2 * np.pi * 440 * t) * np.where((t // 1.5) % 2 == 0, 1.0, 0.01)


def test_quiet_windows_give_no_reward_and_are_counted(make_env):
    # A target 40 dB down half the time: the gate refuses those windows, which keep the scores, give reward 0
    # and are counted; moves in the loud windows are rewarded.
    sounds.register_category("gappy-test", _gappy)
    try:
        env = make_env(budget=16, target_category="gappy-test", sound_categories=["gappy-test", "noise"])
        _, info = env.reset(seed=3)
        rng = np.random.default_rng(3)
        quiet, nonzero = 0, 0
        for _ in range(16):
            before = info["si_sdr_db"]
            _, reward, _, _, info = env.step(int(rng.integers(3)))
            if not info["target_active"]:
                quiet += 1
                assert reward == 0.0 and info["si_sdr_db"] == before
            nonzero += reward != 0.0
        assert info["quiet_windows"] == quiet and 4 <= quiet <= 12 and nonzero >= 1
    finally:
        sounds.unregister_category("gappy-test")
