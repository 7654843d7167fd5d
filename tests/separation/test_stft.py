"""The sqrt-Hann STFT: perfect reconstruction, and agreement with scipy.signal.ShortTimeFFT."""

import numpy as np
import pytest
import scipy.signal as ss

from hearnav.errors import ConfigError
from hearnav.separation.stft import check_stft_settings, istft, n_frames, sqrt_hann, stft


@pytest.mark.parametrize("n", [1, 37, 511, 8000, 8001])
@pytest.mark.parametrize("n_fft, hop", [(512, 128), (512, 256), (256, 64), (512, 64)])
def test_perfect_reconstruction(n, n_fft, hop):
    # Common practice: sqrt-Hann analysis and synthesis with overlap-add normalised by the summed squared window
    # reconstructs exactly; here to 1e-6 for any length, output length == input length.
    x = np.random.default_rng(n + hop).standard_normal((2, n))
    spec = stft(x, n_fft, hop)
    assert spec.shape == (2, n_fft // 2 + 1, n_frames(n, n_fft, hop))
    y = istft(spec, n, n_fft, hop)
    assert y.shape == x.shape
    np.testing.assert_allclose(y, x, atol=1e-6)


@pytest.mark.parametrize("n", [256, 3000, 8000])
@pytest.mark.parametrize("hop", [64, 128, 256])
def test_matches_scipy_short_time_fft(n, hop):
    # Reference library scipy.signal.ShortTimeFFT (SciPy >= 1.12) with the same window, hop and
    # phase_shift=None (slice start as time origin) gives the same frames and the same inverse.
    x = np.random.default_rng(n).standard_normal(n)
    ref = ss.ShortTimeFFT(sqrt_hann(512), hop=hop, fs=16000, fft_mode="onesided", phase_shift=None)
    expected = ref.stft(x)
    np.testing.assert_allclose(stft(x, 512, hop), expected, atol=1e-10)
    np.testing.assert_allclose(istft(expected, n, 512, hop), ref.istft(expected, k1=n), atol=1e-10)


def test_sqrt_hann_squares_to_hann():
    # Common practice: the periodic Hann window 0.5 - 0.5 cos(2 pi k / N) (scipy.signal.get_window('hann')).
    np.testing.assert_allclose(sqrt_hann(512) ** 2, ss.get_window("hann", 512), atol=1e-12)


@pytest.mark.parametrize("n_fft, hop, text", [
    (512, 100, "hop must divide n_fft and be smaller than it, got hop=100 for n_fft=512"),
    (512, 512, "hop must divide n_fft"),
    (511, 1, "n_fft must be even, got 511"),
    (0, 128, "n_fft must be a positive integer, got 0"),
    (512, 128.0, "hop must be a positive integer, got 128.0"),
])
def test_bad_settings_raise(n_fft, hop, text):
    with pytest.raises(ConfigError, match=text):
        check_stft_settings(n_fft, hop)
