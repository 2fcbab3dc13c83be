"""Issue 3: spread, time-domain metrics and noise against sources outside the project.

Every stage here goes through the loader (small TOML in tmp_path) and the
per-stage pipeline (rcdoc.analysis.analyse.analyse_stage), so the numbers checked are
the ones the note and the JSON print. Each check names its source beside it:
the `uncertainties` package (first-order error propagation), scipy.signal
(step response), scipy.constants (Boltzmann constant), an independent
Fourier-series computation, and textbook first-order RC results.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants
from scipy import signal
from uncertainties import ufloat

from boards import analyse_one

R_OHM, C_F = 10e3, 10e-9          # RC = 100 µs, fc = 1591.55 Hz
RC_S = R_OHM * C_F


LOWPASS = """
[[stage]]
id = "lp"
title = "First-order low-pass"
kind = "rc-lowpass"
parts.r = {{ value = "10k", tolerance = "{tol_r}"{r_extra} }}
parts.c = {{ value = "10n", tolerance = "{tol_c}"{c_extra} }}
{extra}
"""


def lowpass(tol_r="1%", tol_c="2%", r_extra="", c_extra="", extra=""):
    return LOWPASS.format(tol_r=tol_r, tol_c=tol_c, r_extra=r_extra, c_extra=c_extra,
                          extra=extra)


# A narrow, coarse sweep keeps the 20 000-sample runs fast; the corner is refined
# by bisection, so the sweep's resolution does not limit its accuracy.
FAST_SWEEP = 'sweep = ["200 Hz", "20 kHz"]\npoints_per_decade = 10'


@pytest.fixture(scope="module", params=["uniform", "normal"])
def mc_corner(request, tmp_path_factory):
    dist = request.param
    res = analyse_one(tmp_path_factory.mktemp(dist), lowpass(),
                      f'samples = 20000\ndistribution = "{dist}"\n{FAST_SWEEP}')
    return dist, res.metric("corner")


@pytest.mark.slow
def test_mc_std_of_corner_agrees_with_uncertainties(mc_corner):
    dist, m = mc_corner
    # Standard deviation of each part: uniform over ±tol -> tol/√3; normal with the
    # tolerance as 3 sigma -> tol/3 (common practice, stated in project-format.md).
    k = math.sqrt(3.0) if dist == "uniform" else 3.0
    r = ufloat(R_OHM, R_OHM * 0.01 / k)
    c = ufloat(C_F, C_F * 0.02 / k)
    fc = 1 / (2 * math.pi * r * c)          # uncertainties: first-order propagation
    # Monte Carlo std at 20 000 samples: statistical error about 1/√(2N) = 0.5 %.
    assert np.std(m.samples) == pytest.approx(fc.std_dev, rel=0.03)
    assert np.mean(m.samples) == pytest.approx(fc.nominal_value, rel=2e-3)
    # Nominal: fc = 1/(2πRC) (textbook first-order result).
    assert m.nominal == pytest.approx(1 / (2 * math.pi * RC_S), rel=1e-6)


@pytest.mark.slow
def test_extremes_inside_and_near_the_tolerance_box(mc_corner):
    dist, m = mc_corner
    # Worst case at the box corners: fc = 1/(2πRC) with R and C both at their
    # low (highest fc) or both high (lowest fc) limits (textbook formula).
    lo = 1 / (2 * math.pi * R_OHM * 1.01 * C_F * 1.02)
    hi = 1 / (2 * math.pi * R_OHM * 0.99 * C_F * 0.98)
    assert m.wc[0] == pytest.approx(lo, rel=1e-6)
    assert m.wc[1] == pytest.approx(hi, rel=1e-6)
    assert m.samples.min() >= m.wc[0] * (1 - 1e-9)
    assert m.samples.max() <= m.wc[1] * (1 + 1e-9)
    if dist == "uniform":
        # 20 000 uniform draws come close to the corners (the sum of two uniform
        # deviations exceeds 95 % of its range with probability 0.3 %: ~60 samples).
        assert m.samples.min() - lo < 0.1 * (m.nominal - lo)
        assert hi - m.samples.max() < 0.1 * (hi - m.nominal)


def test_worst_case_box_includes_temperature_and_dielectric(tmp_path):
    # R: 1 % and +100 ppm/K; C: 5 % X7R. Over −10..+60 °C.
    res = analyse_one(tmp_path,
                      lowpass(tol_r="1%", tol_c="5%", r_extra=', tcr = "100 ppm/K"',
                              c_extra=', dielectric = "X7R"'),
                      f'samples = 2000\ntemperature = ["-10 °C", "60 °C"]\n{FAST_SWEEP}')
    m = res.metric("corner")
    # R extremes: tolerance times 1 + tcr·(T − 25 °C) at the hot and cold ends
    # (linear temperature coefficient, common practice).
    r_lo = R_OHM * 0.99 * (1 + 100e-6 * (-10 - 25))
    r_hi = R_OHM * 1.01 * (1 + 100e-6 * (60 - 25))
    # C: X7R is ±15 % over −55..+125 °C (EIA-198), which promises nothing tighter
    # inside the range: the full band applies at −10 °C and at +60 °C.
    c_lo = C_F * 0.95 * (1 - 0.15)
    c_hi = C_F * 1.05 * (1 + 0.15)
    assert m.wc[0] == pytest.approx(1 / (2 * math.pi * r_hi * c_hi), rel=1e-6)
    assert m.wc[1] == pytest.approx(1 / (2 * math.pi * r_lo * c_lo), rel=1e-6)
    assert np.all((m.samples >= m.wc[0]) & (m.samples <= m.wc[1]))


def test_sensitivities_of_first_order_corner_are_minus_one(tmp_path):
    res = analyse_one(tmp_path, lowpass(), f"samples = 200\n{FAST_SWEEP}")
    # fc = 1/(2πRC): ∂ln fc/∂ln R = ∂ln fc/∂ln C = −1 (textbook).
    s = res.metric("corner").sensitivity
    assert s["r"] == pytest.approx(-1.0, abs=1e-4)
    assert s["c"] == pytest.approx(-1.0, abs=1e-4)


# ---- time domain -----------------------------------------------------------

STEP_STAGE = lowpass(extra="""drive = { step = "3.3 V" }
[[stage.check]]
metric = "settling"
bits = 12
max = "1 s"
[[stage.check]]
metric = "settling"
bits = 16
max = "1 s"
""")


@pytest.fixture(scope="module")
def step_result(tmp_path_factory):
    return analyse_one(tmp_path_factory.mktemp("step"), STEP_STAGE, "samples = 200")


def _metric(res, name, detail=""):
    found = [m for m in res.metrics if m.name == name and m.detail == detail]
    assert len(found) == 1, [m.key for m in res.metrics]
    return found[0]


@pytest.mark.parametrize("bits, rounded", [(12, 9.01), (16, 11.78)])
def test_settling_to_half_an_lsb(step_result, bits, rounded):
    # First-order settling to half an LSB of an N-bit converter: t = RC·ln(2^(N+1))
    # (textbook; 12 bits -> 9.01 RC, 16 bits -> 11.78 RC).
    t = _metric(step_result, "settling", f"{bits} bits").nominal
    assert t / RC_S == pytest.approx(math.log(2 ** (bits + 1)), rel=2e-4)
    assert t / RC_S == pytest.approx(rounded, abs=0.005)


def test_settling_to_one_percent(step_result):
    # Within 1 %: t = RC·ln(100) (same textbook first-order decay).
    t = _metric(step_result, "settling", "within 1 %").nominal
    assert t == pytest.approx(RC_S * math.log(100), rel=2e-4)


def test_highpass_settling_after_a_step(tmp_path):
    # A first-order high-pass passes the step's edge, then decays as e^(−t/RC)
    # (textbook): within 1 % of the step after RC·ln 100, to 12 bits after RC·ln 2^13.
    stage = """
    [[stage]]
    id = "hp"
    title = "First-order high-pass"
    kind = "rc-highpass"
    drive = { step = "5 V" }
    parts.c = { value = "10n", tolerance = "1%" }
    parts.r = { value = "10k", tolerance = "1%" }
    [[stage.check]]
    metric = "settling"
    bits = 12
    max = "1 s"
    """
    res = analyse_one(tmp_path, stage)
    assert _metric(res, "settling", "within 1 %").nominal == pytest.approx(
        RC_S * math.log(100), rel=2e-4)
    assert _metric(res, "settling", "12 bits").nominal == pytest.approx(
        RC_S * math.log(2 ** 13), rel=2e-4)


def test_rise_time_is_rc_ln9(step_result):
    # 10-90 % rise time of a first-order step response: RC·ln 9 ≈ 2.197 RC (textbook).
    m = _metric(step_result, "rise_time")
    assert m.nominal == pytest.approx(RC_S * math.log(9), rel=1e-3)
    # The samples move with RC: the product R·C spans (0.99·0.98 .. 1.01·1.02)·RC.
    assert m.samples.min() >= RC_S * math.log(9) * 0.99 * 0.98 * (1 - 1e-3)
    assert m.samples.max() <= RC_S * math.log(9) * 1.01 * 1.02 * (1 + 1e-3)


def test_step_response_agrees_with_scipy(tmp_path):
    # Source resistance in series with R: τ = (Rs + R)·C; the step response of
    # 1/(sτ + 1) from scipy.signal.step is the reference.
    stage = lowpass(extra='source = "2.2 kohm"\ndrive = { step = "3.3 V" }')
    res = analyse_one(tmp_path, stage, "samples = 200")
    t, y = res.step.t_s, res.step.nominal
    tau = (2.2e3 + R_OHM) * C_F
    # The figure keeps a subset of the time grid; scipy's step needs a uniform grid,
    # so it runs on a fine one and is read at the kept instants.
    t_fine = np.linspace(0.0, t[-1], 20_001)
    _, y_fine = signal.step(([1.0], [tau, 1.0]), T=t_fine)
    y_ref = np.interp(t, t_fine, y_fine)
    assert t[-1] > 8 * tau                  # the grid covers the settling
    np.testing.assert_allclose(y, 3.3 * y_ref, atol=3.3 * 2e-4)
    # The spread band holds the nominal curve.
    assert np.all(res.step.min <= y + 1e-9) and np.all(res.step.max >= y - 1e-9)


def _pwm_ripple_fourier(amp, freq, duty, tau, harmonics=3000, points=2000):
    """Peak-to-peak steady-state output of 1/(1 + jωτ) driven by a PWM wave.

    Independent reference: the Fourier series of the rectangular wave,
    c_k = amp·(1 − e^(−j2πkD))/(j2πk), each harmonic scaled by H(jkω)
    (textbook Fourier analysis of a periodic input through a linear filter).
    """
    k = np.arange(1, harmonics + 1)
    ck = amp * (1 - np.exp(-2j * np.pi * k * duty)) / (2j * np.pi * k)
    hk = 1 / (1 + 2j * np.pi * k * freq * tau)
    # The grid holds both switching instants (duty·points is whole), where the
    # output turns; the series tail beyond 3000 harmonics is below 1e-4 of the ripple.
    t = np.linspace(0, 1 / freq, points, endpoint=False)
    phase = 2 * np.pi * freq * np.outer(t, k)
    a = ck * hk
    y = amp * duty + 2 * (np.cos(phase) @ a.real - np.sin(phase) @ a.imag)
    return y.max() - y.min()


def test_fourier_reference_matches_square_wave_closed_form():
    # The reference itself, for a 50 % square wave: peak-to-peak output of a
    # first-order low-pass is A·tanh(T/(4τ)) (textbook exponential charge/discharge).
    ref = _pwm_ripple_fourier(3.3, 5e3, 0.5, RC_S)
    assert ref == pytest.approx(3.3 * math.tanh(0.2e-3 / (4 * RC_S)), rel=3e-4)


@pytest.mark.slow
@pytest.mark.parametrize("duty", ["50%", "20%"])
def test_pwm_ripple_agrees_with_fourier_series(tmp_path, duty):
    stage = lowpass(extra=f'drive = {{ pwm = "3.3 V", frequency = "5 kHz", duty = "{duty}" }}')
    res = analyse_one(tmp_path, stage, "samples = 200")
    ripple = res.metric("ripple").nominal
    ref = _pwm_ripple_fourier(3.3, 5e3, float(duty[:-1]) / 100, RC_S)
    # 1000 points per period with the input linear between them round the switching
    # edges: about 0.1 % low here (period = 2 RC, the hardest case for that error).
    assert ripple == pytest.approx(ref, rel=2e-3)
    # Spread: the samples of the ripple sit inside its worst-case range.
    m = res.metric("ripple")
    assert np.all((m.samples >= m.wc[0] * (1 - 1e-6)) & (m.samples <= m.wc[1] * (1 + 1e-6)))


# ---- noise ------------------------------------------------------------------

@pytest.mark.parametrize("r", ["100 ohm", "10 kohm"])
def test_ktc_noise_on_1pf_at_300k(tmp_path, r):
    # kT/C: the noise of any resistor on 1 pF integrates to √(kT/C) = 64.4 µV at
    # 300 K (textbook thermal-noise result; k from scipy.constants), whatever R.
    # The metric integrates over the sweep, so the sweep reaches far above the
    # corner (≤ 1.6 GHz); it uses the hottest analysed temperature (26.85 °C = 300 K).
    stage = f"""
    [[stage]]
    id = "ktc"
    title = "Sampling capacitor"
    kind = "rc-lowpass"
    parts.r = {{ value = "{r}", tolerance = "1%" }}
    parts.c = {{ value = "1 pF", tolerance = "1%", dielectric = "C0G" }}
    """
    res = analyse_one(tmp_path, stage, 'samples = 20\ntemperature = ["-20 °C", "26.85 °C"]\n'
                                       'sweep = ["1 kHz", "10 THz"]')
    v = res.metric("noise").nominal
    assert v == pytest.approx(math.sqrt(scipy.constants.k * 300.0 / 1e-12), rel=2e-3)
    assert v == pytest.approx(64.4e-6, abs=0.1e-6)
    # √(kT/C) falls as C^(−1/2) and does not depend on R: sensitivities −0.5 and 0.
    s = res.metric("noise").sensitivity
    assert s["c"] == pytest.approx(-0.5, abs=1e-3)
    assert s["r"] == pytest.approx(0.0, abs=1e-3)


@pytest.mark.parametrize("q", [0.5, 5.0, 30.0, 300.0])
@pytest.mark.slow
def test_series_rlc_noise_is_kt_over_c_whatever_its_q(tmp_path, q):
    # Equipartition (textbook thermal-noise result): the voltage on the capacitor
    # of a series RLC, driven by its resistor's thermal noise, has a mean square
    # of kT/C whatever L and R are. With Q = √(L/C)/R up to 300 the resonance is
    # far narrower than the sweep's 50 points a decade: before the noise integral
    # added points around each resonant pole, Q = 30 came out 11 % high in rms.
    c, l = 10e-6, 9e-3
    r = math.sqrt(l / c) / q
    stage = f"""
    [[stage]]
    id = "rlc"
    title = "Series RLC"
    kind = "network"
    input = "in"
    output = "out"
    elements = [{{ part = "r", between = ["in", "a"] }}, {{ part = "l", between = ["a", "out"] }},
                {{ part = "c", between = ["out", "0"] }}]
    parts.r = {{ value = "{r!r} ohm", tolerance = "0.1%" }}
    parts.l = {{ value = "9 mH", tolerance = "0.1%" }}
    parts.c = {{ value = "10 uF", tolerance = "0.1%" }}
    """
    res = analyse_one(tmp_path, stage, 'samples = 20\ntemperature = ["26.85 °C", "26.85 °C"]')
    ref = math.sqrt(scipy.constants.k * 300.0 / c)
    # The sweep (3 decades either side) leaves out under 0.1 % of the power.
    assert res.metric("noise").nominal == pytest.approx(ref, rel=1e-3)
    assert np.all(np.abs(res.metric("noise").samples / ref - 1) < 3e-3)


# ---- frequency-domain metrics against textbook formulas ----------------------

def test_group_delay_and_input_impedance_of_rc_lowpass(tmp_path):
    f = 2e3
    stage = lowpass(extra=f"""load = {{ r = "47 kohm" }}
source = "1 kohm"
[[stage.check]]
metric = "group_delay"
at = "{f:g} Hz"
max = "1 s"
[[stage.check]]
metric = "input_impedance"
at = "{f:g} Hz"
min = "1 ohm"
""")
    res = analyse_one(tmp_path, stage, "samples = 200")
    w = 2 * math.pi * f
    # Group delay of a first-order low-pass 1/(1 + sτ): τ/(1 + (ωτ)²) (textbook).
    # Here the source and load change τ to Thevenin values: τ = (Rs + R)‖RL · C and
    # the DC gain to RL/(Rs + R + RL), which does not change the delay.
    r_th = (1e3 + R_OHM) * 47e3 / (1e3 + R_OHM + 47e3)
    tau = r_th * C_F
    assert res.metric("group_delay", f).nominal == pytest.approx(tau / (1 + (w * tau) ** 2),
                                                               rel=1e-5)
    # Input impedance: R in series with C ∥ RL; the source impedance is excluded
    # (metric definition). Impedance of series and parallel elements (textbook).
    zc = 1 / (1j * w * C_F)
    z = R_OHM + zc * 47e3 / (zc + 47e3)
    assert res.metric("input_impedance", f).nominal == pytest.approx(abs(z), rel=1e-9)


def test_gain_and_phase_at_marks_follow_first_order(tmp_path):
    # Worked example (open teaching material): 10 kΩ, 0.03 µF -> fc = 530.5 Hz;
    # 120 V in at 400 Hz gives about 95.8 V out. |H| = 1/√(1 + (f/fc)²),
    # phase −atan(f/fc) (textbook).
    stage = """
    [[stage]]
    id = "worked"
    title = "Worked example"
    kind = "rc-lowpass"
    marks = ["400 Hz"]
    parts.r = { value = "10k", tolerance = "1%" }
    parts.c = { value = "0.03 uF", tolerance = "1%" }
    """
    res = analyse_one(tmp_path, stage)
    fc = 1 / (2 * math.pi * 10e3 * 0.03e-6)
    assert res.metric("corner").nominal == pytest.approx(530.5, abs=0.05)
    gain = 10 ** (res.metric("gain", 400.0).nominal / 20)
    assert 120 * gain == pytest.approx(95.8, abs=0.05)
    assert res.metric("phase", 400.0).nominal == pytest.approx(
        -math.degrees(math.atan(400 / fc)), abs=1e-6)


def test_corner_does_not_depend_on_where_the_sweep_starts(tmp_path):
    # The −3 dB point is relative to the passband (DC) gain of a low-pass, not to
    # the gain at the first swept frequency (definition of the corner, textbook).
    res = analyse_one(tmp_path, lowpass(), 'samples = 50\nsweep = ["1 kHz", "1 MHz"]')
    assert res.metric("corner").nominal == pytest.approx(1 / (2 * math.pi * RC_S), rel=1e-6)
    assert res.metric("passband_gain").nominal == pytest.approx(0.0, abs=1e-9)
