"""Snubber stages: reference checks of the physics, the project keys, ratings and the build.

Each reference check names its source beside it: the snubber sizing rules of
common practice, Thomson's formula
f = 1/(2π√(LC)), the textbook step response of a series RLC circuit, the
energy of charging a capacitor through a resistor, conservation of energy,
Ohm's law for AC impedances, and scipy.signal (step, lsim) on the same
circuit written independently as a transfer function or a state-space model.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

from rcdoc.commands import cli
from rcdoc.analysis import snubber as phys
from rcdoc.kinds import analyse_stage
from rcdoc.analysis.blocks import SweepChart, WaveformChart
from rcdoc.errors import ProjectError
from rcdoc.input.preferred import SERIES, is_preferred
from rcdoc.kinds import load_project

BOARD = '[board]\nname = "Snubber test"\nrevision = "A"\ndate = "2026-01-01"\n'
ANALYSIS = "[analysis]\nsamples = 200\nseed = 3\n"
SWITCH = """
[[stage]]
id = "sw"
title = "Switch node"
kind = "snubber"
across = "switch"
voltage = "48 V"
switching_frequency = "250 kHz"
ringing = { frequency = "62 MHz", with_added = "220 pF", frequency_with_added = "31 MHz" }
"""
LOAD = """
[[stage]]
id = "relay"
title = "Mains relay contact"
kind = "snubber"
across = "inductive-load"
voltage = "230 V"
ac = true
coil = { l = "3.2 H", r = "620 ohm" }
switching_frequency = "0.1 Hz"
parts.r = { ref = "R9", value = "220", power = "0.5 W" }
parts.c = { ref = "C9", value = "220 nF", voltage = "1600 V", dielectric = "film-pp" }
"""


def write(tmp_path: Path, text: str, name: str = "p.toml") -> str:
    path = tmp_path / name
    path.write_text(BOARD + ANALYSIS + text, encoding="utf-8")
    return str(path)


def rlc_switch(lp=90e-9, cp=73e-12, rp=1.0, r=None, c=None):
    rows = 1
    vals = phys.switch_values(lp, cp, rp, rows,
                              None if r is None else np.array([r]),
                              None if c is None else np.array([c]))
    return vals


def kind(r):
    """The stage's kind result (SnubberResult)."""
    return r.kind_result


# --------------------------------------------------------------------------
# parasitics from the two ringing measurements


def test_halving_the_ringing_frequency_means_c_added_is_three_times_c_par():
    # Common practice: halving the frequency means C_add = 3·C_par.
    c_par, _ = phys.parasitics_from_ringing(62e6, 220e-12, 31e6)
    assert c_par == pytest.approx(220e-12 / 3, rel=1e-12)


def test_loop_inductance_and_impedance_follow_thomsons_formula():
    # Thomson's formula f = 1/(2π√(LC)) must give back both measured frequencies
    # (the added capacitance shares the loop inductance); Z0 = √(L/C) (common practice).
    f1, cadd, f2 = 48e6, 150e-12, 29e6
    c_par, l_par = phys.parasitics_from_ringing(f1, cadd, f2)
    assert 1 / (2 * math.pi * math.sqrt(l_par * c_par)) == pytest.approx(f1, rel=1e-12)
    assert 1 / (2 * math.pi * math.sqrt(l_par * (c_par + cadd))) == pytest.approx(f2, rel=1e-12)
    assert float(phys.resonance_hz(l_par, c_par)) == pytest.approx(f1, rel=1e-12)
    assert float(phys.characteristic_impedance(l_par, c_par)) == pytest.approx(
        math.sqrt(l_par / c_par), rel=1e-12)


# --------------------------------------------------------------------------
# switch node in the time domain


def test_unsnubbed_ring_down_matches_the_series_rlc_closed_form():
    # Textbook underdamped series RLC step response (capacitor voltage):
    # v(t) = V·[1 − e^(−αt)·(cos ωd·t + (α/ωd)·sin ωd·t)], α = R/(2L), ωd = √(ω0² − α²).
    lp, cp, rp, v = 90e-9, 73e-12, 1.2, 48.0
    vals = rlc_switch(lp, cp, rp)
    alpha = rp / (2 * lp)
    w0 = 1 / math.sqrt(lp * cp)
    wd = math.sqrt(w0 ** 2 - alpha ** 2)
    t = np.linspace(0.0, 40 * 2 * math.pi / wd, 20001)
    y = phys.switch_wave(vals, v, t, snubbed=False)[0]
    ref = v * (1 - np.exp(-alpha * t) * (np.cos(wd * t) + alpha / wd * np.sin(wd * t)))
    assert np.max(np.abs(y - ref)) < 2e-3 * v
    # Ringing frequency from the upward zero crossings of v − V, decay from successive maxima.
    e = y - v
    up = np.flatnonzero((e[:-1] < 0) & (e[1:] >= 0))
    tc = t[up] - e[up] * (t[up + 1] - t[up]) / (e[up + 1] - e[up])
    f_meas = (len(tc) - 1) / (tc[-1] - tc[0])
    assert f_meas == pytest.approx(wd / (2 * math.pi), rel=1e-3)
    peaks = [np.max(e[a:b]) for a, b in zip(up[:-1], up[1:])]
    ratio = np.array(peaks[1:]) / np.array(peaks[:-1])
    assert np.median(ratio) == pytest.approx(math.exp(-alpha * 2 * math.pi / wd), rel=2e-3)
    # The damping ratio of its poles is the textbook ζ = (R/2)·√(C/L).
    p = phys.poles(phys.switch_network(False), vals, w0)
    assert phys.damping_ratio(p)[0] == pytest.approx(rp / 2 * math.sqrt(cp / lp), rel=1e-6)


def test_snubbed_node_matches_scipy_step_of_the_transfer_function():
    # scipy.signal.step on H(s) = Zsh/(Zser + Zsh), written by hand from the same circuit:
    # Zser = Rp + sLp, Ysh = sCp + sC/(1 + sRC), so
    # H = (1 + sRC) / ((1 + sRC) + (Rp + sLp)·(sCp·(1 + sRC) + sC)).
    lp, cp, rp, r, c, v = 90e-9, 73e-12, 1.2, 33.0, 220e-12, 48.0
    one_rc = np.array([r * c, 1.0])
    shunt = np.polyadd(np.polymul([cp, 0.0], one_rc), [c, 0.0])
    den = np.polyadd(one_rc, np.polymul([lp, rp], shunt))
    t = np.linspace(0.0, 80e-9, 8001)
    _, ref = signal.step((one_rc, den), T=t)
    y = phys.switch_wave(rlc_switch(lp, cp, rp, r, c), v, t, snubbed=True)[0]
    assert np.max(np.abs(y - v * ref)) < 1e-3 * v
    # And the overshoot the analysis reports is the peak of that response above V.
    p = phys.poles(phys.switch_network(True), rlc_switch(lp, cp, rp, r, c), 1e8)
    edge = phys.switch_edge(rlc_switch(lp, cp, rp, r, c), v, 250e3, phys.time_grid(p))
    assert edge["overshoot"][0] == pytest.approx(v * ref.max() - v, abs=2e-3 * v)


def test_resistor_power_is_c_v_squared_f_on_a_hard_switched_node():
    # Common practice: P = C·V²·f_sw. Each edge puts ½·C·V² into R
    # (textbook: charging a capacitor from a step through a resistor dissipates ½·C·V²
    # whatever R is). With C_p far below C and a small loop resistance, ringing adds little.
    lp, cp, rp, r, c, v, f = 20e-9, 1e-12, 0.01, 47.0, 1e-9, 48.0, 250e3
    vals = rlc_switch(lp, cp, rp, r, c)
    p = phys.poles(phys.switch_network(True), vals, 1e8)
    edge = phys.switch_edge(vals, v, f, phys.time_grid(p))
    assert edge["e_off"][0] == pytest.approx(0.5 * c * v ** 2, rel=5e-3)
    assert edge["power"][0] == pytest.approx(c * v ** 2 * f, rel=5e-3)


def test_resistor_power_grows_with_the_snubber_capacitance():
    # P ≈ C·V²·f_sw (common practice): tripling C roughly triples the dissipation.
    lp, cp, rp, v, f = 90e-9, 73e-12, 1.0, 48.0, 250e3
    vals = phys.switch_values(lp, cp, rp, 2, np.array([35.0, 35.0]),
                              np.array([220e-12, 660e-12]))
    p = phys.poles(phys.switch_network(True), vals, 1e8)
    edge = phys.switch_edge(vals, v, f, phys.time_grid(p))
    assert 2.4 < edge["power"][1] / edge["power"][0] < 3.2


# --------------------------------------------------------------------------
# inductive load


def test_dc_kick_matches_a_state_space_model_with_the_coil_current_as_initial_state():
    # Independent formulation: after the contact opens, the supply V, the coil (L, Rc), R and
    # C form one series loop with x = [i, v_C], i(0) = V/Rc, v_C(0) = 0:
    # L·di/dt = V − (Rc + R)·i − v_C,  C·dv_C/dt = i,  contact voltage = R·i + v_C.
    # scipy.signal.lsim solves it with X0; the supply enters as a constant input.
    ll, rc, r, c, v = 85e-3, 48.0, 47.0, 10e-6, 24.0
    a = [[-(rc + r) / ll, -1 / ll], [1 / c, 0.0]]
    b = [[1 / ll], [0.0]]
    cc = [[r, 1.0]]
    t = np.linspace(0.0, 30e-3, 6001)
    _, ref, _ = signal.lsim((a, b, cc, [[0.0]]), U=np.full(t.size, v), T=t, X0=[v / rc, 0.0])
    vals = phys.load_values(ll, rc, 1, r_ohm=np.array([r]), c_f=np.array([c]))
    out = phys.load_kick(vals, v / rc, False, 50.0, t, want=("contact",))
    # The engine's first sample is the instant before the opening (closed contact, 0 V).
    assert out["contact"][0][0] == 0.0
    assert np.max(np.abs(out["contact"][0][1:] - ref[1:])) < 2e-3 * np.max(np.abs(ref))
    assert out["peak"][0] == pytest.approx(np.max(ref), rel=2e-3)


def test_coil_energy_is_accounted_for():
    # Conservation of energy: ½·L·I² + energy from the supply = energy in the resistors +
    # energy left on the capacitor (+ in the coil); the supply delivers V·∫i dt (DC).
    ll, rc, r, c, v = 85e-3, 48.0, 100.0, 4.7e-6, 24.0
    i0 = v / rc
    vals = phys.load_values(ll, rc, 1, r_ohm=np.array([r]), c_f=np.array([c]))
    p = phys.poles(phys.load_network(True), vals, 1e3)
    t = phys.time_grid(p)
    out = phys.load_kick(vals, i0, False, 50.0, t, want=("i_coil",))
    supplied = v * np.trapezoid(out["i_coil"][0], t)
    stored = 0.5 * c * out["v_c_end"][0] ** 2 + 0.5 * ll * out["i_coil_end"][0] ** 2
    lost = out["e_open"][0] + out["e_coil_r"][0]
    assert 0.5 * ll * i0 ** 2 + supplied == pytest.approx(lost + stored, rel=2e-3)
    assert out["v_end"][0] == pytest.approx(v, rel=1e-3)   # open contact sees the supply


def test_unsnubbed_kick_reaches_the_energy_balance_peak():
    # ½·L·I² = ½·C·ΔV² (textbook LC energy exchange): with little damping the contact
    # rises to about V + I·√(L/C_stray) within a quarter period.
    ll, rc, stray, v = 85e-3, 48.0, 50e-12, 24.0
    i0 = v / rc
    f = float(phys.resonance_hz(ll, stray))
    t = np.linspace(0.0, 0.6 / f, 4001)
    y = phys.load_kick_unsnubbed(phys.load_values(ll, rc, 1, stray_f=stray), i0, False, 50.0, t)
    assert y.max() == pytest.approx(v + i0 * math.sqrt(ll / stray), rel=5e-3)


def test_ac_leakage_through_the_open_contact_follows_ohms_law():
    # Ohm's law with complex impedances: I = V/|Rc + jωL + R + 1/(jωC)| (stray in parallel,
    # negligible here); the resistor dissipates I²·R.
    ll, rc, r, c, v, f = 3.2, 620.0, 220.0, 220e-9, 230.0, 50.0
    vals = phys.load_values(ll, rc, 1, stray_f=1e-15, r_ohm=np.array([r]), c_f=np.array([c]))
    leak = phys.load_leak(vals, v, f)
    w = 2 * math.pi * f
    i = v / abs(complex(rc + r, w * ll - 1 / (w * c)))
    assert leak["i_rms"][0] == pytest.approx(i, rel=1e-6)
    assert leak["power"][0] == pytest.approx(i * i * r, rel=1e-6)
    # Interrupted current at the peak: √2·V/|R + jωL|.
    assert phys.coil_current(v, ll, rc, True, f) == pytest.approx(
        math.sqrt(2) * v / math.hypot(rc, w * ll), rel=1e-12)


# --------------------------------------------------------------------------
# stages: proposal, ratings, safety


@pytest.mark.slow
def test_proposed_values_are_preferred_and_near_the_rules(tmp_path):
    project = load_project(write(tmp_path, SWITCH))
    r = analyse_stage(project.stages[0], project.analysis)
    c_par, l_par = phys.parasitics_from_ringing(62e6, 220e-12, 31e6)
    z0 = math.sqrt(l_par / c_par)
    rv, cv = r.stage.parts["r"].value, r.stage.parts["c"].value
    # IEC 60063: E24 for the 5 % resistor, E12 for the 10 % capacitor.
    assert is_preferred(rv, "E24") and is_preferred(cv, "E12")
    step24, step12 = 10 ** (1 / len(SERIES["E24"])), 10 ** (1 / len(SERIES["E12"]))
    assert 1 / step24 <= rv / z0 <= step24                     # R near Z0 (common practice)
    assert 1 / step12 <= cv / (3 * c_par) <= step12            # C a few times C_par
    assert kind(r).json()["proposed"] is True
    assert r.stage.parts["r"].model == "proposed"
    names = {m.name for m in r.metrics}
    assert {"damping", "overshoot", "resistor_power", "capacitor_voltage", "parasitic_c",
            "parasitic_l", "characteristic_impedance", "ring_frequency"} <= names
    assert r.metric("parasitic_c").nominal == pytest.approx(c_par, rel=1e-9)
    # The snubber damps: overshoot and damping both better than without it.
    js = kind(r).json()
    assert js["damping"] > 5 * js["damping_without"]
    assert js["peak_voltage"] < js["peak_voltage_without"]
    assert any(isinstance(b, WaveformChart) and "ringing" in b.title for b in kind(r).blocks())
    assert any(isinstance(b, SweepChart) and b.title.startswith("Trade-off")
               for b in kind(r).blocks())


@pytest.mark.slow
def test_proposed_load_snubber_keeps_the_kick_near_twice_the_supply(tmp_path):
    # Energy balance ½·L·I² = ½·C·ΔV² (textbook) with ΔV = V sets C; R = √(L/C) makes the
    # first jump I·R about V as well, so the contact sees at most about 2·V (common practice);
    # on DC, Rc = V/I = √(L/C) makes the loop critically damped and the peak about V.
    text = """
[[stage]]
id = "valve"
title = "24 V valve coil"
kind = "snubber"
across = "inductive-load"
voltage = "24 V"
coil = { l = "85 mH", r = "48 ohm" }
switching_frequency = "2 Hz"
stray = "100 pF"
"""
    project = load_project(write(tmp_path, text))
    r = analyse_stage(project.stages[0], project.analysis)
    i0, ll = 24 / 48, 85e-3
    cv, rv = r.stage.parts["c"].value, r.stage.parts["r"].value
    assert is_preferred(cv, "E12") and is_preferred(rv, "E24")
    assert cv == pytest.approx(ll * (i0 / 24) ** 2, rel=0.12)
    assert rv == pytest.approx(math.sqrt(ll / cv), rel=0.1)
    js = kind(r).json()
    assert js["coil_energy"] == pytest.approx(0.5 * ll * i0 ** 2, rel=1e-12)
    assert 0.95 * 24 < js["peak_voltage"] < 2.3 * 24
    assert r.metric("damping").nominal == pytest.approx(1.0, abs=0.1)
    assert js["closing_current"] == pytest.approx(24 / rv, rel=1e-12)   # Ohm's law
    assert r.metric("parasitic_c").nominal == pytest.approx(100e-12)
    assert kind(r).peak_voltage_v < 60


@pytest.mark.slow
def test_mains_snubber_is_rated_and_carries_the_cautions(tmp_path):
    from rcdoc.note.page import stage_context
    project = load_project(write(tmp_path, LOAD + SWITCH))
    r_load = analyse_stage(project.stages[0], project.analysis)
    r_sw = analyse_stage(project.stages[1], project.analysis)
    assert {v.detail for v in r_load.ratings} == {"rating"}
    assert {v.metric for v in r_load.ratings} == {"resistor_power", "capacitor_voltage"}
    assert r_load.status == "pass"
    # 230 V rms is 325 V peak (√2·rms): above the default 60 V, so the page has the cautions.
    assert kind(r_load).peak_voltage_v >= 230 * math.sqrt(2)
    assert stage_context(r_load, project)["safety"] is not None
    assert kind(r_sw).peak_voltage_v > 48
    assert stage_context(r_sw, project)["safety"] is not None      # 48 V rings above 60 V
    low = load_project(write(tmp_path, SWITCH.replace('"48 V"', '"12 V"'), "low.toml"))
    r_low = analyse_stage(low.stages[0], low.analysis)
    assert kind(r_low).peak_voltage_v < 60
    assert stage_context(r_low, low)["safety"] is None


@pytest.mark.slow
def test_under_rated_resistor_fails_its_stage_and_the_build_exits_1(tmp_path):
    text = LOAD.replace('power = "0.5 W"', 'power = "10 mW"')
    path = write(tmp_path, text)
    out = tmp_path / "out"
    assert cli.main(["build", path, "-o", str(out), "--quiet", "--samples", "200"]) == 1
    data = json.loads((out / "p.json").read_text(encoding="utf-8"))
    stage = data["stages"][0]
    assert stage["status"] == "fail" and data["status"] == "fail"
    rating = [c for c in stage["checks"] if c.get("part") == "R9"]
    assert rating and rating[0]["metric"] == "resistor_power" and rating[0]["status"] == "fail"
    assert stage["snubber"]["across"] == "inductive-load"
    assert (out / "p.pdf").stat().st_size > 0


# --------------------------------------------------------------------------
# project keys


BAD = [
    (SWITCH.replace('frequency_with_added = "31 MHz"', 'frequency_with_added = "70 MHz"'),
     "stage[1].ringing.frequency_with_added", "lower"),
    (SWITCH.replace('frequency_with_added = "31 MHz"', 'frequency_with_added = "62 MHz"'),
     "stage[1].ringing.frequency_with_added", "lower"),
    (SWITCH.replace('across = "switch"\n', ""), "stage[1].across", "across"),
    (SWITCH.replace('across = "switch"', 'across = "diode"'), "stage[1].across", "diode"),
    (SWITCH.replace('voltage = "48 V"\n', ""), "stage[1].voltage", "voltage"),
    (SWITCH.replace('voltage = "48 V"', 'voltage = "48 Hz"'), "stage[1].voltage", ""),
    (SWITCH + 'parasitic = { l = "12 nH" }\n', "stage[1].parasitic.l", "not both"),
    (SWITCH.replace('ringing = {', 'ringing = { dummy = 1,'), "stage[1].ringing.dummy", "unknown"),
    (SWITCH.replace(', frequency_with_added = "31 MHz"', ""),
     "stage[1].ringing.frequency_with_added", "missing"),
    (SWITCH.replace('ringing = { frequency = "62 MHz", with_added = "220 pF", '
                    'frequency_with_added = "31 MHz" }', 'parasitic = { l = "12 nH" }'),
     "stage[1].parasitic.c", "missing"),
    (SWITCH + 'coil = { l = "1 H", r = "1 kohm" }\n', "stage[1].coil", "inductive-load"),
    (SWITCH + 'parts.r = { value = "10" }\n', "stage[1].parts.c", "both"),
    (LOAD.replace('coil = { l = "3.2 H", r = "620 ohm" }\n', ""), "stage[1].coil", "coil"),
    (LOAD.replace("ac = true", 'ac = "yes"'), "stage[1].ac", "true or false"),
    (LOAD.replace("ac = true", "ac = false") + 'line_frequency = "60 Hz"\n',
     "stage[1].line_frequency", "AC"),
    (LOAD + 'ringing = { frequency = "1 MHz" }\n', "stage[1].ringing", "switch"),
    (LOAD + 'parts.l = { value = "1 mH" }\n', "stage[1].parts.l", "r and c"),
    (SWITCH + 'drive = { step = "5 V" }\n', "stage[1].drive", "does not apply"),
]


@pytest.mark.parametrize("text,path,words", BAD)
def test_mistakes_name_the_key_path(tmp_path, text, path, words):
    with pytest.raises(ProjectError) as err:
        load_project(write(tmp_path, text))
    assert err.value.path == path
    assert words.lower() in str(err.value).lower()
