"""Reverberation time: Sabine's and Eyring's formulas, and decay measurement by Schroeder integration.

References
----------
- W. C. Sabine (1900); C. F. Eyring, JASA 1, 1930: T = 24 ln(10) V / (c (A + 4 m V)) = 0.1611 V / (...) at
  c = 343 m/s, with A = sum S_i alpha_i (Sabine) or A = -S ln(1 - mean alpha) (Eyring).
- M. R. Schroeder, "New method of measuring reverberation time", JASA 37, 1965: backward integration.
- ISO 3382-1: T20 fits the decay from -5 to -25 dB, T30 from -5 to -35 dB, by least squares; T = -60 / slope.
"""

from __future__ import annotations

import numpy as np

EVALUATION_RANGES = {"T20": (-5.0, -25.0), "T30": (-5.0, -35.0)}


def _constant(c: float) -> float:
    return 24.0 * np.log(10.0) / c


def sabine(volume: float, areas: np.ndarray, absorption: np.ndarray, c: float = 343.0, m: float = 0.0) -> np.ndarray:
    """Sabine reverberation time in seconds.

    Parameters
    ----------
    areas : (n_surfaces,) m^2.
    absorption : (n_surfaces,) or (n_surfaces, n_bands).
    m : air attenuation coefficient in 1/m (energy), 0 for none.

    Returns
    -------
    scalar or (n_bands,) seconds.
    """
    a = np.tensordot(np.asarray(areas, float), np.asarray(absorption, float), axes=(0, 0))
    return _constant(c) * volume / (a + 4 * m * volume)


def eyring(volume: float, areas: np.ndarray, absorption: np.ndarray, c: float = 343.0, m: float = 0.0) -> np.ndarray:
    """Eyring reverberation time in seconds (same shapes as :func:`sabine`)."""
    areas = np.asarray(areas, float)
    mean = np.tensordot(areas, np.asarray(absorption, float), axes=(0, 0)) / areas.sum()
    return _constant(c) * volume / (-areas.sum() * np.log(1.0 - mean) + 4 * m * volume)


def schroeder_db(energy: np.ndarray) -> np.ndarray:
    """Energy decay curve in dB from per-sample (or per-bin) energies, 0 dB at the start.

    Parameters
    ----------
    energy : (n,) non-negative energies, e.g. h**2.
    """
    edc = np.cumsum(np.asarray(energy, float)[::-1])[::-1]
    with np.errstate(divide="ignore"):
        return 10 * np.log10(edc / edc[0])


def fit_decay(edc_db: np.ndarray, rate: float, evaluation: str = "T30") -> float:
    """Reverberation time from a decay curve by a least-squares line over an ISO 3382-1 range.

    Parameters
    ----------
    edc_db : (n,) decay curve in dB.
    rate : samples (or bins) per second.
    evaluation : "T20" or "T30".
    """
    hi, lo = EVALUATION_RANGES[evaluation]
    idx = np.nonzero((edc_db <= hi) & (edc_db >= lo))[0]
    if idx.size < 3 or not np.nanmin(edc_db) <= lo:
        raise ValueError(f"decay does not span {hi:g} to {lo:g} dB (got down to {np.nanmin(edc_db[np.isfinite(edc_db)]):.1f} dB)")
    t = idx / rate
    slope, _ = np.polyfit(t, edc_db[idx], 1)
    return float(-60.0 / slope)


def measure_rt60(response: np.ndarray, fs: float, evaluation: str = "T30") -> float:
    """RT60 of an impulse response by Schroeder integration and an ISO 3382-1 fit.

    Parameters
    ----------
    response : (n,) samples.
    """
    return fit_decay(schroeder_db(np.asarray(response, float) ** 2), fs, evaluation)
