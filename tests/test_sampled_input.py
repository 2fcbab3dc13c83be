"""The sampled-input kind: a converter's switched sampling capacitor behind an RC."""

import json
import math
from dataclasses import replace

import numpy as np
import pytest
import scipy.signal as sg
from scipy.integrate import solve_ivp

from rcdoc.analysis import sampled
from rcdoc.commands.cli import main
from rcdoc.errors import ProjectError
from rcdoc.note.schematic import render_svg
from rcdoc.kinds import KINDS

from boards import analyse_one, load

CONV = dict(sampling_c=12e-12, switch_r=400.0, pin_c=4e-12, acquisition=300e-9,
            sample_rate=100e3, full_scale=3.3, bits=12, start=0.0, leakage=0.0)
LSB = 3.3 / 4096


def _p(r=100.0, c=1e-9, source_r=1000.0, level=3.0, **conv):
    return sampled.params(np.array([r]), np.array([c]), source_r, {**CONV, **conv}, level)


def _ode(p, closed):
    a, b = sampled.matrices(p, closed)
    return a[0, :2, :2], b[0, :2]


def test_charge_sharing_kickback():
    # Charge conservation: with a negligible switch resistance the pin (C_f = c +
    # pin_c, fully recovered to V) and the sampling capacitor (at V_start) meet at
    # (C_f·V + C_s·V_start)/(C_f + C_s) before the source has moved any charge.
    c, pin_c, cs, v, v0 = 1e-9, 4e-12, 12e-12, 3.0, 0.5
    p = _p(c=c, switch_r=1e-3, start=v0, sample_rate=1e3)
    st = sampled.steady(p)
    cf = c + pin_c
    shared = (cf * v + cs * v0) / (cf + cs)
    assert st["reset"][0, sampled.P] == pytest.approx(v, abs=1e-9)      # recovered
    assert sampled.kickback(p, st)[0] == pytest.approx(v - shared, rel=1e-5)


def test_acquisition_matches_two_capacitor_solution():
    # Textbook: two capacitors joined through R_sw, with no other path, keep their
    # total charge: v_s(t) = v_∞ + (v_s0 − v_∞)·e^(−t/τ), v_∞ = (C_f·v_p0 + C_s·v_s0)/(C_f + C_s),
    # τ = R_sw·C_f·C_s/(C_f + C_s). A 1 TΩ filter resistor makes the source branch
    # negligible over the 300 ns acquisition (3 V/1 TΩ·300 ns ≈ 1 fC against pC).
    p = _p(r=1e12, source_r=0.0, sample_rate=1e3, start=0.2)
    st = sampled.steady(p)
    vp0, vs0 = st["reset"][0, :2]
    cf, cs, rsw = 1e-9 + 4e-12, 12e-12, 400.0
    v_inf = (cf * vp0 + cs * vs0) / (cf + cs)
    tau = rsw * cf * cs / (cf + cs)
    t = np.array([0.2, 1.0, 3.0, 10.0]) * tau
    got = sampled._at(st, t)[0, :, sampled.S]
    assert got == pytest.approx(v_inf + (vs0 - v_inf) * np.exp(-t / tau), abs=1e-6 * abs(vp0 - vs0))


def test_acquisition_matches_solve_ivp_with_the_source():
    # Reference: scipy.integrate.solve_ivp on the same three-node circuit, source included.
    p = _p(r=330.0, c=2.2e-9, leakage=1e-6, start=3.3, sample_rate=400e3)
    st = sampled.steady(p)
    a, b = _ode(p, closed=True)
    t = np.linspace(0, 300e-9, 7)[1:]
    ref = solve_ivp(lambda _t, y: a @ y + b, (0, 300e-9), st["reset"][0, :2], t_eval=t,
                    method="DOP853", rtol=1e-12, atol=1e-15).y.T
    assert sampled._at(st, t)[0] == pytest.approx(ref, abs=1e-9)


def _simulate(p, periods):
    """Piecewise scipy.integrate.solve_ivp over many periods from rest (reference)."""
    x = np.zeros(2)
    a1, b1 = _ode(p, True)
    a0, b0 = _ode(p, False)
    period = 1 / float(p.rate[0])
    sample = math.nan
    for _ in range(periods):
        if p.start is not None:
            x[1] = p.start
        for a, b, h in ((a1, b1, p.t_acq), (a0, b0, period - p.t_acq)):
            x = solve_ivp(lambda _t, y, a=a, b=b: a @ y + b, (0, h), x, method="LSODA",
                          rtol=1e-11, atol=1e-13).y[:, -1]
            if h == p.t_acq:
                sample = x[1]
    return sample


@pytest.mark.parametrize("start", [0.0, None])
@pytest.mark.slow
def test_steady_state_matches_long_simulation(start):
    # Reference: scipy.integrate.solve_ivp marching until the waveform repeats;
    # the direct periodic solution must agree within 0.05 LSB.
    p = _p(r=220.0, c=1e-9, source_r=330.0, start=start, sample_rate=1e6, leakage=2e-7)
    got = sampled.steady(p)["acquired"][0, sampled.S]
    ref = _simulate(p, 80 if start is not None else 400)
    assert abs(got - ref) / LSB < 0.05


@pytest.mark.parametrize("leakage", [0.0, 1e-6])
def test_input_current_is_charge_per_conversion(leakage):
    # Charge conservation: each conversion takes C_s·(level − start) from the source
    # when the filter fully recovers, so I = f_s·C_s·(level − start) (+ the leakage).
    fs, start, level = 50e3, 0.3, 2.0
    p = _p(r=100.0, c=10e-9, source_r=0.0, level=level, start=start, sample_rate=fs,
           acquisition=2e-6, leakage=leakage)
    st = sampled.steady(p)
    assert abs(sampled.sample_error(p, st)[0]) < 0.5 * (1 + leakage * 100 / LSB)   # recovered
    expected = fs * 12e-12 * (level - start) + leakage
    assert sampled.input_current(p, st)[0] == pytest.approx(expected, rel=2e-4)


def test_max_sample_rate_brackets_the_pass():
    # Bisection checked by evaluating on both sides of the rate it returns.
    p = _p(r=100.0, c=220e-9, source_r=0.0, acquisition=1e-6)
    fmax = sampled.max_sample_rate(p)[0]
    assert 1e3 < fmax < 1e6
    ok = abs(sampled.sample_error(replace(p, rate=np.array([fmax * (1 - 1e-6)])))[0])
    bad = abs(sampled.sample_error(replace(p, rate=np.array([fmax * (1 + 1e-6)])))[0])
    assert ok <= 0.5 < bad


BOARD = """\
[[stage]]
id = "ain3"
title = "AIN3 through a multiplexer"
kind = "sampled-input"
level = "3.3 V"
converter = {{ sampling_c = "12 pF", switch_r = "400 ohm", pin_c = "4 pF", acquisition = "1 us", sample_rate = "{rate}", full_scale = "3.3 V", bits = 12, start = "0 V" }}
[stage.parts.r]
value = "100 ohm"
tolerance = "1%"
[stage.parts.c]
value = "220 nF"
tolerance = "10%"
[[stage.check]]
metric = "sample_error"
min = "-0.5 LSB"
max = "0.5 LSB"
"""


@pytest.mark.slow
def test_multiplexed_input_fails_at_its_rate_and_passes_below_max(tmp_path):
    # A 12 pF sample taken from 0 V every 5 µs draws f_s·C_s·V ≈ 8 µA through 100 Ω:
    # the pin sags by about one LSB and the check fails (exit 1). Below max_sample_rate (worst
    # sample) it passes (exit 0): the bisection's passing side holds for every part.
    fail = load(tmp_path, BOARD.format(rate="200 kHz"), "samples = 30", name="fast")
    r = analyse_one(tmp_path, BOARD.format(rate="200 kHz"), "samples = 30", name="fast")
    assert r.status == "fail"
    assert main(["check", fail.file, "--quiet", "--jobs", "1"]) == 1
    fmax = r.metric("max_sample_rate")
    slow_rate = 0.98 * min(fmax.samples.min(), fmax.wc[0])
    assert slow_rate < 200e3
    slow = load(tmp_path, BOARD.format(rate=f"{slow_rate:.6g} Hz"), "samples = 30", name="slow")
    assert main(["check", slow.file, "--quiet", "--jobs", "1"]) == 0
    r_slow = analyse_one(tmp_path, BOARD.format(rate=f"{slow_rate:.6g} Hz"), "samples = 30",
                         name="slow")
    assert np.all(np.abs(r_slow.metric("sample_error").samples) <= 0.5)
    # Sensitivities and worst case come from the standard machinery.
    err = r.metric("sample_error")
    assert set(err.sensitivity) == {"r", "c"} and err.wc[0] <= err.samples.min()


@pytest.mark.slow
def test_build_writes_lsb_and_the_figures(tmp_path):
    project = load(tmp_path, BOARD.format(rate="200 kHz"), "samples = 20")
    assert main(["build", project.file, "-o", str(tmp_path / "out"), "--quiet",
                 "--jobs", "1"]) == 1
    data = json.loads((tmp_path / "out" / "p.json").read_text())
    units = {m["metric"]: m["unit"] for m in data["stages"][0]["metrics"]}
    assert units["sample_error"] == "LSB" and units["max_sample_rate"] == "Hz"


def _converter_stage(r, c, conv):
    return f"""\
[[stage]]
id = "a"
title = "A"
kind = "sampled-input"
converter = {{ {conv} }}
[stage.parts.r]
value = "{r}"
[stage.parts.c]
value = "{c}"
"""


@pytest.mark.parametrize("conv, key", [
    ('acquisition = "10 us", sample_rate = "200 kHz"', "converter.acquisition"),
    ('acquisition = "1 us", sample_rate = "200 kHz", bits = 0', "converter.bits"),
    ('acquisition = "1 us", sample_rate = "200 kHz", bits = 33', "converter.bits"),
    ('acquisition = "1 us", sample_rate = "200 kHz", sampling_c = "-1 pF"', "converter.sampling_c"),
    ('acquisition = "1 us", sample_rate = "200 kHz", start = "last"', "converter.start"),
    ('acquisition = "1 us", sample_rate = "200 kHz", leak = "1 nA"', "converter.leak"),
    ('acquisition = "1 us"', "converter.sample_rate"),
])
def test_converter_mistakes_name_their_key(tmp_path, conv, key):
    # Common practice: every user mistake names its key path.
    base = {"sampling_c": '"12 pF"', "switch_r": '"400 ohm"', "full_scale": '"3.3 V"', "bits": "12"}
    given = dict(kv.split(" = ", 1) for kv in conv.split(", "))
    table = ", ".join(f"{k} = {v}" for k, v in {**base, **given}.items())
    with pytest.raises(ProjectError) as e:
        load(tmp_path, _converter_stage("1 kohm", "10 nF", table))
    assert f"stage[1].{key}" in str(e.value)


def test_time_constants_too_far_apart_are_refused_before_analysis(tmp_path):
    # 1 GΩ and 10 mF (τ = 10⁷ s) against a 1 mΩ switch on 1 fF (τ = 10⁻¹⁸ s):
    # the switched analysis cannot resolve a 24-bit LSB there in double precision
    # (it printed a 61 V sample of a 3.3 V level). Refused, naming the converter.
    conv = ('sampling_c = "1 fF", switch_r = "1 mohm", acquisition = "1 ns", '
            'sample_rate = "1 Hz", full_scale = "3.3 V", bits = 24, leakage = "1 pA"')
    with pytest.raises(ProjectError) as e:
        load(tmp_path, _converter_stage("1 Gohm", "10 mF", conv))
    assert "stage[1].converter" in str(e.value) and "too far apart" in str(e.value)
    # An ordinary 24-bit input (1 kΩ, 10 µF; 100 Ω switch on 10 pF, 1 µs of 1 ms) loads.
    conv = ('sampling_c = "10 pF", switch_r = "100 ohm", acquisition = "1 us", '
            'sample_rate = "1 kHz", full_scale = "3.3 V", bits = 24')
    assert load(tmp_path, _converter_stage("1 kohm", "10 uF", conv)).stages


def test_limit_in_lsb_and_default_level(tmp_path):
    # The level defaults to the full scale; "0.5 LSB" reads as 0.5.
    p = load(tmp_path, BOARD.format(rate="100 kHz").replace('level = "3.3 V"\n', ""))
    st = p.stages[0]
    assert st.options["level_v"] == 3.3
    assert (st.checks[0].min, st.checks[0].max) == (-0.5, 0.5)


@pytest.mark.slow
def test_schematic_has_switch_and_sampling_capacitor(tmp_path):
    st = load(tmp_path, BOARD.format(rate="100 kHz")).stages[0]
    recipe = KINDS["sampled-input"].schematic(st)
    assert {"switch", "sampling_c", "pin_c", "r", "c"} <= {s.name for s in recipe.steps}
    assert "svg" in render_svg(recipe)[:20]


@pytest.mark.slow
def test_frequency_response_is_the_rc_with_the_pin_capacitance(tmp_path):
    # Reference: scipy.signal.freqs of the textbook first-order low-pass
    # H(s) = 1/(1 + s·(R_s + r)·(c + pin_c)); the sampling capacitor is not in it.
    r = analyse_one(tmp_path, BOARD.format(rate="100 kHz").replace(
        'kind = "sampled-input"', 'kind = "sampled-input"\nsource = "50 ohm"'), "samples = 5")
    tau = (50.0 + 100.0) * (220e-9 + 4e-12)
    _, h = sg.freqs([1.0], [tau, 1.0], 2 * np.pi * r.freqs_hz)
    assert r.h_nominal == pytest.approx(h, rel=1e-9, abs=1e-12)
    assert r.metric("corner").nominal == pytest.approx(1 / (2 * np.pi * tau), rel=1e-6)
