"""SI-SDR against Le Roux et al. (ICASSP 2019) and the reference libraries fast_bss_eval and torchmetrics."""

import fast_bss_eval
import numpy as np
import pytest
import torch
from torchmetrics.functional.audio import (
    scale_invariant_signal_distortion_ratio as tm_si_sdr,
)

from hearnav.errors import ConfigError
from hearnav.separation import si_sdr, si_sdr_batch
from hearnav.separation.metrics import si_sdr_unchecked, si_sdrs_unchecked


def _pair(seed, n=4000):
    rng = np.random.default_rng(seed)
    ref = rng.standard_normal(n) + 0.3  # a DC offset, so zero_mean matters
    est = 0.7 * ref + rng.standard_normal(n) * rng.uniform(0.1, 2.0) + rng.uniform(-1, 1)
    return est, ref


@pytest.mark.parametrize("zero_mean", [False, True])
@pytest.mark.parametrize("seed", range(5))
def test_matches_fast_bss_eval(seed, zero_mean):
    # Reference library fast_bss_eval 0.1.4 (PyPI): si_sdr(ref, est) takes the reference FIRST (bss_eval order).
    est, ref = _pair(seed)
    expected = float(fast_bss_eval.si_sdr(ref[None], est[None], zero_mean=zero_mean)[0])
    assert si_sdr(est, ref, zero_mean=zero_mean) == pytest.approx(expected, abs=1e-4)


@pytest.mark.parametrize("zero_mean", [False, True])
@pytest.mark.parametrize("seed", range(5))
def test_matches_torchmetrics(seed, zero_mean):
    # Reference library torchmetrics (PyPI): scale_invariant_signal_distortion_ratio(preds, target), ESTIMATE first.
    est, ref = _pair(seed)
    expected = float(tm_si_sdr(torch.from_numpy(est), torch.from_numpy(ref), zero_mean=zero_mean))
    assert si_sdr(est, ref, zero_mean=zero_mean) == pytest.approx(expected, abs=1e-4)


@pytest.mark.parametrize("zero_mean, expected", [(False, 18.4030), (True, 15.0918)])
def test_torchmetrics_worked_example(zero_mean, expected):
    # torchmetrics docs example: target [3, -0.5, 2, 7], preds [2.5, 0, 2, 8] -> 18.4030 dB (default
    # zero_mean=False); 15.0918 dB with zero_mean=True (torchmetrics 1.9.0 output for the same example).
    ref = np.array([3.0, -0.5, 2.0, 7.0])
    est = np.array([2.5, 0.0, 2.0, 8.0])
    assert si_sdr(est, ref, zero_mean=zero_mean) == pytest.approx(expected, abs=1e-3)


@pytest.mark.parametrize("scale", [1e-3, 0.5, 7.0, -2.0])
def test_invariant_to_estimate_scale(scale):
    # Le Roux et al. 2019: the optimal alpha makes SI-SDR invariant to any non-zero rescaling of the estimate.
    est, ref = _pair(11)
    assert si_sdr(scale * est, ref) == pytest.approx(si_sdr(est, ref), abs=1e-9)


@pytest.mark.parametrize("snr_db", [-10.0, 0.0, 13.0, 40.0])
def test_orthogonal_noise_gives_energy_ratio(snr_db):
    # Le Roux et al. 2019: est = ref + n with <n, ref> = 0 gives alpha = 1, so SI-SDR = 10 log10(|ref|^2 / |n|^2).
    rng = np.random.default_rng(3)
    ref = rng.standard_normal(2000)
    noise = rng.standard_normal(2000)
    noise -= noise @ ref / (ref @ ref) * ref  # Gram-Schmidt: orthogonal to ref
    noise *= np.sqrt(ref @ ref / (noise @ noise) / 10 ** (snr_db / 10))
    expected = 10 * np.log10((ref @ ref) / (noise @ noise))
    assert expected == pytest.approx(snr_db, abs=1e-9)
    assert si_sdr(ref + noise, ref) == pytest.approx(expected, abs=1e-9)


def test_clipped_at_plus_and_minus_100_db():
    # Our documented clip (hearnav.separation.metrics.CLIP_DB): perfect -> +100 dB, orthogonal or silent -> -100 dB.
    ref = np.array([1.0, -2.0, 0.5, 3.0])
    ortho = np.array([2.0, 1.0, 0.0, 0.0])  # <ortho, ref> = 0
    assert si_sdr(ref, ref) == 100.0
    assert si_sdr(3 * ref, ref) == 100.0
    assert si_sdr(ortho, ref) == -100.0
    assert si_sdr(np.zeros(4), ref) == -100.0


def test_batch_matches_single():
    # Common practice: the batched form must agree with the single-pair form element by element.
    pairs = [_pair(s, 500) for s in range(6)]
    est = np.stack([p[0] for p in pairs]).reshape(2, 3, 500)
    ref = np.stack([p[1] for p in pairs]).reshape(2, 3, 500)
    out = si_sdr_batch(est, ref)
    assert out.shape == (2, 3)
    np.testing.assert_allclose(out.ravel(), [si_sdr(e, r) for e, r in pairs], atol=1e-12)


def test_mismatched_shapes_raise():
    with pytest.raises(ConfigError, match=r"got estimate \(5,\) and reference \(4,\)"):
        si_sdr(np.ones(5), np.ones(4))


def test_two_dimensional_input_raises_for_single():
    with pytest.raises(ConfigError, match=r"non-empty \(n,\) arrays; got shape \(2, 4\)"):
        si_sdr(np.ones((2, 4)), np.ones((2, 4)))


def test_empty_input_raises():
    with pytest.raises(ConfigError, match=r"got shape \(0,\)"):
        si_sdr(np.zeros(0), np.zeros(0))


def test_non_finite_input_raises():
    with pytest.raises(ConfigError, match="the estimate has 1 NaN or infinite values"):
        si_sdr(np.array([1.0, np.nan, 2.0]), np.ones(3))
    with pytest.raises(ConfigError, match="the reference has 1 NaN or infinite values"):
        si_sdr(np.ones(3), np.array([1.0, np.inf, 2.0]))


def test_silent_reference_raises():
    with pytest.raises(ConfigError, match=r"silent \(all-zero\) reference"):
        si_sdr(np.ones(3), np.zeros(3))
    with pytest.raises(ConfigError, match="after removing the mean"):
        si_sdr(np.array([1.0, 2.0, 0.0]), np.full(3, 2.0), zero_mean=True)


@pytest.mark.parametrize("seed", range(5))
def test_unchecked_hot_path_matches_fast_bss_eval(seed):
    # Reference library fast_bss_eval (PyPI), reference first; the environment scores every step with this form.
    est, ref = _pair(seed)
    expected = float(fast_bss_eval.si_sdr(ref[None], est[None], zero_mean=False)[0])
    assert si_sdr_unchecked(est.astype(np.float32), ref.astype(np.float32)) == pytest.approx(expected, abs=1e-4)
    assert si_sdr_unchecked(est, ref) == pytest.approx(si_sdr(est, ref), abs=1e-9)


@pytest.mark.parametrize("scale, expected", [(0.0, -100.0), (2.5, 100.0)])
def test_unchecked_hot_path_clips_like_si_sdr(scale, expected):
    # Clipping of this module's docstring: a silent estimate gives -100 dB, a scaled copy +100 dB.
    ref = np.random.default_rng(0).standard_normal(512)
    assert si_sdr_unchecked(scale * ref, ref) == si_sdr(scale * ref, ref) == expected


def test_unchecked_scores_of_several_estimates_and_a_silent_reference():
    # Reference library fast_bss_eval (PyPI), reference first: each estimate scored against the one reference.
    est, ref = _pair(11)
    other = est[::-1].copy()
    want = [float(fast_bss_eval.si_sdr(ref[None], e[None], zero_mean=False)[0]) for e in (est, other)]
    assert si_sdrs_unchecked(est, other, reference=ref) == pytest.approx(want, abs=1e-6)
    assert si_sdrs_unchecked(est, reference=np.zeros_like(ref), silent=1e-12) is None
    assert np.isnan(si_sdrs_unchecked(np.full_like(est, np.nan), reference=ref)[0])  # a NaN sample gives a NaN score
