"""Checks of the nodal engine against sources outside the project.

Each check names its source beside it: scipy.signal (freqs, step, butter) on
the textbook transfer function of the same circuit, textbook formulas and
worked examples, or physical laws (Kirchhoff, Ohm).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants
from scipy import signal

from rcdoc.analysis import ac as ac_module
from rcdoc.analysis import engine
from rcdoc.analysis import transient as transient_module
from rcdoc.errors import ProjectError
from rcdoc.analysis.network import Element, Network, OpAmp


def lowpass() -> Network:
    return Network(elements=(Element("r", "R", "in", "out"), Element("c", "C", "out", "0")), drive="in", output="out")


def highpass() -> Network:
    return Network(elements=(Element("c", "C", "in", "out"), Element("r", "R", "out", "0")), drive="in", output="out")


def ladder() -> Network:
    return Network(
        elements=(
            Element("r1", "R", "in", "m"),
            Element("c1", "C", "m", "0"),
            Element("r2", "R", "m", "out"),
            Element("c2", "C", "out", "0"),
        ),
        drive="in",
        output="out",
    )


def sallen_key(gbw_hz=math.inf, a0=math.inf) -> Network:
    # Topology of project-format.md: r1 in->A, r2 A->B, c1 A->out, c2 B->0, follower.
    return Network(
        elements=(
            Element("r1", "R", "in", "a"),
            Element("r2", "R", "a", "b"),
            Element("c1", "C", "a", "out"),
            Element("c2", "C", "b", "0"),
        ),
        opamps=(OpAmp("u1", plus="b", minus="out", out="out", gbw_hz=gbw_hz, a0=a0),),
        drive="in",
        output="out",
    )


def mfb() -> Network:
    # Topology of project-format.md: r1 in->A, c1 A->0, r2 A->out, r3 A->minus, c2 minus->out.
    return Network(
        elements=(
            Element("r1", "R", "in", "a"),
            Element("c1", "C", "a", "0"),
            Element("r2", "R", "a", "out"),
            Element("r3", "R", "a", "n"),
            Element("c2", "C", "n", "out"),
        ),
        opamps=(OpAmp("u1", plus="0", minus="n", out="out"),),
        drive="in",
        output="out",
    )


def series_rlc() -> Network:
    return Network(
        elements=(Element("r", "R", "in", "x"), Element("l", "L", "x", "y"), Element("c", "C", "y", "0")),
        drive="in",
        output="y",
    )


def freqs_h(num, den, f_hz):
    """Textbook H(s) evaluated by scipy.signal.freqs at f (Hz)."""
    return signal.freqs(num, den, worN=2 * np.pi * np.asarray(f_hz))[1]


F = np.logspace(0, 7, 141)


# ---------------------------------------------------------------- first order


def test_rc_lowpass_matches_textbook_h():
    r, c = 4.7e3, 10e-9
    h = engine.ac(lowpass(), {"r": np.array([r]), "c": np.array([c])}, F)
    # Source: textbook first-order low-pass H(s) = 1/(sRC + 1), via scipy.signal.freqs.
    np.testing.assert_allclose(h[0], freqs_h([1.0], [r * c, 1.0], F), rtol=1e-9)
    fc = 1 / (2 * math.pi * r * c)
    g = 20 * np.log10(abs(engine.ac(lowpass(), {"r": r, "c": c}, [fc, 10 * fc])[0]))
    # Source: textbook, -3.0103 dB at fc = 1/(2πRC) and -20.04 dB at 10·fc.
    assert g[0] == pytest.approx(-3.0103, abs=1e-4)
    assert g[1] == pytest.approx(-20.04, abs=5e-3)


def test_rc_highpass_matches_textbook_h():
    r, c = 47e3, 2.2e-9
    h = engine.ac(highpass(), {"r": r, "c": c}, F)
    # Source: textbook first-order high-pass H(s) = sRC/(sRC + 1), via scipy.signal.freqs.
    np.testing.assert_allclose(h[0], freqs_h([r * c, 0.0], [r * c, 1.0], F), rtol=1e-9)
    # Source: worked example (47 kΩ, 2.2 nF): fL = 1539 Hz, -3 dB there.
    fl = 1 / (2 * math.pi * r * c)
    assert fl == pytest.approx(1539, abs=0.5)
    assert 20 * math.log10(abs(engine.ac(highpass(), {"r": r, "c": c}, [fl])[0, 0])) == pytest.approx(-3.0103, abs=1e-4)


def test_worked_example_10k_30n_lowpass():
    r, c = 10e3, 0.03e-6
    # Source: worked example: fc = 530.5 Hz; 120 V in at 400 Hz gives about 95.8 V out.
    assert 1 / (2 * math.pi * r * c) == pytest.approx(530.5, abs=0.05)
    v_out = 120 * abs(engine.ac(lowpass(), {"r": r, "c": c}, [400.0])[0, 0])
    assert v_out == pytest.approx(95.8, abs=0.05)


# ---------------------------------------------------------------- second order


def test_two_section_ladder_matches_textbook_h():
    r1, c1, r2, c2 = 1e3, 100e-9, 22e3, 4.7e-9
    h = engine.ac(ladder(), {"r1": r1, "c1": c1, "r2": r2, "c2": c2}, F)
    # Source: textbook, H(s) = 1/(s²R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1), via scipy.signal.freqs.
    den = [r1 * c1 * r2 * c2, r1 * c1 + r2 * c2 + r1 * c2, 1.0]
    np.testing.assert_allclose(h[0], freqs_h([1.0], den, F), rtol=1e-9)


def test_equal_ladder_corner():
    r, c = 10e3, 10e-9
    f3 = 0.0596 / (r * c)
    g = abs(engine.ac(ladder(), {"r1": r, "c1": c, "r2": r, "c2": c}, [f3])[0, 0])
    # Source: textbook, two equal loaded sections: -3 dB at f = 0.0596/(RC) (4 significant digits).
    assert 20 * math.log10(g) == pytest.approx(-3.0103, abs=5e-3)


def test_sallen_key_unity_gain_matches_formula():
    r1, r2, c1, c2 = 10e3, 22e3, 10e-9, 2.2e-9
    h = engine.ac(sallen_key(), {"r1": r1, "r2": r2, "c1": c1, "c2": c2}, F)
    # Source: project-format.md, H(s) = 1/(s² r1 r2 c1 c2 + s c2 (r1 + r2) + 1), via scipy.signal.freqs.
    den = [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0]
    np.testing.assert_allclose(h[0], freqs_h([1.0], den, F), rtol=1e-9)


def test_sallen_key_equal_resistors_is_butterworth():
    # Source: textbook, equal resistors give Q = ½·√(c1/c2); c1 = 2·c2 gives Q = 0.7071,
    # the Butterworth response of scipy.signal.butter(2, ω0, analog=True).
    r, c2 = 10e3, 4.7e-9
    c1 = 2 * c2
    w0 = 1 / (r * math.sqrt(c1 * c2))
    b, a = signal.butter(2, w0, analog=True)
    h = engine.ac(sallen_key(), {"r1": r, "r2": r, "c1": c1, "c2": c2}, F)
    np.testing.assert_allclose(h[0], freqs_h(b, a, F), rtol=1e-9)


def test_mfb_matches_formula():
    r1, r2, r3, c1, c2 = 10e3, 20e3, 15e3, 22e-9, 1e-9
    h = engine.ac(mfb(), {"r1": r1, "r2": r2, "r3": r3, "c1": c1, "c2": c2}, F)
    # Source: project-format.md, H(s) = -(r2/r1)/(s² r2 r3 c1 c2 + s c2 (r2 + r3 + r2 r3/r1) + 1).
    den = [r2 * r3 * c1 * c2, c2 * (r2 + r3 + r2 * r3 / r1), 1.0]
    np.testing.assert_allclose(h[0], freqs_h([-r2 / r1], den, F), rtol=1e-9)


def test_finite_gbw_follower_matches_closed_loop_formula():
    gbw, a0 = 1e6, 1e5
    net = Network(
        elements=(Element("r", "R", "in", "p"), Element("rl", "R", "out", "0")),
        opamps=(OpAmp("u1", plus="p", minus="out", out="out", gbw_hz=gbw, a0=a0),),
        drive="in",
        output="out",
    )
    h = engine.ac(net, {"r": 1e3, "rl": 10e3}, F)
    # Source: textbook feedback result H = A/(1 + A) with A(s) = a0/(1 + s·a0/ωt), ωt = 2π·gbw:
    # H(s) = a0 / (s·a0/ωt + 1 + a0), via scipy.signal.freqs.
    wt = 2 * math.pi * gbw
    np.testing.assert_allclose(h[0], freqs_h([a0], [a0 / wt, 1 + a0], F), rtol=1e-9)
    # Source: textbook, the closed-loop bandwidth of a follower is the gain-bandwidth product.
    fc = gbw * (1 + a0) / a0
    assert abs(engine.ac(net, {"r": 1e3, "rl": 10e3}, [fc])[0, 0]) == pytest.approx(2**-0.5 * a0 / (1 + a0), rel=1e-9)


def test_series_rlc_matches_textbook_h():
    r, l, c = 50.0, 10e-6, 100e-9
    h = engine.ac(series_rlc(), {"r": r, "l": l, "c": c}, F)
    # Source: textbook voltage divider, V_C/V = 1/(s²LC + sRC + 1), via scipy.signal.freqs.
    np.testing.assert_allclose(h[0], freqs_h([1.0], [l * c, r * c, 1.0], F), rtol=1e-8)


# ---------------------------------------------------------------- impedance, voltages, currents


def test_input_impedance_series_rc():
    r, c = 1e3, 1e-6
    net = Network(elements=(Element("r", "R", "in", "m"), Element("c", "C", "m", "0")), drive="in", output="m")
    z = engine.input_impedance(net, {"r": r, "c": c}, F)
    # Source: textbook series impedance Z = R + 1/(sC).
    np.testing.assert_allclose(z[0], r + 1 / (2j * np.pi * F * c), rtol=1e-9)


def test_element_voltages_and_currents_series_rc():
    r, c = 1e3, 1e-6
    f = 1 / (2 * math.pi * r * c)
    net = Network(elements=(Element("r", "R", "in", "m"), Element("c", "C", "m", "0")), drive="in", output="m")
    v = engine.element_voltages(net, {"r": r, "c": c}, f)
    i = engine.element_currents(net, {"r": r, "c": c}, f)
    i_src = engine.source_current(net, {"r": r, "c": c}, [f])[:, 0]
    # Source: Kirchhoff's voltage law, the element voltages around the loop add up to the source's 1 V.
    np.testing.assert_allclose(v["r"] + v["c"], 1.0, rtol=1e-12)
    # Source: Kirchhoff's current law, one current flows through the series loop.
    np.testing.assert_allclose(i["r"], i["c"], rtol=1e-12)
    np.testing.assert_allclose(i["r"], i_src, rtol=1e-12)
    # Source: common practice (series RC at ω = 1/RC): V_R/V = V_C/V = 1/√2, current leads by 45°.
    assert abs(v["r"][0]) == pytest.approx(2**-0.5, rel=1e-12)
    assert abs(v["c"][0]) == pytest.approx(2**-0.5, rel=1e-12)
    assert math.degrees(np.angle(i["r"][0])) == pytest.approx(45.0, abs=1e-9)


def test_inductor_current_series_rlc():
    r, l, c = 50.0, 10e-6, 100e-9
    f = np.array([1e5])
    i = engine.element_currents(series_rlc(), {"r": r, "l": l, "c": c}, f[0])
    s = 2j * np.pi * f[0]
    # Source: Ohm's law on the series impedance, I = V/(R + sL + 1/(sC)).
    assert i["l"][0] == pytest.approx(1 / (r + s * l + 1 / (s * c)), rel=1e-9)
    np.testing.assert_allclose(i["l"], i["r"], rtol=1e-9)


# ---------------------------------------------------------------- time domain


def test_step_first_order_matches_scipy_and_rise_time():
    r, c = 10e3, 10e-9
    tau = r * c
    t = np.linspace(0, 10 * tau, 4001)
    y = engine.step(lowpass(), {"r": r, "c": c}, t)[0]
    # Source: scipy.signal.step on the textbook H(s) = 1/(sRC + 1).
    _, ref = signal.step(([1.0], [tau, 1.0]), T=t)
    np.testing.assert_allclose(y, ref, atol=2e-6)
    # Source: textbook, 10 %..90 % rise time of a first-order step is RC·ln 9.
    t10 = np.interp(0.1, y, t)
    t90 = np.interp(0.9, y, t)
    assert t90 - t10 == pytest.approx(tau * math.log(9), rel=1e-3)


def test_step_amplitude_scales():
    r, c = 10e3, 10e-9
    t = np.linspace(0, 5 * r * c, 501)
    y1 = engine.step(lowpass(), {"r": r, "c": c}, t)
    y3 = engine.step(lowpass(), {"r": r, "c": c}, t, amplitude=3.3)
    # Source: linearity (superposition) of the network.
    np.testing.assert_allclose(y3, 3.3 * y1, rtol=1e-12, atol=1e-15)


def test_step_second_order_rlc_matches_scipy():
    r, l, c = 20.0, 10e-6, 100e-9  # underdamped: ζ = (R/2)·√(C/L) = 0.1
    t = np.linspace(0, 40e-6, 8001)
    y = engine.step(series_rlc(), {"r": r, "l": l, "c": c}, t)[0]
    # Source: scipy.signal.step on the textbook H(s) = 1/(s²LC + sRC + 1).
    _, ref = signal.step(([1.0], [l * c, r * c, 1.0]), T=t)
    np.testing.assert_allclose(y, ref, atol=5e-6)


def test_step_ideal_opamp_sallen_key_matches_scipy():
    # A descriptor system: the ideal op-amp's equation has no derivative.
    r1, r2, c1, c2 = 10e3, 10e3, 20e-9, 5e-9
    t = np.linspace(0, 2e-3, 4001)
    y = engine.step(sallen_key(), {"r1": r1, "r2": r2, "c1": c1, "c2": c2}, t)[0]
    # Source: scipy.signal.step on H(s) = 1/(s² r1 r2 c1 c2 + s c2 (r1 + r2) + 1) (project-format.md).
    _, ref = signal.step(([1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0]), T=t)
    np.testing.assert_allclose(y, ref, atol=5e-6)


def test_inductor_current_step_rl():
    r, l = 100.0, 1e-3
    net = Network(elements=(Element("r", "R", "in", "x"), Element("l", "L", "x", "0")), drive="in", output="x")
    t = np.linspace(0, 5 * l / r, 2001)
    out = engine.transient(net, {"r": r, "l": l}, t, np.ones_like(t), ["i:l", "i:r", "i:__source__"], initial="rest")
    # Source: textbook RL step, i(t) = (V/R)(1 − e^(−tR/L)).
    np.testing.assert_allclose(out["i:l"][0], (1 - np.exp(-t * r / l)) / r, atol=1e-6 / r)
    np.testing.assert_allclose(out["i:r"][0, 1:], out["i:l"][0, 1:], rtol=1e-9)
    np.testing.assert_allclose(out["i:__source__"][0, 1:], out["i:l"][0, 1:], rtol=1e-9)


def test_transient_dc_start_is_steady_and_capacitor_current():
    r, c = 1e3, 1e-6
    t = np.linspace(0, 5e-3, 501)
    out = engine.transient(lowpass(), {"r": r, "c": c}, t, np.full(t.size, 2.0), ["out", "in", "i:c", "v:r"])
    # Source: textbook, a network at its DC operating point under a constant input stays there
    # (the capacitor is charged to the input, no current flows).
    np.testing.assert_allclose(out["out"], 2.0, rtol=1e-12)
    np.testing.assert_allclose(out["in"], 2.0, rtol=1e-12)
    np.testing.assert_allclose(out["i:c"], 0.0, atol=1e-15)
    np.testing.assert_allclose(out["v:r"], 0.0, atol=1e-12)
    # A sine input: the capacitor current C·dv/dt equals the resistor current (Kirchhoff's current law).
    u = np.sin(2 * np.pi * 1e3 * t)
    out = engine.transient(lowpass(), {"r": r, "c": c}, t, u, ["i:c", "i:r"])
    np.testing.assert_allclose(out["i:c"][0, 1:-1], out["i:r"][0, 1:-1], atol=2e-3 * 1 / r)


def test_series_capacitors_start_at_rest():
    # The node between two capacitors has no DC path: G is singular, the start is at rest.
    r, c1, c2 = 10e3, 10e-9, 10e-9
    net = Network(
        elements=(Element("c1", "C", "in", "m"), Element("c2", "C", "m", "out"), Element("r", "R", "out", "0")),
        drive="in",
        output="out",
    )
    vals = {"c1": c1, "c2": c2, "r": r}
    cs = c1 * c2 / (c1 + c2)
    f = np.logspace(1, 6, 21)
    # Source: textbook, series capacitors combine as C1C2/(C1 + C2); high-pass H(s) = sRCs/(sRCs + 1).
    np.testing.assert_allclose(engine.ac(net, vals, f)[0], freqs_h([r * cs, 0], [r * cs, 1], f), rtol=1e-9)
    t = np.linspace(0, 5 * r * cs, 2001)
    y = engine.transient(net, vals, t, np.ones_like(t), ["out"])["out"][0]
    # Source: textbook high-pass step from rest, y(t) = e^(−t/RCs) for t > 0.
    np.testing.assert_allclose(y[1:], np.exp(-t[1:] / (r * cs)), atol=2e-6)
    with pytest.raises(ProjectError, match="no unique solution"):
        engine.ac(net, vals, [0.0])


def pwm(n: int, duty: float) -> np.ndarray:
    """One period of a 0/1 PWM wave; each edge sample holds the mid value 0.5 (common practice:
    sampling a jump at its midpoint keeps the edge centred on the sample)."""
    k = round(duty * n)
    u = np.zeros(n)
    u[:k] = 1.0
    u[0] = u[k] = 0.5
    return u


@pytest.mark.parametrize("duty,period_over_tau", [(0.5, 1.0), (0.2, 0.5), (0.8, 3.0)])
def test_pwm_ripple_matches_closed_form(duty, period_over_tau):
    r, c, v = 10e3, 10e-9, 3.3
    tau = r * c
    period = period_over_tau * tau
    n = 4000
    t = np.arange(n) * period / n
    out = engine.periodic_steady_state(lowpass(), {"r": r, "c": c}, t, v * pwm(n, duty), ["out"])["out"][0]
    # Source: textbook exponential charge/discharge of a first-order RC under PWM:
    # Vpp = V(1 − e^(−DT/τ))(1 − e^(−(1−D)T/τ))/(1 − e^(−T/τ)); the mean is D·V.
    x = period / tau
    vpp = v * (1 - math.exp(-duty * x)) * (1 - math.exp(-(1 - duty) * x)) / (1 - math.exp(-x))
    assert np.ptp(out) == pytest.approx(vpp, rel=2e-3)
    assert out.mean() == pytest.approx(duty * v, rel=1e-3)


def test_periodic_state_matches_long_transient_with_ideal_opamp():
    # The Sallen-Key has an ideal op-amp (a descriptor system) and the period has an even
    # number of samples, the case where the trapezoidal rule leaves the algebraic part free.
    vals = {"r1": 10e3, "r2": 10e3, "c1": 20e-9, "c2": 5e-9}
    n, period = 200, 100e-6
    u = pwm(n, 0.3)
    t = np.arange(n) * period / n
    pss = engine.periodic_steady_state(sallen_key(), vals, t, u, ["out", "a", "i:c1"])
    periods = 40
    tl = np.arange(n * periods) * period / n
    long = engine.transient(sallen_key(), vals, tl, np.tile(u, periods), ["out", "a", "i:c1"], initial="rest")
    # Source: definition of the periodic steady state, the limit of the transient after many periods.
    for p in ("out", "a"):
        np.testing.assert_allclose(pss[p][0], long[p][0, -n:], atol=1e-6)
    np.testing.assert_allclose(pss["i:c1"][0, 1:-1], long["i:c1"][0, -n + 1 : -1], atol=1e-9)


# ---------------------------------------------------------------- noise


def test_noise_integrates_to_kt_over_c():
    # Source: the engine's constant is the exact SI value, as scipy.constants.k.
    assert engine.BOLTZMANN_J_PER_K == scipy.constants.k
    c = 1e-12
    f = np.logspace(0, 14, 7001)
    for r in (1e3, 1e6):
        psd = engine.output_noise_psd(lowpass(), {"r": r, "c": c}, f, temperature_k=300.0)[0]
        # Source: textbook, the resistor's white density 4kTR at low frequency.
        assert psd[0] == pytest.approx(4 * scipy.constants.k * 300 * r, rel=1e-6)
        v_rms = math.sqrt(np.trapezoid(psd, f))
        # Source: textbook kT/C: 1 pF at 300 K gives 64.4 µV rms, whatever the resistor.
        assert v_rms == pytest.approx(64.4e-6, rel=1e-3)


def test_noise_of_divider_is_parallel_resistance():
    r1, r2 = 10e3, 30e3
    net = Network(elements=(Element("r1", "R", "in", "out"), Element("r2", "R", "out", "0")), drive="in", output="out")
    psd = engine.output_noise_psd(net, {"r1": r1, "r2": r2}, [1e3], temperature_k=290.0)
    # Source: textbook (Thevenin), a divider fed by an ideal source is noisy as R1‖R2: 4kT·R1R2/(R1 + R2).
    assert psd[0, 0] == pytest.approx(4 * scipy.constants.k * 290 * r1 * r2 / (r1 + r2), rel=1e-12)


# ---------------------------------------------------------------- vectorisation


def test_samples_equal_separate_solves():
    rng = np.random.default_rng(7)
    s = 5
    vals = {
        "r1": 10e3 * rng.uniform(0.9, 1.1, s),
        "r2": 10e3 * rng.uniform(0.9, 1.1, s),
        "c1": 20e-9 * rng.uniform(0.8, 1.2, s),
        "c2": 5e-9 * rng.uniform(0.8, 1.2, s),
    }
    net = sallen_key(gbw_hz=1e6, a0=1e5)
    f = np.logspace(2, 6, 9)
    t = np.linspace(0, 1e-3, 201)
    u = pwm(100, 0.5)
    tp = np.arange(100) * 1e-6
    h = engine.ac(net, vals, f)
    z = engine.input_impedance(net, vals, f)
    noise = engine.output_noise_psd(net, vals, f)
    y = engine.step(net, vals, t)
    per = engine.periodic_steady_state(net, vals, tp, u, ["out", "i:c1"])
    sine = np.sin(2 * np.pi * 5e3 * t)
    tr = engine.transient(net, vals, t, sine, ["out", "v:r2", "i:c2"])
    assert h.shape == (s, f.size) and y.shape == (s, t.size)
    # Source: common practice, a batched solve must equal the same solves one sample at a time.
    for k in range(s):
        one = {name: v[k : k + 1] for name, v in vals.items()}
        np.testing.assert_allclose(h[k], engine.ac(net, one, f)[0], rtol=1e-12)
        np.testing.assert_allclose(z[k], engine.input_impedance(net, one, f)[0], rtol=1e-12)
        np.testing.assert_allclose(noise[k], engine.output_noise_psd(net, one, f)[0], rtol=1e-12)
        np.testing.assert_allclose(y[k], engine.step(net, one, t)[0], rtol=1e-9, atol=1e-12)
        per1 = engine.periodic_steady_state(net, one, tp, u, ["out", "i:c1"])
        np.testing.assert_allclose(per["out"][k], per1["out"][0], rtol=1e-9, atol=1e-12)
        np.testing.assert_allclose(per["i:c1"][k], per1["i:c1"][0], rtol=1e-9, atol=1e-15)
        tr1 = engine.transient(net, one, t, sine, ["out", "v:r2", "i:c2"])
        for p in tr:
            np.testing.assert_allclose(tr[p][k], tr1[p][0], rtol=1e-9, atol=1e-15)
    # The samples really differ (otherwise the comparison above proves nothing).
    assert np.ptp(abs(h[:, 4])) > 1e-2 * abs(h[0, 4])


def test_blocks_are_stitched_correctly(monkeypatch):
    # Force tiny blocks so the sweep is split over samples and frequencies.
    rng = np.random.default_rng(3)
    vals = {"r": 1e3 * rng.uniform(0.5, 2, 7), "c": 1e-9 * rng.uniform(0.5, 2, 7)}
    whole = engine.ac(lowpass(), vals, F)
    monkeypatch.setattr(ac_module, "_BLOCK_BYTES", 16 * 3 * 3 * 5)
    # Source: textbook first-order low-pass, per sample.
    ref = 1 / (1 + 2j * np.pi * F[None, :] * vals["r"][:, None] * vals["c"][:, None])
    np.testing.assert_allclose(engine.ac(lowpass(), vals, F), ref, rtol=1e-9)
    np.testing.assert_allclose(whole, ref, rtol=1e-9)
    # The time loops, split into blocks of a few samples, give the same as one block.
    t = np.arange(64) * 1e-7
    u = pwm(64, 0.5)
    step_whole = engine.step(lowpass(), vals, t)
    pss_whole = engine.periodic_steady_state(lowpass(), vals, t, u, ["out", "i:c"])
    monkeypatch.setattr(transient_module, "_TIME_BYTES", 8 * (16 * 3 * 3 + 2 * 64) * 2)
    np.testing.assert_array_equal(engine.step(lowpass(), vals, t), step_whole)
    pss = engine.periodic_steady_state(lowpass(), vals, t, u, ["out", "i:c"])
    for p in pss:
        np.testing.assert_allclose(pss[p], pss_whole[p], rtol=1e-12, atol=1e-18)


def test_solve_ac_and_system_layout():
    net = series_rlc()
    sol = engine.solve_ac(net, {"r": 50.0, "l": 1e-6, "c": 1e-9}, [1e6, 2e6])
    system = engine.assemble(net, {"r": 50.0, "l": 1e-6, "c": 1e-9})
    assert sol.shape == (1, 2, system.size)
    assert set(system.branch) == {engine.SOURCE, "l"}
    assert set(system.index) == {"in", "x", "y"}
    # Source: the ideal source fixes its node at 1 V.
    np.testing.assert_allclose(engine.node_voltage(sol, system, "in"), 1.0)
    np.testing.assert_allclose(engine.node_voltage(sol, system, "0"), 0.0)


# ---------------------------------------------------------------- user mistakes


def test_floating_node_raises():
    net = Network(
        elements=(
            Element("r", "R", "in", "out"),
            Element("c", "C", "out", "0"),
            Element("r2", "R", "p", "q"),
            Element("r3", "R", "q", "p"),
        ),
        drive="in",
        output="out",
    )
    with pytest.raises(ProjectError, match="'p'.*floating"):
        engine.assemble(net, {"r": 1e3, "c": 1e-9, "r2": 1e3, "r3": 1e3})


def test_dangling_node_raises():
    net = Network(
        elements=(Element("r", "R", "in", "out"), Element("c", "C", "out", "0"), Element("r2", "R", "out", "stub")),
        drive="in",
        output="out",
    )
    with pytest.raises(ProjectError, match="'stub'.*dangling"):
        engine.ac(net, {"r": 1e3, "c": 1e-9, "r2": 1e3}, F)


def test_missing_output_and_bad_values_raise():
    net = Network(elements=(Element("r", "R", "in", "out"), Element("c", "C", "out", "0")), drive="in", output="nowhere")
    with pytest.raises(ProjectError, match="output node 'nowhere'"):
        engine.assemble(net, {"r": 1e3, "c": 1e-9})
    with pytest.raises(ProjectError, match="element 'c'"):
        engine.assemble(lowpass(), {"r": 1e3})
    with pytest.raises(ProjectError, match="element 'r'.*positive"):
        engine.assemble(lowpass(), {"r": np.array([1e3, -1.0]), "c": 1e-9})


def test_opamp_without_feedback_has_no_unique_solution():
    # An ideal op-amp forces V(+) = V(−); with + on the driven input and − on ground that contradicts the source.
    net = Network(
        elements=(Element("r", "R", "in", "0"), Element("rl", "R", "out", "0")),
        opamps=(OpAmp("u1", plus="in", minus="0", out="out"),),
        drive="in",
        output="out",
    )
    with pytest.raises(ProjectError, match="no unique solution"):
        engine.assemble(net, {"r": 1e3, "rl": 1e3})
