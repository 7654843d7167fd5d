"""Time-frequency masks: a direction-informed spatial mask and the ideal ratio mask.

The spatial mask compares each bin's interaural level difference (ILD, dB) and interaural phase difference
(IPD, wrapped to (-pi, pi]) of the mixture with those of the target's steering vector, and keeps bins that
match:

    M = exp(-(dILD / ILD_WIDTH_DB)^2 / 2) * exp(-(1 - cos dIPD) / IPD_WIDTH^2),

floored at MASK_FLOOR. The phase term is the von Mises form of a Gaussian in the wrapped phase difference
(for small dIPD it equals exp(-dIPD^2 / (2 IPD_WIDTH^2))), so it needs no explicit wrapping. The form is
common practice in binaural masking; the widths (6 dB, 0.5 rad) and the floor (0.1) were picked from a small
grid on the synthetic anechoic two-talker scenes of tests/separation. The mask relies on sources being sparse in
time and frequency (speech, alarms): on two fully overlapping noises it does worse than plain delay-and-sum.

The ideal ratio mask (oracle) is the Wiener-like |S|^2 / (|S|^2 + |N|^2) of the true target S and the rest N.
"""

from __future__ import annotations

import numpy as np

#: Standard deviation of the ILD match, dB.
ILD_WIDTH_DB = 6.0
#: Standard deviation of the IPD match, radians.
IPD_WIDTH = 0.5
#: Smallest gain the spatial mask applies (limits musical noise and target damage).
MASK_FLOOR = 0.1
_TINY = 1e-20


def spatial_mask(spec: np.ndarray, d: np.ndarray, ild_width_db: float = ILD_WIDTH_DB,
                 ipd_width: float = IPD_WIDTH, floor: float = MASK_FLOOR) -> np.ndarray:
    """Direction-informed mask from interaural level and phase differences.

    Parameters
    ----------
    spec : (2, F, T) ear spectra (left, right).
    d : (F, 2) steering vector of the target direction.

    Returns
    -------
    (F, T) real gains in [floor, 1].
    """
    left, right = spec[0], spec[1]
    pl, pr = left.real ** 2 + left.imag ** 2, right.real ** 2 + right.imag ** 2
    ild = 10 * np.log10((pl + _TINY) / (pr + _TINY))
    ild_expected = 10 * np.log10(np.abs(d[:, 0]) ** 2 / np.abs(d[:, 1]) ** 2)[:, None]
    cross = left * np.conj(right) * np.conj(d[:, 0] * np.conj(d[:, 1]))[:, None]
    cos_dipd = cross.real / (np.abs(cross) + _TINY)
    score = (ild - ild_expected) ** 2 / (2 * ild_width_db ** 2) + (1 - cos_dipd) / ipd_width ** 2
    return np.maximum(np.exp(-score), floor)


def ratio_mask(target: np.ndarray, rest: np.ndarray) -> np.ndarray:
    """Ideal ratio mask |S|^2 / (|S|^2 + |N|^2).

    Parameters
    ----------
    target, rest : (..., F, T) spectra of the target and of everything else.

    Returns
    -------
    (..., F, T) real gains in [0, 1] (0 where both are silent).
    """
    ps = target.real ** 2 + target.imag ** 2
    pn = rest.real ** 2 + rest.imag ** 2
    total = ps + pn
    return np.divide(ps, total, out=np.zeros_like(ps), where=total > 0)
