"""Resistor pulse stresses, the caution box by kind of hazard, and the
inductive-load snubber's names and breakdown bound.

Reference checks and their sources (named beside each check):
- a step of V into R in series with C (and a source resistance Rs), from rest:
  the current just after the edge is V/(R + Rs) (the capacitor holds no
  charge), so the resistor takes I²·R = V²·R/(R + Rs)², V²/R with no source;
  a full charge puts ½·C·V² into the capacitor and as much into the series
  resistance, shared as R : Rs, so ½·C·V² in R alone whatever R (textbook
  RC charging);
- a square wave whose half period is many time constants recharges C fully at
  each edge: the same ½·C·V² and V²/R per edge (textbook);
- Thomson's formula and the stored energy ½·C·V² (textbook) for the cautions.
Note: V²/(R + Rs) is the power the source delivers at the edge; the resistor's
own share of it is V²·R/(R + Rs)², which is what a pulse rating judges.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import pytest

from boards import analyse_one, load
from rcdoc.errors import ProjectError
from rcdoc.kinds import analyse_stage
from rcdoc.note.partslist import parts_csv
from rcdoc.note.safety import STORED_ENERGY_J, safety_box


def lowpass(drive: str, r: str = "10k", c: str = "100n", extra: str = "", r_keys: str = "",
            c_keys: str = "") -> str:
    return f"""
[[stage]]
id = "s"
title = "RC low-pass"
kind = "rc-lowpass"
{extra}
drive = {drive}
parts.r = {{ ref = "R1", value = "{r}", tolerance = "1%"{r_keys} }}
parts.c = {{ ref = "C1", value = "{c}", tolerance = "1%", dielectric = "C0G"{c_keys} }}
"""


def pulse(r, metric: str):
    """(nominal, worst) of the resistor's pulse stress ``metric``."""
    ps = {p.metric: p for p in r.stresses["r"].pulse}[metric]
    return ps.nominal, ps.worst


# --------------------------------------------------------------------------
# surge power and energy per edge, through the pipeline


@pytest.mark.parametrize("source, rs", [("", 0.0), ('source = "1 kohm"', 1e3)])
def test_step_surge_and_energy_per_edge_follow_the_textbook(tmp_path, source, rs):
    r_ohm, c_f, v = 10e3, 100e-9, 5.0
    res = analyse_one(tmp_path, lowpass('{ step = "5 V" }', extra=source), "samples = 50")
    surge, _ = pulse(res, "resistor_surge")
    energy, _ = pulse(res, "resistor_edge_energy")
    # Textbook: I = V/(R + Rs) just after the edge, P_R = I²·R.
    assert surge == pytest.approx(v ** 2 * r_ohm / (r_ohm + rs) ** 2, rel=1e-4)
    # Textbook: a full charge dissipates ½·C·V² in the series resistance, R's share R/(R + Rs).
    assert energy == pytest.approx(0.5 * c_f * v ** 2 * r_ohm / (r_ohm + rs), rel=1e-4)
    # The settled power after the step is the rating's old number and far below the surge.
    assert res.stresses["r"].nominal < 1e-6 * surge


@pytest.mark.parametrize("r_value, r_ohm", [("1k", 1e3), ("2k2", 2.2e3)])
def test_full_charge_energy_does_not_depend_on_r(tmp_path, r_value, r_ohm):
    c_f, v = 100e-9, 5.0
    res = analyse_one(tmp_path, lowpass('{ step = "5 V" }', r=r_value), "samples = 50")
    # Textbook: ½·C·V² in R for a full charge, whatever R.
    assert pulse(res, "resistor_edge_energy")[0] == pytest.approx(0.5 * c_f * v ** 2, rel=1e-4)
    assert pulse(res, "resistor_surge")[0] == pytest.approx(v ** 2 / r_ohm, rel=1e-4)


def test_pwm_edges_recharge_fully_when_the_period_is_long(tmp_path):
    # 1 kΩ, 10 nF: τ = 10 µs; a 1 kHz, 50 % PWM holds each level for 50 τ, so
    # every edge is a full charge or discharge (textbook): ½·C·V² and V²/R.
    res = analyse_one(tmp_path, lowpass('{ pwm = "5 V", frequency = "1 kHz", duty = "50%" }',
                                        r="1k", c="10n"), "samples = 50")
    assert pulse(res, "resistor_edge_energy")[0] == pytest.approx(0.5 * 10e-9 * 25, rel=0.01)
    assert pulse(res, "resistor_surge")[0] == pytest.approx(25 / 1e3, rel=0.01)


@pytest.mark.slow
def test_a_pulse_energy_rating_below_the_edge_energy_fails(tmp_path):
    # ½·C·V² = ½·100 nF·(5 V)² = 1.25 µJ per edge (textbook) against a 1 µJ rating.
    res = analyse_one(tmp_path, lowpass('{ step = "5 V" }', r_keys=', pulse = "1 uJ"'),
                      "samples = 50")
    (v,) = [v for v in res.ratings if v.metric == "resistor_edge_energy"]
    assert v.status == "fail" and v.max == pytest.approx(1e-6)
    assert v.worst > 1.25e-6 * 0.99
    assert res.status == "fail"
    ok = analyse_one(tmp_path, lowpass('{ step = "5 V" }', r_keys=', pulse = "2 uJ"'),
                     "samples = 50", name="ok")
    assert [v.status for v in ok.ratings] == ["pass"]


@pytest.mark.slow
def test_a_peak_power_rating_judges_the_surge_and_reaches_the_parts_list(tmp_path):
    # V²/R = (5 V)²/10 kΩ = 2.5 mW at the edge (textbook) against a 2 mW peak rating.
    res = analyse_one(tmp_path, lowpass('{ step = "5 V" }', r_keys=', pulse = "2 mW"'),
                      "samples = 50")
    (v,) = [v for v in res.ratings if v.metric == "resistor_surge"]
    assert v.status == "fail"
    row = next(csv.DictReader(io.StringIO(parts_csv([res]).decode())))
    assert row["pulse_unit"] == "W" and float(row["pulse_rating"]) == pytest.approx(2e-3)
    assert float(row["surge_worst"]) > 2.5e-3 * 0.99
    assert float(row["pulse_margin"]) < 0 and row["pulse_status"] == "fail"
    assert float(row["edge_energy_worst"]) == pytest.approx(1.25e-6, rel=0.02)


@pytest.mark.parametrize("raw, words", [('"2"', "state the unit"), ('"5 V"', "power"),
                                        ('"1 J"', "applies to resistors")])
def test_a_pulse_rating_needs_its_unit_and_a_resistor(tmp_path, raw, words):
    c_keys = f", pulse = {raw}" if "resistors" in words else ""
    r_keys = "" if c_keys else f", pulse = {raw}"
    with pytest.raises(ProjectError, match=words) as e:
        load(tmp_path, lowpass('{ step = "5 V" }', r_keys=r_keys, c_keys=c_keys))
    assert ".pulse" in str(e.value)


# --------------------------------------------------------------------------
# the caution box by kind of hazard


@pytest.mark.slow
def test_a_48_v_dc_stage_speaks_of_high_dc_not_of_mains(tmp_path):
    res = analyse_one(tmp_path, lowpass('{ step = "48 V" }'), "samples = 20")
    box = safety_box(res, hazardous_v=40.0)
    text = " ".join(box["items"]).lower()
    assert box["head"].startswith("High DC voltage")
    assert "mains" not in text and "safety-rated" not in text
    assert "licensed professional" in text             # always defers to codes and practice
    assert safety_box(res, hazardous_v=60.0) is None   # 100 nF at 48 V stores 0.1 mJ


@pytest.mark.slow
def test_a_large_capacitor_is_called_out_for_stored_energy_below_the_threshold(tmp_path):
    # ½·C·V² = ½·2.2 mF·(48 V)² = 2.5 J (textbook), above the 1 J of common practice.
    res = analyse_one(tmp_path, lowpass('{ step = "48 V" }', r="10", c="2.2m"), "samples = 20")
    assert 0.5 * 2.2e-3 * 48 ** 2 > STORED_ENERGY_J
    box = safety_box(res, hazardous_v=60.0)
    assert box["head"].startswith("Stored energy")
    assert any("C1 holds up to 2.5" in item for item in box["items"])
    assert "licensed professional" in box["items"][-1]


LOAD = """
[[stage]]
id = "relay"
title = "Relay contact"
kind = "snubber"
across = "inductive-load"
voltage = "{v}"
{extra}
coil = {{ l = "3.2 H", r = "620 ohm" }}
switching_frequency = "0.1 Hz"
parts.r = {{ ref = "R9", value = "220", power = "0.5 W" }}
parts.c = {{ ref = "C9", value = "220 nF", voltage = "1600 V", dielectric = "film-pp" }}
"""


@pytest.mark.slow
def test_a_230_v_ac_snubber_speaks_of_mains(tmp_path):
    from rcdoc.note.page import stage_context
    project = load(tmp_path, LOAD.format(v="230 V", extra="ac = true"), "samples = 50")
    res = analyse_stage(project.stages[0], project.analysis)
    box = stage_context(res, project)["safety"]
    assert box["head"].startswith("Mains voltage")
    assert any("safety-rated classes" in item for item in box["items"])
    assert "licensed professional" in box["items"][-1]


# --------------------------------------------------------------------------
# inductive-load snubbers: names and the breakdown bound


def _load(tmp_path: Path, extra: str, name: str):
    project = load(tmp_path, LOAD.format(v="24 V", extra=extra), "samples = 30", name=name)
    return analyse_stage(project.stages[0], project.analysis)


def _stress_rows(res):
    (tab,) = [b for b in res.kind_result.blocks() if getattr(b, "title", "") == "Stresses"]
    return {row[0]: row for row in tab.rows}


@pytest.mark.slow
def test_breakdown_bounds_the_unsnubbered_peak(tmp_path):
    # 3.2 H with 50 pF of stray rings towards √(L/C)·I, tens of kV (Thomson's formula,
    # textbook LC): far above a 600 V contact, which then bounds it.
    bounded = _load(tmp_path, 'breakdown = "600 V"', "a")
    js = bounded.kind_result.json()
    assert js["peak_voltage_without"] == pytest.approx(600.0) and js["breakdown"] == 600.0
    assert "breaks down at 600 V" in bounded.kind_result.summary
    assert _stress_rows(bounded)["Peak contact voltage"][1] == "breaks down at 600 V"
    # Without a stated breakdown no number is quoted: the contact arcs.
    free = _load(tmp_path, "", "b")
    assert free.kind_result.json()["peak_voltage_without"] is None
    assert "the contact arcs" in free.kind_result.summary
    assert _stress_rows(free)["Peak contact voltage"][1] == "the contact arcs"
    # A breakdown above the ideal peak leaves the peak as computed.
    high = _load(tmp_path, 'breakdown = "10 MV"', "c")
    assert high.kind_result.json()["peak_voltage_without"] < 10e6


def test_inductive_load_metrics_are_named_for_what_they_are(tmp_path):
    from rcdoc.note.context import metrics_table
    res = _load(tmp_path, "", "d")
    labels = [row[0] for row in metrics_table(res)["rows"]]
    assert "Stray capacitance across the contact" in labels
    assert "Coil inductance" in labels
    assert "Ring frequency after opening (no snubber)" in labels
    assert not any(lab.startswith(("Parasitic", "Loop")) for lab in labels)
    # The JSON keys stay.
    assert {m.name for m in res.metrics} >= {"parasitic_c", "parasitic_l", "ring_frequency"}


def test_breakdown_is_a_voltage_and_only_for_inductive_loads(tmp_path):
    with pytest.raises(ProjectError, match="voltage"):
        load(tmp_path, LOAD.format(v="24 V", extra='breakdown = "600 pF"'))
    switch = ('[[stage]]\nid = "sw"\ntitle = "t"\nkind = "snubber"\nacross = "switch"\n'
              'voltage = "48 V"\nswitching_frequency = "250 kHz"\nbreakdown = "100 V"\n'
              'ringing = { frequency = "62 MHz", with_added = "220 pF", '
              'frequency_with_added = "31 MHz" }\n')
    with pytest.raises(ProjectError, match="inductive-load"):
        load(tmp_path, switch, name="sw")
