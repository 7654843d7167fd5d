"""Reverberation formulas and decay measurement against published worked examples."""

import numpy as np
import pytest

from hearnav.physics import reverberation as decay


def test_sabine_and_eyring_worked_example():
    # Worked example of python-acoustics' test suite (tests/test_room.py, PyPI package 'acoustics'): surfaces 240, 600, 500 m^2 with
    # alpha 0.10, 0.25, 0.45, V = 3000 m^3, c = 343 m/s -> Sabine 1.2114 s, Eyring 1.0204 s.
    areas = np.array([240.0, 600.0, 500.0])
    alpha = np.array([0.10, 0.25, 0.45])
    assert decay.sabine(3000.0, areas, alpha, c=343.0) == pytest.approx(1.2114, abs=1e-3)
    assert decay.eyring(3000.0, areas, alpha, c=343.0) == pytest.approx(1.0204, abs=1e-3)


def test_sabine_constant():
    # 24 ln(10) / c = 0.1611 s/m at c = 343 m/s (Sabine's constant; Kuttruff, Room Acoustics, 5th ed. 2009, eq. 5.9).
    assert decay.sabine(1.0, np.array([1.0]), np.array([1.0])) == pytest.approx(0.1611, abs=1e-4)


@pytest.mark.parametrize("evaluation", ["T20", "T30"])
@pytest.mark.parametrize("t60", [0.3, 0.6, 1.2])
def test_schroeder_measures_synthetic_decay(evaluation, t60):
    # Synthetic decay, common practice: h = noise * exp(-6.91 t / T) (a 60 dB energy decay over T) measures T within about 5 %,
    # by Schroeder backward integration (Schroeder, JASA 1965) over ISO 3382-1 ranges.
    fs = 16000
    rng = np.random.default_rng(1)
    t = np.arange(int(fs * t60 * 1.5)) / fs
    h = rng.standard_normal(t.size) * np.exp(-6.91 * t / t60)
    assert decay.measure_rt60(h, fs, evaluation) == pytest.approx(t60, rel=0.05)


def test_fit_refuses_a_shallow_decay():
    edc = np.linspace(0, -12, 100)
    with pytest.raises(ValueError, match="does not span -5 to -35 dB"):
        decay.fit_decay(edc, 100.0, "T30")
