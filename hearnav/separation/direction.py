"""Direction cues: GCC-PHAT time-delay estimation (the head model's interaural delays are in hearnav.physics.head).

Azimuths are relative to the listener's heading, in radians, counter-clockwise (0 straight ahead, +pi/2 to the
left), for arrivals in the horizontal plane.

Sign convention: a positive delay ``tau`` means ``x1`` lags ``x2`` (x1(t) = x2(t - tau)). With
``x1 = left ear`` and ``x2 = right ear`` that is the value :func:`hearnav.physics.head.expected_itd` returns, which is negative for a
source on the left (the left ear hears it first).

References
----------
- C. H. Knapp & G. C. Carter, "The generalized correlation method for estimation of time delay",
  IEEE Trans. ASSP 24(4), 1976: R(tau) = IFFT[ X1 X2* / |X1 X2*| ] (the phase transform, PHAT).
"""

from __future__ import annotations

import numpy as np
import scipy.fft as sfft

from hearnav.errors import ConfigError


def gcc_phat(x1: np.ndarray, x2: np.ndarray, fs: float, max_tau: float | None = None,
             interp: int = 1) -> tuple[float, np.ndarray]:
    """Generalised cross-correlation with the phase transform (Knapp & Carter 1976).

    Parameters
    ----------
    x1, x2 : (n1,), (n2,) real signals.
    fs : sampling rate, Hz.
    max_tau : largest |delay| searched, seconds; default the full correlation.
    interp : integer upsampling of the correlation (zero-padded spectrum), for sub-sample resolution.

    Returns
    -------
    tau : delay of x1 relative to x2, seconds (positive means x1 lags x2).
    correlation : (2 m + 1,) PHAT correlation at lags -m..m in steps of 1 / (interp fs) seconds.

    Raises
    ------
    ConfigError
        Signals not 1-D, empty or non-finite; fs, max_tau or interp out of range.
    """
    x1, x2 = np.asarray(x1, dtype=float), np.asarray(x2, dtype=float)
    for name, x in (("x1", x1), ("x2", x2)):
        if x.ndim != 1 or x.size == 0 or not np.all(np.isfinite(x)):
            raise ConfigError(f"gcc_phat needs {name} as a non-empty finite (n,) array, got shape {x.shape}")
    if not fs > 0:
        raise ConfigError(f"gcc_phat needs fs > 0, got {fs!r}")
    if isinstance(interp, bool) or not isinstance(interp, (int, np.integer)) or interp < 1:
        raise ConfigError(f"gcc_phat needs interp as an integer >= 1, got {interp!r}")
    if max_tau is not None and not max_tau >= 0:
        raise ConfigError(f"gcc_phat needs max_tau >= 0 seconds or None, got {max_tau!r}")
    n = x1.size + x2.size  # no circular wrap-around
    cross = sfft.rfft(x1, n) * np.conj(sfft.rfft(x2, n))
    mag = np.abs(cross)
    cross = np.divide(cross, mag, out=np.zeros_like(cross), where=mag > 1e-12 * max(mag.max(), 1e-300))
    corr = sfft.irfft(cross, interp * n)
    max_shift = interp * n // 2
    if max_tau is not None:
        max_shift = min(int(interp * fs * max_tau), max_shift)
    corr = np.concatenate((corr[-max_shift:] if max_shift else corr[:0], corr[: max_shift + 1]))
    shift = int(np.argmax(np.abs(corr))) - max_shift
    return shift / (interp * fs), corr
