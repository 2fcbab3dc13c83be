"""Part models: dielectric codes, tolerance draws, temperature and DC-bias factors."""

from __future__ import annotations

import numpy as np
import pytest

from rcdoc.errors import ProjectError
from rcdoc.input.model import Analysis, Part
from rcdoc.input.parts import (
    Dielectric,
    assumptions,
    check_temperature_range,
    decode_dielectric,
    default_tolerance,
    extremes,
    nominal_value,
    sample_values,
)

N = 20_000


def _temps(analysis: Analysis, n: int = N, seed: int = 99) -> np.ndarray:
    lo, hi = analysis.temperature_c
    return np.random.default_rng(seed).uniform(lo, hi, n)


def _cap(**kw) -> Part:
    base = dict(role="c", kind="C", value=10e-9, ref="C1", tol_plus=0.1, tol_minus=0.1,
                path="stage[1].parts.c")
    base.update(kw)
    return Part(**base)


def _res(**kw) -> Part:
    base = dict(role="r", kind="R", value=4.7e3, ref="R1", tol_plus=0.05, tol_minus=0.05,
                path="stage[1].parts.r")
    base.update(kw)
    return Part(**base)


# --- dielectric codes --------------------------------------------------------

@pytest.mark.parametrize(
    "code, low_c, high_c, plus, minus",
    [
        ("X7R", -55.0, 125.0, 0.15, 0.15),   # EIA-198: X −55, 7 +125, R ±15 %
        ("X5R", -55.0, 85.0, 0.15, 0.15),    # EIA-198: X −55, 5 +85, R ±15 %
        ("Y5V", -30.0, 85.0, 0.22, 0.82),    # EIA-198: Y −30, 5 +85, V +22/−82 %
        ("Z5U", 10.0, 85.0, 0.22, 0.56),     # EIA-198: Z +10, 5 +85, U +22/−56 %
        ("X7S", -55.0, 125.0, 0.22, 0.22),   # EIA-198: X −55, 7 +125, S ±22 %
        ("X6S", -55.0, 105.0, 0.22, 0.22),   # EIA-198: X −55, 6 +105, S ±22 %
        ("X8R", -55.0, 150.0, 0.15, 0.15),   # EIA-198: X −55, 8 +150, R ±15 %
        ("Y5T", -30.0, 85.0, 0.22, 0.33),    # EIA-198: T +22/−33 %
        ("X2A", -55.0, 45.0, 0.01, 0.01),    # EIA-198: 2 +45, A ±1.0 %
        ("Z9F", 10.0, 200.0, 0.075, 0.075),  # EIA-198: 9 +200, F ±7.5 %
    ],
)
def test_decode_class_ii(code, low_c, high_c, plus, minus):
    d = decode_dielectric(code)
    assert d.family == "class-2"
    assert d.code == code
    assert (d.rated_low_c, d.rated_high_c) == (low_c, high_c)
    assert (d.band_plus, d.band_minus) == pytest.approx((plus, minus))


@pytest.mark.parametrize("code", ["C0G", "NP0", "c0g", "np0"])
def test_decode_class_i(code):
    # EIA-198 class I: C0G (also written NP0) is 0 ± 30 ppm/K.
    d = decode_dielectric(code)
    assert d.family == "class-1"
    assert d.code == "C0G"
    assert d.tc_ppm == 0.0
    assert d.tc_spread_ppm == 30.0


def test_decode_film_and_electrolytic():
    # Common practice: polypropylene about −200 ppm/K, polyester about +400 ppm/K.
    assert decode_dielectric("film-pp").tc_ppm == -200.0
    assert decode_dielectric("film-pet").tc_ppm == 400.0
    e = decode_dielectric("electrolytic")
    assert e.family == "electrolytic" and e.tc_ppm is None and e.rated_low_c is None
    assert isinstance(e, Dielectric)


@pytest.mark.parametrize("code", ["X7Q", "W7R", "X3R", "X7", "X7RR", "mica", "", "U2J"])
def test_unknown_dielectric_names_path(code):
    with pytest.raises(ProjectError) as err:
        decode_dielectric(code, path="stage[2].parts.c.dielectric")
    assert err.value.path == "stage[2].parts.c.dielectric"


def test_temperature_range_outside_rating_is_an_error():
    # EIA-198: Z5U is rated +10 to +85 °C; X7R −55 to +125 °C.
    z5u = decode_dielectric("Z5U")
    with pytest.raises(ProjectError) as err:
        check_temperature_range(z5u, -20.0, 60.0, "stage[1].parts.c.dielectric")
    assert err.value.path == "stage[1].parts.c.dielectric"
    with pytest.raises(ProjectError):
        check_temperature_range(decode_dielectric("X7R"), -40.0, 130.0, "p")
    check_temperature_range(decode_dielectric("X7R"), -55.0, 125.0, "p")  # edges are inside
    check_temperature_range(decode_dielectric("electrolytic"), -60.0, 150.0, "p")  # no rating in the code


def test_sample_values_checks_the_range():
    # EIA-198: X5R is rated up to +85 °C.
    a = Analysis(temperature_c=(0.0, 105.0))
    with pytest.raises(ProjectError) as err:
        sample_values(_cap(dielectric="X5R"), a, np.random.default_rng(1), _temps(a, 10))
    assert err.value.path == "stage[1].parts.c.dielectric"


# --- tolerance draws ----------------------------------------------------------

def test_uniform_stays_in_box_and_reaches_both_ends():
    # Common practice: a uniform tolerance spreads over the whole ±5 % box.
    a = Analysis(distribution="uniform")
    s = sample_values(_res(), a, np.random.default_rng(3), _temps(a))
    assert s.shape == (N,)
    lo, hi = 4.7e3 * 0.95, 4.7e3 * 1.05
    assert s.min() >= lo and s.max() <= hi
    width = hi - lo
    assert s.min() - lo < 0.01 * width
    assert hi - s.max() < 0.01 * width


def test_normal_std_is_a_third_of_tolerance():
    # Common practice: tolerance taken as 3 sigma. Clipping the 0.27 % of draws beyond
    # 3 sigma onto the limits shrinks the std by about 0.25 % (normal distribution),
    # well inside the 4 % allowed.
    a = Analysis(distribution="normal")
    s = sample_values(_res(tol_plus=0.01, tol_minus=0.01), a, np.random.default_rng(4), _temps(a))
    dev = s / 4.7e3 - 1
    assert np.std(dev) == pytest.approx(0.01 / 3, rel=0.04)
    assert abs(np.mean(dev)) < 0.01 / 3 / np.sqrt(N) * 5
    assert dev.min() >= -0.01 - 1e-12 and dev.max() <= 0.01 + 1e-12


@pytest.mark.parametrize("distribution", ["uniform", "normal"])
def test_asymmetric_tolerance_z(distribution):
    # IEC 60062 letter Z: +80 %/−20 %.
    a = Analysis(distribution=distribution)
    part = _cap(tol_plus=0.8, tol_minus=0.2, dielectric="electrolytic", value=100e-6)
    s = sample_values(part, a, np.random.default_rng(5), _temps(a))
    dev = s / 100e-6 - 1
    assert dev.min() >= -0.2 - 1e-12 and dev.max() <= 0.8 + 1e-12
    if distribution == "uniform":
        # Mean of U(−0.2, 0.8) is +0.3 (uniform distribution).
        assert np.mean(dev) == pytest.approx(0.3, abs=0.01)
        assert dev.min() < -0.19 and dev.max() > 0.79
    else:
        # Split normal: sigma 0.8/3 above, 0.2/3 below the marked value.
        above, below = dev[dev > 0], dev[dev < 0]
        assert np.sqrt(np.mean(above**2)) == pytest.approx(0.8 / 3, rel=0.05)
        assert np.sqrt(np.mean(below**2)) == pytest.approx(0.2 / 3, rel=0.05)
    lo, hi = extremes(part, a)
    assert (lo, hi) == pytest.approx((80e-6, 180e-6))


def test_reproducible_with_same_seed():
    a = Analysis(distribution="normal", temperature_c=(-40.0, 85.0))
    part = _cap(dielectric="X7R")
    t = _temps(a, 500)
    s1 = sample_values(part, a, np.random.default_rng(123), t)
    s2 = sample_values(part, a, np.random.default_rng(123), t)
    s3 = sample_values(part, a, np.random.default_rng(124), t)
    assert np.array_equal(s1, s2)
    assert not np.array_equal(s1, s3)


def test_unknown_distribution_is_an_error():
    a = Analysis(distribution="triangular")
    with pytest.raises(ProjectError) as err:
        sample_values(_res(), a, np.random.default_rng(1), np.full(4, 25.0))
    assert err.value.path == "analysis.distribution"


# --- temperature ----------------------------------------------------------------

def test_tcr_shift_at_125c():
    # Linear TCR (textbook): 100 ppm/K × (125 − 25) K = +1 %.
    a = Analysis(temperature_c=(125.0, 125.0))
    part = _res(tol_plus=0.0, tol_minus=0.0, tcr_ppm=100.0)
    s = sample_values(part, a, np.random.default_rng(1), np.full(8, 125.0))
    assert s == pytest.approx(np.full(8, 4.7e3 * 1.01), rel=1e-12)
    assert extremes(part, a) == pytest.approx((4.7e3 * 1.01, 4.7e3 * 1.01))


def test_film_pp_shift_at_minus_25c():
    # Common practice −200 ppm/K: at −25 °C (50 K below 25 °C) the value rises 1 %.
    a = Analysis(temperature_c=(-25.0, -25.0))
    part = _cap(tol_plus=0.0, tol_minus=0.0, dielectric="film-pp")
    s = sample_values(part, a, np.random.default_rng(1), np.full(4, -25.0))
    assert s == pytest.approx(np.full(4, 10e-9 * 1.01), rel=1e-12)


def test_c0g_stays_within_30ppm():
    # EIA-198 C0G: 0 ± 30 ppm/K, so at 125 °C within ±0.3 %.
    a = Analysis(temperature_c=(125.0, 125.0))
    part = _cap(tol_plus=0.0, tol_minus=0.0, dielectric="C0G")
    s = sample_values(part, a, np.random.default_rng(2), np.full(N, 125.0)) / 10e-9 - 1
    assert s.min() >= -0.003 - 1e-12 and s.max() <= 0.003 + 1e-12
    assert s.min() < -0.0029 and s.max() > 0.0029
    assert extremes(part, a) == pytest.approx((10e-9 * 0.997, 10e-9 * 1.003))


def test_class_ii_takes_the_full_band_anywhere_inside_the_range():
    # EIA-198: X7R is ±15 % over −55..+125 °C and promises nothing tighter inside
    # that range, so at 75 °C (and at 30 °C) the full ±15 % is possible.
    part = _cap(tol_plus=0.0, tol_minus=0.0, dielectric="X7R")
    for t in (125.0, 75.0, 30.0, -10.0):
        a = Analysis(temperature_c=(t, t))
        s = sample_values(part, a, np.random.default_rng(6), np.full(N, t)) / 10e-9 - 1
        assert s.min() >= -0.15 - 1e-12 and s.max() <= 0.15 + 1e-12
        assert s.min() < -0.149 and s.max() > 0.149
        assert extremes(part, a) == pytest.approx((10e-9 * 0.85, 10e-9 * 1.15))
    # The range 0..70 °C of the issue: ±15 % (EIA-198), not a share of it.
    assert extremes(part, Analysis(temperature_c=(0.0, 70.0))) == \
        pytest.approx((10e-9 * 0.85, 10e-9 * 1.15))
    # At 25 °C, the reference of EIA-198's change, a class II part is at its marked value.
    ref = Analysis()
    s = sample_values(part, ref, np.random.default_rng(6), np.full(10, 25.0))
    assert s == pytest.approx(np.full(10, 10e-9), rel=1e-12)
    assert extremes(part, ref) == pytest.approx((10e-9, 10e-9))


def test_class_ii_default_is_said_in_the_assumptions():
    part = _cap(dielectric="X7R")
    text = " ".join(assumptions(part, Analysis(temperature_c=(0.0, 70.0))))
    assert "EIA-198" in text and "full band" in text and "−15 % to +15 %" in text


def test_class_ii_measured_point_narrows_the_band():
    # EIA-198 X7R band ±15 %; a stated point −8 % at 85 °C gives the documented
    # model: change = −8 % · |T − 25 °C| / 60 K, bounded by the band.
    part = _cap(tol_plus=0.0, tol_minus=0.0, dielectric="X7R", temperature_change=(85.0, -0.08))
    t = np.array([-55.0, 0.0, 25.0, 55.0, 85.0, 125.0])
    a = Analysis(temperature_c=(-55.0, 125.0))
    s = sample_values(part, a, np.random.default_rng(3), t) / 10e-9 - 1
    expect = np.clip(-0.08 * np.abs(t - 25.0) / 60.0, -0.15, 0.15)
    assert s == pytest.approx(expect, abs=1e-12)
    assert s[-1] == pytest.approx(-0.1333333333, rel=1e-9)       # inside the band, unclipped
    narrow = Analysis(temperature_c=(0.0, 70.0))
    assert extremes(part, narrow) == pytest.approx((10e-9 * (1 - 0.08 * 45 / 60), 10e-9))
    text = " ".join(assumptions(part, narrow))
    assert "Measured point" in text and "−8 % at +85 °C" in text
    # A steeper point is still bounded by the code's band (EIA-198 Y5V: +22/−82 %).
    y5v = _cap(tol_plus=0.0, tol_minus=0.0, dielectric="Y5V", temperature_change=(35.0, -0.5))
    a = Analysis(temperature_c=(-30.0, 85.0))
    s = sample_values(y5v, a, np.random.default_rng(3), np.array([85.0])) / 10e-9 - 1
    assert s == pytest.approx([-0.82])


def test_y5v_asymmetric_band_cold_edge():
    # EIA-198 Y5V: +22/−82 % at the rated edges, cold edge −30 °C.
    part = _cap(tol_plus=0.0, tol_minus=0.0, dielectric="Y5V")
    a = Analysis(temperature_c=(-30.0, -30.0))
    s = sample_values(part, a, np.random.default_rng(8), np.full(N, -30.0)) / 10e-9 - 1
    assert s.min() >= -0.82 - 1e-12 and s.max() <= 0.22 + 1e-12
    assert s.min() < -0.81 and s.max() > 0.21


def test_shared_temperature_per_sample_is_used():
    # Linear TCR (textbook): each sample follows its own temperature.
    a = Analysis(temperature_c=(-40.0, 125.0))
    t = _temps(a, 1000)
    part = _res(tol_plus=0.0, tol_minus=0.0, tcr_ppm=-250.0)
    s = sample_values(part, a, np.random.default_rng(1), t)
    assert s == pytest.approx(4.7e3 * (1 - 250e-6 * (t - 25.0)), rel=1e-12)


@pytest.mark.parametrize("dielectric", ["X7R", "Y5V", "C0G", "film-pet", None])
def test_samples_within_extremes(dielectric):
    a = Analysis(distribution="uniform", temperature_c=(-20.0, 70.0))
    part = _cap(dielectric=dielectric, dc_bias=(16.0, -0.3), bias_v=5.0, tol_plus=0.2, tol_minus=0.1)
    lo, hi = extremes(part, a)
    s = sample_values(part, a, np.random.default_rng(9), _temps(a))
    assert lo <= s.min() and s.max() <= hi
    # The corners are reached closely by 20 000 uniform samples.
    assert s.min() - lo < 0.05 * (hi - lo) and hi - s.max() < 0.05 * (hi - lo)


def test_rng_stream_does_not_depend_on_temperature_range():
    # Tolerance draws of a later part are the same whatever the temperature range.
    r2 = _res()
    for analysis in (Analysis(), Analysis(temperature_c=(-40.0, 85.0))):
        rng = np.random.default_rng(21)
        t = _temps(analysis, 100)
        sample_values(_cap(dielectric="X7R"), analysis, rng, t)
        sample_values(_cap(dielectric="C0G"), analysis, rng, t)
        got = sample_values(r2, Analysis(), rng, np.full(100, 25.0))
        if analysis == Analysis():
            first = got
    assert np.array_equal(first, got)


# --- DC bias ----------------------------------------------------------------------

def test_dc_bias_at_data_point_equals_one_plus_change():
    # Model definition checked at its anchor: factor = 1 + change at the measured voltage.
    part = _cap(dielectric="X7R", dc_bias=(12.0, -0.4), bias_v=12.0, tol_plus=0.0, tol_minus=0.0)
    assert nominal_value(part, Analysis()) == pytest.approx(10e-9 * 0.6)
    s = sample_values(part, Analysis(), np.random.default_rng(1), np.full(5, 25.0))
    assert s == pytest.approx(np.full(5, 10e-9 * 0.6), rel=1e-12)


def test_dc_bias_square_law_and_floor():
    # Assumption (one-point square law): half the voltage gives a quarter of the loss.
    half = _cap(dielectric="X5R", dc_bias=(12.0, -0.4), bias_v=6.0)
    assert nominal_value(half, Analysis()) == pytest.approx(10e-9 * 0.9)
    # Negative bias (polarity) loses the same.
    assert nominal_value(_cap(dielectric="X5R", dc_bias=(12.0, -0.4), bias_v=-6.0), Analysis()) \
        == pytest.approx(10e-9 * 0.9)
    # Far beyond the data point the factor is clipped at 0.1.
    far = _cap(dielectric="X5R", dc_bias=(12.0, -0.4), bias_v=48.0)
    assert nominal_value(far, Analysis()) == pytest.approx(10e-9 * 0.1)


def test_no_bias_no_loss():
    a = Analysis()
    assert nominal_value(_cap(dielectric="X7R", dc_bias=(12.0, -0.4)), a) == pytest.approx(10e-9)
    assert nominal_value(_cap(dielectric="X7R", bias_v=12.0), a) == pytest.approx(10e-9)


def test_bad_dc_bias_point_names_path():
    part = _cap(dielectric="X7R", dc_bias=(0.0, -0.4), bias_v=5.0)
    with pytest.raises(ProjectError) as err:
        nominal_value(part, Analysis())
    assert err.value.path == "stage[1].parts.c.dc_bias.at"


# --- defaults and sentences ----------------------------------------------------------

def test_default_tolerance():
    # project-format.md: default 5 % for resistors, 10 % for capacitors and inductors.
    assert default_tolerance("R") == (0.05, 0.05)
    assert default_tolerance("C") == (0.10, 0.10)
    assert default_tolerance("L") == (0.10, 0.10)
    with pytest.raises(ProjectError):
        default_tolerance("Q")


def test_assumptions_mention_the_models():
    a = Analysis(distribution="normal", temperature_c=(-20.0, 75.0))
    part = _cap(dielectric="X7R", dc_bias=(12.0, -0.4), bias_v=6.0)
    text = " ".join(assumptions(part, a))
    assert "3-sigma" in text
    assert "X7R" in text and "assumption" in text
    # EIA-198 X7R: the full ±15 % band anywhere in −55..+125 °C, so over −20..+75 °C too.
    assert "from \u221220 °C to +75 °C: \u221215 % to +15 %" in text
    assert "square" in text and "\u221210 %" in text
    r_text = " ".join(assumptions(_res(), a))
    assert "no temperature coefficient" in r_text
    e_text = " ".join(assumptions(_cap(dielectric="electrolytic"), a))
    assert "no temperature model" in e_text
