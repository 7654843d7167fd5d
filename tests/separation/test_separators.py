"""The separator registry and the contract every separator keeps."""

import numpy as np
import pytest
from binaural_scenes import FS, far_field_image

from hearnav.errors import ConfigError, SeparatorError
from hearnav.separation import (
    SeparationContext,
    get_separator,
    register_separator,
    separator_names,
    si_sdr,
)
from hearnav.separation.registry import unregister_separator
from hearnav.separation.stft import istft, stft

BUILT_IN = ["delay-and-sum", "identity", "mvdr", "mwf", "oracle-mask", "spatial-mask"]


@pytest.fixture
def window():
    rng = np.random.default_rng(0)
    mix = rng.standard_normal((2, 8000))
    return mix, 0.5 * mix


def test_built_ins_are_registered():
    # Our registry: the six built-ins, sorted.
    assert separator_names() == BUILT_IN
    assert [get_separator(n).privileged for n in BUILT_IN] == [False, False, False, False, True, False]


@pytest.mark.parametrize("name", separator_names())
@pytest.mark.parametrize("n", [8000, 777, 1])
@pytest.mark.parametrize("dtype", [np.float64, np.float32])
def test_every_separator_returns_finite_float32_of_input_length(name, n, dtype):
    # Contract (hearnav.separation.registry): (2, n) in, (2, n) finite float32 out, for any length and dtype.
    rng = np.random.default_rng(n)
    mix = rng.standard_normal((2, n)).astype(dtype)
    ctx = SeparationContext(FS, 0.8, target_image=0.5 * mix)
    out = get_separator(name)(mix, ctx)
    assert out.shape == (2, n)
    assert out.dtype == np.float32
    assert np.all(np.isfinite(out))


@pytest.mark.parametrize("name", separator_names())
def test_every_separator_handles_silence(name):
    # Common practice: a silent window gives a silent (finite) estimate, not NaN.
    mix = np.zeros((2, 8000))
    out = get_separator(name)(mix, SeparationContext(FS, -1.0, target_image=mix))
    assert np.all(out == 0)


@pytest.mark.parametrize("name", ["delay-and-sum", "mvdr", "mwf", "spatial-mask"])
@pytest.mark.parametrize("az_deg", [-120, -30, 0, 45, 90, 170])
def test_steered_separators_pass_a_lone_target(name, az_deg):
    # Distortionless constraint w^H d = 1 (Capon 1969; delay-and-sum), output put back at each ear through d
    # (Hadad et al. 2016): a lone far-field source from the look direction comes out as its image at each ear.
    # It is not exact because per-bin weights only approximate the ear filters (0.1-0.4 ms delays against a
    # 512-sample frame) and the window edges miss samples; > 20 dB SI-SDR at each ear asserted.
    s = np.random.default_rng(az_deg + 500).standard_normal(12000)
    az = np.deg2rad(az_deg)
    ears = far_field_image(s, az)[:, 2000:10000]
    out = get_separator(name)(ears, SeparationContext(FS, az))
    assert min(si_sdr(out[e], ears[e]) for e in range(2)) > 20


def test_oracle_with_target_only_is_the_identity(window):
    # The ideal ratio mask is 1 wherever only the target is present (rest = 0), and the sqrt-Hann STFT at a
    # quarter-frame hop reconstructs perfectly (Griffin & Lim 1984 overlap-add): the mixture comes back.
    mix, _ = window
    ctx = SeparationContext(FS, 0.3, target_image=mix)
    np.testing.assert_allclose(get_separator("oracle-mask")(mix, ctx), get_separator("identity")(mix, ctx),
                               atol=1e-5)


@pytest.mark.parametrize("az", [0.5, -3.0])
def test_identity_is_the_mixture_at_each_ear(window, az):
    # Our documented rule: the input reference is the unprocessed mixture at each ear.
    mix, _ = window
    np.testing.assert_array_equal(get_separator("identity")(mix, SeparationContext(FS, az)), mix.astype(np.float32))


def test_oracle_mask_is_the_ideal_ratio_mask_at_each_ear():
    # The ideal ratio mask |S|^2 / (|S|^2 + |N|^2) (Narayanan & Wang, ICASSP 2013) of each ear's own target
    # and rest, written out here on this module's STFT: the oracle's output spectrum at each ear.
    rng = np.random.default_rng(9)
    target, rest = rng.standard_normal((2, 4000)), rng.standard_normal((2, 4000))
    ctx = SeparationContext(FS, 0.1, target_image=target)
    out = get_separator("oracle-mask")(target + rest, ctx)
    s, n = stft(target), stft(rest)
    mask = np.abs(s) ** 2 / (np.abs(s) ** 2 + np.abs(n) ** 2)
    np.testing.assert_allclose(out, istft(mask * (s + n), 4000), atol=1e-4)


def test_unknown_name_suggests_close_match():
    with pytest.raises(SeparatorError) as err:
        get_separator("mvrd")
    assert str(err.value) == "unknown separator 'mvrd' (expected one of the registered names); did you mean 'mvdr'?"


def test_unknown_name_lists_valid_names():
    with pytest.raises(SeparatorError) as err:
        get_separator("wiener")
    assert str(err.value) == ("unknown separator 'wiener' (expected one of the registered names); valid names: "
                              "delay-and-sum, identity, mvdr, mwf, oracle-mask, spatial-mask")


def test_oracle_without_target_image_raises(window):
    mix, _ = window
    with pytest.raises(SeparatorError) as err:
        get_separator("oracle-mask")(mix, SeparationContext(FS, 0.2))
    assert str(err.value) == ("separator 'oracle-mask' needs ctx.target_image (the target's true (2, n) early image "
                              "at the ears); pass it in the SeparationContext or pick a non-oracle separator")


def test_oracle_with_wrong_target_image_shape_raises(window):
    mix, _ = window
    with pytest.raises(SeparatorError, match=r"of the mixture's shape \(2, 8000\), got \(2, 10\)"):
        get_separator("oracle-mask")(mix, SeparationContext(FS, 0.2, target_image=np.zeros((2, 10))))


@pytest.mark.parametrize("mix, text", [
    (np.zeros((3, 100)), r"real \(2, n\) mixture with n >= 1 \(left ear, right ear\), got shape \(3, 100\)"),
    (np.zeros(100), r"got shape \(100,\)"),
    (np.zeros((2, 0)), r"got shape \(2, 0\)"),
    (np.full((2, 4), np.nan), "needs a finite mixture; got 8 NaN or infinite samples"),
])
def test_bad_mixture_raises(mix, text):
    with pytest.raises(SeparatorError, match=text):
        get_separator("mvdr")(mix, SeparationContext(FS, 0.0))


def test_context_must_be_a_separation_context(window):
    with pytest.raises(SeparatorError, match="needs a SeparationContext, got dict"):
        get_separator("identity")(window[0], {"fs": FS})


@pytest.mark.parametrize("kwargs, text", [
    (dict(fs=0, azimuth=0.0), "SeparationContext.fs must be positive, got 0"),
    (dict(fs=FS, azimuth=float("nan")), "SeparationContext.azimuth must be a finite number, got nan"),
    (dict(fs=FS, azimuth=0.0, hop=100), "hop must divide n_fft"),
    (dict(fs=FS, azimuth=0.0, target_image=np.zeros(5)), r"target_image must be a \(2, n\) array, got shape \(5,\)"),
])
def test_bad_context_raises(kwargs, text):
    with pytest.raises(ConfigError, match=text):
        SeparationContext(**kwargs)


@pytest.fixture
def scratch():
    names = []
    yield names
    for name in names:
        if name in separator_names():
            unregister_separator(name)


def test_only_privileged_separators_see_the_target_image(window, scratch):
    # Our registry hides ctx.target_image from separators not registered as privileged.
    mix, image = window
    seen = {}

    @register_separator("peek-plain")
    def plain(m, ctx):
        seen["plain"] = ctx.target_image
        return m

    def oracle(m, ctx):
        seen["oracle"] = ctx.target_image
        return m
    oracle.privileged = True  # declared on the function itself
    register_separator("peek-oracle", oracle)
    scratch += ["peek-plain", "peek-oracle"]

    ctx = SeparationContext(FS, 0.0, target_image=image)
    get_separator("peek-plain")(mix, ctx)
    get_separator("peek-oracle")(mix, ctx)
    assert seen["plain"] is None
    assert seen["oracle"] is image
    assert get_separator("peek-oracle").privileged and not get_separator("peek-plain").privileged


def test_registering_twice_or_badly_raises(scratch):
    register_separator("twice", lambda m, c: m[0])
    scratch.append("twice")
    with pytest.raises(SeparatorError, match="separator 'twice' is already registered"):
        register_separator("twice", lambda m, c: m[0])
    with pytest.raises(SeparatorError, match=r"separator name must be a lower-case letter, then lower-case letters, digits, .* \(got .Bad Name.\)"):
        register_separator("Bad Name", lambda m, c: m[0])
    with pytest.raises(SeparatorError, match="must be callable, got int"):
        register_separator("not-callable", 3)


def test_a_separator_breaking_the_contract_raises(window, scratch):
    register_separator("too-short", lambda m, c: m[:, :-1])
    scratch.append("too-short")
    with pytest.raises(SeparatorError, match=r"must return a finite \(2, 8000\) estimate \(the target at the left and "
                                             r"right ear\), got shape \(2, 7999\); return one row per ear$"):
        get_separator("too-short")(window[0], SeparationContext(FS, 0.0))


# --- sharing transforms through the context ---------------------------------------------------------------


def test_context_reuses_a_known_stft_only_for_its_own_signal():
    x = np.random.default_rng(5).standard_normal((2, 4000)).astype(np.float32)
    spec = stft(x)
    spec.flags.writeable = False
    ctx = SeparationContext(fs=16000, azimuth=0.2, known_stft=(x, spec))
    assert ctx.stft(x) is spec
    other = x.copy()
    assert ctx.stft(other) is not spec
    np.testing.assert_array_equal(ctx.stft(other), spec)


def test_known_stft_must_be_read_only_and_fit_the_signal():
    x = np.zeros((2, 4000), np.float32)
    with pytest.raises(ConfigError, match=r"known_stft must pair a signal with its read-only STFT of shape "
                                          r"\(2, 257, 35\), got shape \(2, 257, 35\) \(writeable\)"):
        SeparationContext(fs=16000, azimuth=0.0, known_stft=(x, stft(x)))
    short = stft(x[:, :1000])
    short.flags.writeable = False
    with pytest.raises(ConfigError, match=r"of shape \(2, 257, 35\), got shape \(2, 257, 11\)$"):
        SeparationContext(fs=16000, azimuth=0.0, known_stft=(x, short))


@pytest.mark.parametrize("name", [n for n in separator_names() if n != "identity"])
def test_built_ins_synthesise_through_the_context(name):
    # The inverse STFT (hearnav.separation.stft.istft) of the remembered spectrum is the returned estimate.
    rng = np.random.default_rng(6)
    x = rng.standard_normal((2, 4000)).astype(np.float32)
    ctx = SeparationContext(fs=16000, azimuth=0.4, target_image=0.5 * x)
    est = get_separator(name).fn(x, ctx)
    spec = ctx.spectrum_of(est)
    assert spec is not None and ctx.spectrum_of(est.copy()) is None
    np.testing.assert_allclose(istft(spec, 4000), est, atol=1e-5)


def test_context_returns_given_das_weights_and_checks_them():
    w = SeparationContext(fs=16000, azimuth=0.3).das_conjugate()
    assert SeparationContext(fs=16000, azimuth=0.3, das=w).das_conjugate() is w
    with pytest.raises(ConfigError, match=r"^SeparationContext.das must be read-only complex64 weights of shape "
                                          r"\(2, 257\) \(from das_conjugates\), got complex64 of shape \(2, 257\) "
                                          r"\(writeable\)$"):
        SeparationContext(fs=16000, azimuth=0.3, das=w.copy())
    with pytest.raises(ConfigError, match=r"got complex128 of shape \(257, 2\) \(writeable\)$"):
        SeparationContext(fs=16000, azimuth=0.3, das=np.zeros((257, 2), complex))
    with pytest.raises(ConfigError, match=r"got list of shape \(2, 257\)$"):
        SeparationContext(fs=16000, azimuth=0.3, das=[[0j] * 257] * 2)
