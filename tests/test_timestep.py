"""Time responses that do not depend on the step size, the pole spread or the batch.

Stiff networks (a fast pole 1e9 times the slow one), capacitor loops through
the source (a high-pass with a load capacitance), second-order stages and PWM
steady states against closed forms and scipy.signal; and a row's numbers the
same whatever the number of samples and the chunking.
"""

import math

import numpy as np
import pytest
from scipy import signal

from rcdoc.analysis import spread

from rcdoc.analysis import engine
from rcdoc.analysis.network import Element, Network

from boards import analyse_one


def _nominal(result, name):
    return next(m for m in result.metrics if m.name == name).nominal


def _metric(result, name):
    return next(m for m in result.metrics if m.name == name)


def _highpass_stage(load_c: str, samples: int = 200) -> str:
    return f"""
        [[stage]]
        id = "hp"
        title = "High-pass with a load"
        kind = "rc-highpass"
        load = {{ c = "{load_c}" }}
        drive = {{ step = "1 V" }}
        parts.c = {{ value = "100 nF", tolerance = "5%", dielectric = "C0G" }}
        parts.r = {{ value = "10k", tolerance = "1%" }}
        """


@pytest.mark.parametrize("load_c,c_l", [("1 pF", 1e-12), ("22 pF", 22e-12)])
def test_highpass_with_load_settles_in_tau_ln100(tmp_path, load_c, c_l):
    res = analyse_one(tmp_path, _highpass_stage(load_c))
    # Source: textbook. Series C into shunt R ‖ C_L, driven by an ideal step: the
    # capacitive divider jumps to C/(C + C_L) at once (charge conservation), then
    # decays as e^(−t/τ) with τ = R(C + C_L); the high-frequency passband gain is
    # the same C/(C + C_L), so the response is within 1 % of the passed step after
    # τ·ln(100).
    tau = 10e3 * (100e-9 + c_l)
    assert _nominal(res, "settling") == pytest.approx(tau * math.log(100), rel=1e-4)


def test_highpass_nominal_does_not_change_with_samples(tmp_path):
    one = analyse_one(tmp_path, _highpass_stage("22 pF"), analysis="samples = 1", name="a")
    many = analyse_one(tmp_path, _highpass_stage("22 pF"), analysis="samples = 400", name="b")
    # Source: common practice, a sample's result must not depend on the other samples.
    assert len(one.metrics) == len(many.metrics)
    for m1, m2 in zip(one.metrics, many.metrics):
        assert m1.key == m2.key
        assert m1.nominal == pytest.approx(m2.nominal, rel=1e-12, abs=1e-300), m1.key
    # The Monte Carlo rows really differ (otherwise the comparison proves little).
    s = _metric(many, "settling").samples
    assert np.ptp(s) > 1e-3 * np.mean(s)


@pytest.mark.slow
def test_samples_do_not_change_with_chunking(tmp_path, monkeypatch):
    stage = _highpass_stage("22 pF")
    whole = analyse_one(tmp_path, stage, analysis="samples = 50", name="a")
    monkeypatch.setattr(spread, "CHUNK_ROWS", 7)
    split = analyse_one(tmp_path, stage, analysis="samples = 50", name="b")
    # Source: common practice, a sample's result must not depend on the chunk it is solved in.
    for m1, m2 in zip(whole.metrics, split.metrics):
        np.testing.assert_allclose(m2.samples, m1.samples, rtol=1e-12, atol=0)


def _quadratic_roots(a: float, b: float, c: float) -> tuple[float, float]:
    """Roots of a·s² + b·s + c without cancellation (textbook: q = −(b + sign(b)√D)/2)."""
    q = -0.5 * (b + math.copysign(math.sqrt(b * b - 4 * a * c), b))
    return q / a, c / q


def test_stiff_lowpass_ladder_matches_closed_form():
    # Two RC sections, the second 1e9 times faster than the first: slow pole 1e3 rad/s,
    # fast pole 1e12 rad/s.
    r1, c1, r2, c2 = 1e3, 1e-6, 1.0, 1e-12
    net = Network(elements=(Element("r1", "R", "in", "a"), Element("c1", "C", "a", "0"),
                            Element("r2", "R", "a", "out"), Element("c2", "C", "out", "0")),
                  drive="in", output="out")
    t = np.linspace(0.0, 10e-3, 4001)
    y = engine.step(net, {"r1": r1, "c1": c1, "r2": r2, "c2": c2}, t)[0]
    # Source: textbook, H(s) = 1/(s²·R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1) with real poles
    # p1, p2: y(t) = 1 + (p2·e^(p1·t) − p1·e^(p2·t))/(p1 − p2).
    p1, p2 = _quadratic_roots(r1 * c1 * r2 * c2, r1 * c1 + r2 * c2 + r1 * c2, 1.0)
    assert abs(p2 / p1) > 1e8 or abs(p1 / p2) > 1e8
    ref = 1 + (p2 * np.exp(p1 * t) - p1 * np.exp(p2 * t)) / (p1 - p2)
    np.testing.assert_allclose(y[1:], ref[1:], atol=1e-9)
    assert y[0] == 0.0


def test_stiff_highpass_jump_and_decay_match_closed_form():
    # Series C into R ‖ C_L through a 1 mΩ source: the coupling edge is 1e9 times faster
    # than the decay. The trapezoidal rule let that edge ring at ±1 V for ever.
    rs, c, r, cl = 1e-3, 1e-6, 1e3, 1e-9
    net = Network(elements=(Element("rs", "R", "src", "in"), Element("c", "C", "in", "out"),
                            Element("r", "R", "out", "0"), Element("cl", "C", "out", "0")),
                  drive="src", output="out")
    t = np.linspace(0.0, 10e-3, 4001)
    y = engine.step(net, {"rs": rs, "c": c, "r": r, "cl": cl}, t)[0]
    # Source: textbook, H(s) = sRC/(s²·Rs·R·C·C_L + s(RC + RC_L + RsC) + 1); its step response
    # with poles p1, p2 is RC·(e^(p1·t) − e^(p2·t))/(a·(p1 − p2)), a = Rs·R·C·C_L.
    a = rs * r * c * cl
    p1, p2 = _quadratic_roots(a, r * c + r * cl + rs * c, 1.0)
    ref = r * c * (np.exp(p1 * t) - np.exp(p2 * t)) / (a * (p1 - p2))
    # One step after the edge the fast mode is left at R(h·p) ≈ 3/(h·|p|) of its height
    # (Radau IIA's stability function, Hairer & Wanner IV.5): 1.2e-6 here, then gone.
    assert y[1] == pytest.approx(ref[1], abs=3.0 / ((t[1] - t[0]) * max(abs(p1), abs(p2))) * 1.01)
    np.testing.assert_allclose(y[2:], ref[2:], atol=1e-9)
    # The extremes: the peak just after the edge (near the divider C/(C + C_L)), the end ~ 0.
    assert y.max() == pytest.approx(ref.max(), abs=2e-6)
    assert abs(y[-1]) < 1e-4


def test_capacitor_loop_through_source_jumps_to_divider():
    # No source resistance: C and C_L form a loop with the ideal source (an index-2 system).
    c, r, cl = 100e-9, 10e3, 22e-12
    net = Network(elements=(Element("c", "C", "in", "out"), Element("r", "R", "out", "0"),
                            Element("cl", "C", "out", "0")), drive="in", output="out")
    t = np.linspace(0.0, 5e-3, 2001)
    y = engine.step(net, {"c": c, "r": r, "cl": cl}, t)[0]
    # Source: textbook, y(t) = C/(C + C_L)·e^(−t/(R(C + C_L))) for t > 0.
    tau = r * (c + cl)
    np.testing.assert_allclose(y[1:], c / (c + cl) * np.exp(-t[1:] / tau), rtol=1e-9, atol=1e-12)


@pytest.mark.slow
def test_sallen_key_stage_step_matches_scipy(tmp_path):
    res = analyse_one(tmp_path, """
        [[stage]]
        id = "sk"
        title = "Sallen-Key"
        kind = "sallen-key-lowpass"
        drive = { step = "1 V" }
        parts.r1 = { value = "10k", tolerance = "1%" }
        parts.r2 = { value = "10k", tolerance = "1%" }
        parts.c1 = { value = "22 nF", tolerance = "5%", dielectric = "C0G" }
        parts.c2 = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }
        """)
    r1 = r2 = 10e3
    c1, c2 = 22e-9, 10e-9
    t = res.step.t_s            # the figure's instants: a subset of the uniform grid
    den = [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0]
    # Source: scipy.signal.residue on the textbook unity-gain Sallen-Key low-pass
    # H(s) = 1/(s²·R1R2C1C2 + s·C2(R1 + R2) + 1): the step response H(s)/s in partial
    # fractions, y(t) = Σ r_i·e^(p_i·t), evaluated at the figure's instants.
    res_, poles, _ = signal.residue([1.0], den + [0.0])
    ref = np.real(np.sum(res_[:, None] * np.exp(poles[:, None] * t[None, :]), axis=0))
    np.testing.assert_allclose(res.step.nominal[1:], ref[1:], atol=1e-8)
    # and scipy.signal.step on a uniform grid of the same span agrees with it (same H(s)).
    tu = np.linspace(0, t[-1], 4000)
    _, yu = signal.step(([1.0], den), T=tu)
    np.testing.assert_allclose(np.interp(t, tu, yu), ref, atol=1e-5)
    # Its 10–90 % rise time from the same reference on a fine grid (linear interpolation).
    tf = np.linspace(0, t[-1] / 10, 200001)
    _, yf = signal.step(([1.0], den), T=tf)
    rise = np.interp(0.9, yf, tf) - np.interp(0.1, yf, tf)
    assert _nominal(res, "rise_time") == pytest.approx(rise, rel=1e-5)


def test_first_order_rise_time_is_tau_ln9(tmp_path):
    res = analyse_one(tmp_path, """
        [[stage]]
        id = "lp"
        title = "Low-pass"
        kind = "rc-lowpass"
        drive = { step = "3.3 V" }
        parts.r = { value = "10k", tolerance = "1%" }
        parts.c = { value = "100 nF", tolerance = "5%", dielectric = "C0G" }
        """)
    tau = 10e3 * 100e-9
    # Source: textbook, the 10–90 % rise time of a first-order step is τ·ln 9;
    # settling to 1 % is τ·ln 100.
    assert _nominal(res, "rise_time") == pytest.approx(tau * math.log(9), rel=1e-5)
    assert _nominal(res, "settling") == pytest.approx(tau * math.log(100), rel=1e-5)


@pytest.mark.parametrize("duty,freq", [("50%", "2 kHz"), ("25%", "500 Hz"), ("80%", "5 kHz")])
@pytest.mark.slow
def test_pwm_ripple_of_rc_lowpass_matches_closed_form(tmp_path, duty, freq):
    res = analyse_one(tmp_path, f"""
        [[stage]]
        id = "lp"
        title = "PWM smoothing"
        kind = "rc-lowpass"
        drive = {{ pwm = "5 V", frequency = "{freq}", duty = "{duty}" }}
        parts.r = {{ value = "10k", tolerance = "1%" }}
        parts.c = {{ value = "100 nF", tolerance = "5%", dielectric = "C0G" }}
        """)
    tau, v = 10e3 * 100e-9, 5.0
    d = float(duty.rstrip("%")) / 100
    x = 1.0 / (float(freq.split()[0]) * (1e3 if "kHz" in freq else 1.0)) / tau
    # Source: textbook periodic steady state of a first-order RC under a square wave:
    # Vpp = V(1 − e^(−DT/τ))(1 − e^(−(1−D)T/τ))/(1 − e^(−T/τ)).
    vpp = v * (1 - math.exp(-d * x)) * (1 - math.exp(-(1 - d) * x)) / (1 - math.exp(-x))
    assert _nominal(res, "ripple") == pytest.approx(vpp, rel=1e-6)
    # Source: textbook, the mean of the output is the mean of the input, D·V.
    assert res.pwm.mean == pytest.approx(d * v, rel=1e-6)
