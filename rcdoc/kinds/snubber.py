"""snubber: a series RC that damps a ringing switch node or an opening inductive load.

This module reads the stage's keys, proposes values when ``parts`` are
omitted, runs the analysis over the batch of snubber values (the physics is
rcdoc.analysis.snubber) and returns a SnubberResult whose block specs
(rcdoc.analysis.blocks) describe its page: waveforms with and without the
snubber, derived parasitics, stresses, energy and the trade-off against the
snubber capacitance; the note draws them. It replaces the generic
frequency-domain analysis (``analyse``). It must not compute physics itself
beyond bookkeeping, and never draws.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from rcdoc.analysis import checks as checkmod
from rcdoc.analysis import snubber as phys
from rcdoc.analysis import spread
from rcdoc.analysis import worstcase
from rcdoc.errors import ProjectError
from rcdoc.kinds import recipes as sch
from rcdoc.kinds.recipes import Label
from rcdoc.input.model import Part
from rcdoc.input.preferred import nearest
from rcdoc.input.quantities import format_quantity, parse_positive
from rcdoc.kinds import base
from rcdoc.kinds._snubber_pages import (_load_notes, _load_page, _supply_peak, _switch_notes,
                                        _switch_page, fq)

NAME = "snubber"
OPTIONS = ("across", "voltage", "switching_frequency", "ringing", "parasitic", "coil", "ac",
           "line_frequency", "stray", "breakdown")
PASSBAND = "low"
TITLE = "Snubber"
ROLES = ("r", "c")
METRIC_NAMES = ("damping", "overshoot", "resistor_power", "capacitor_voltage", "parasitic_c",
                "parasitic_l", "characteristic_impedance", "ring_frequency", "resistor_surge",
                "resistor_edge_energy")
HEADLINE = METRIC_NAMES
ACROSS = ("switch", "inductive-load")
# Across an inductive load the registry's switch-node names would mislead: the
# "parasitic" capacitance is the stray across the contact, the "loop" the coil.
LOAD_LABELS = {"parasitic_c": "Stray capacitance across the contact",
               "parasitic_l": "Coil inductance",
               "ring_frequency": "Ring frequency after opening (no snubber)"}
SWITCH_ONLY = ("ringing", "parasitic")
LOAD_ONLY = ("coil", "ac", "line_frequency", "stray", "breakdown")
NOT_FOR_SNUBBERS = ("source", "load", "marks", "drive")
SNUBBER_C_PER_PARASITIC = 3.0   # proposed C = 3 × C_par ("several times", common practice)




@dataclass(frozen=True)
class SnubberResult:
    """The snubber's own results (the KindResult of rcdoc.analysis.results)."""
    across: str
    proposed: bool
    summary: str               # one line for the summary table
    peak_voltage_v: float      # highest voltage over all samples, supply included
    record: tuple              # (key, value) pairs of the JSON entry, in order
    figures: tuple             # block specs of the page (rcdoc.analysis.blocks)

    def blocks(self) -> tuple:
        return self.figures

    def json(self) -> dict:
        return {**dict(self.record), "proposed": self.proposed}



# --------------------------------------------------------------------------
# project keys


def _table(t, key, keys, required, path):
    from rcdoc.input.project import check_keys, need_table
    tab = need_table(t[key], f"{path}.{key}")
    check_keys(tab, keys, f"{path}.{key}")
    for k in required:
        if k not in tab:
            raise ProjectError(f"'{k}' is missing", path=f"{path}.{key}.{k}")
    return tab


def parse_options(t: dict, path: str) -> dict:
    from rcdoc.input.project import need_bool
    for key in NOT_FOR_SNUBBERS:
        if key in t:
            raise ProjectError(f"'{key}' does not apply to a snubber: its circuit is set by "
                               "'across' and the keys that go with it", path=f"{path}.{key}")
    if "across" not in t:
        raise ProjectError("a snubber needs 'across' = \"switch\" or \"inductive-load\"",
                           path=f"{path}.across")
    across = t["across"]
    if across not in ACROSS:
        raise ProjectError(f"'{across}' is not a snubber position; use \"switch\" or "
                           "\"inductive-load\"", path=f"{path}.across")
    for key in ("voltage", "switching_frequency"):
        if key not in t:
            raise ProjectError(f"a snubber needs '{key}'", path=f"{path}.{key}")
    o = {"across": across, "voltage_v": parse_positive(t["voltage"], "V", f"{path}.voltage"),
         "switching_hz": parse_positive(t["switching_frequency"], "Hz",
                                        f"{path}.switching_frequency")}
    lo, hi = SWITCHING_RANGE_HZ
    if not lo <= o["switching_hz"] <= hi:
        raise ProjectError(f"a switching frequency of {format_quantity(o['switching_hz'], 'Hz')}"
                           f" is outside the physical range {format_quantity(lo, 'Hz')} to "
                           f"{format_quantity(hi, 'Hz')} (check the unit)",
                           path=f"{path}.switching_frequency")
    wrong = LOAD_ONLY if across == "switch" else SWITCH_ONLY
    for key in wrong:
        if key in t:
            other = "inductive-load" if across == "switch" else "switch"
            raise ProjectError(f"'{key}' belongs to across = \"{other}\"", path=f"{path}.{key}")
    if across == "switch":
        o.update(_parse_switch(t, path))
        if o["measured"] is not None and o["measured"][0] <= o["switching_hz"]:
            raise ProjectError("the ring must be faster than the switching it follows: "
                               f"{format_quantity(o['measured'][0], 'Hz')} is not above the "
                               "switching frequency", path=f"{path}.ringing.frequency")
    else:
        coil = _table(t, "coil", ("l", "r"), ("l", "r"), path) if "coil" in t else None
        if coil is None:
            raise ProjectError("an inductive-load snubber needs coil = { l = ..., r = ... }",
                               path=f"{path}.coil")
        o["coil_l_h"] = parse_positive(coil["l"], "H", f"{path}.coil.l")
        o["coil_r_ohm"] = parse_positive(coil["r"], "ohm", f"{path}.coil.r")
        o["ac"] = need_bool(t.get("ac", False), f"{path}.ac")
        if "line_frequency" in t and not o["ac"]:
            raise ProjectError("'line_frequency' applies to an AC supply (ac = true)",
                               path=f"{path}.line_frequency")
        o["line_hz"] = parse_positive(t.get("line_frequency", 50.0), "Hz",
                                      f"{path}.line_frequency")
        o["stray_f"] = parse_positive(t.get("stray", phys.DEFAULT_STRAY_F), "F", f"{path}.stray")
        # The voltage the open switch or contact withstands before it breaks down or
        # arcs; bounds the peak quoted without a snubber. None: the contact arcs.
        o["breakdown_v"] = (parse_positive(t["breakdown"], "V", f"{path}.breakdown")
                            if "breakdown" in t else None)
    return o


# Plausibility of a ringing measurement (common practice, from memory): an
# oscilloscope reading of a ring frequency is good to about 0.1 %, so a smaller
# shift cannot be told from the reading error (62 MHz against 61.9999999 MHz
# gave 21 pH and 642 W); switch-node rings on a board lie between about
# 10 kHz (transformer leakage) and a few GHz (package parasitics).
MIN_SHIFT = 1e-3
RING_RANGE_HZ = (10e3, 10e9)
SWITCHING_RANGE_HZ = (1e-3, 100e6)


def _plausible_ringing(f1: float, f2: float, path: str) -> None:
    lo, hi = RING_RANGE_HZ
    for f, key in ((f1, "frequency"), (f2, "frequency_with_added")):
        if not lo <= f <= hi:
            raise ProjectError(f"a switch-node ring at {format_quantity(f, 'Hz')} is outside "
                               f"the physical range {format_quantity(lo, 'Hz')} to "
                               f"{format_quantity(hi, 'Hz')} of board parasitics (check the "
                               "unit)", path=f"{path}.ringing.{key}")
    if f1 / f2 - 1 < MIN_SHIFT:
        raise ProjectError(f"the added capacitance moves the ring by only "
                           f"{(f1 / f2 - 1) * 100:.2g} %, less than the {MIN_SHIFT * 100:g} % "
                           "a frequency reading resolves: the parasitics cannot be told from "
                           "the measurement error (add more capacitance, e.g. enough to "
                           "halve the frequency)", path=f"{path}.ringing.frequency_with_added")


def _parse_switch(t: dict, path: str) -> dict:
    o: dict = {"rp_ohm": None, "measured": None}
    if "ringing" in t:
        ring = _table(t, "ringing", ("frequency", "with_added", "frequency_with_added"),
                      ("frequency", "with_added", "frequency_with_added"), path)
        f1 = parse_positive(ring["frequency"], "Hz", f"{path}.ringing.frequency")
        cadd = parse_positive(ring["with_added"], "F", f"{path}.ringing.with_added")
        f2 = parse_positive(ring["frequency_with_added"], "Hz",
                            f"{path}.ringing.frequency_with_added")
        if f2 >= f1:
            raise ProjectError("adding capacitance must lower the ringing frequency; "
                               f"{format_quantity(f2, 'Hz')} is not below "
                               f"{format_quantity(f1, 'Hz')} (check the measurement)",
                               path=f"{path}.ringing.frequency_with_added")
        _plausible_ringing(f1, f2, path)
        o["cp_f"], o["lp_h"] = phys.parasitics_from_ringing(f1, cadd, f2)
        o["measured"] = (f1, cadd, f2)
        if "parasitic" in t:
            par = _table(t, "parasitic", ("l", "c", "r"), (), path)
            for k in ("l", "c"):
                if k in par:
                    raise ProjectError("the parasitics are derived from 'ringing'; give "
                                       "either the measurement or the values, not both",
                                       path=f"{path}.parasitic.{k}")
            if "r" in par:
                o["rp_ohm"] = parse_positive(par["r"], "ohm", f"{path}.parasitic.r")
    elif "parasitic" in t:
        par = _table(t, "parasitic", ("l", "c", "r"), ("l", "c"), path)
        o["lp_h"] = parse_positive(par["l"], "H", f"{path}.parasitic.l")
        o["cp_f"] = parse_positive(par["c"], "F", f"{path}.parasitic.c")
        if "r" in par:
            o["rp_ohm"] = parse_positive(par["r"], "ohm", f"{path}.parasitic.r")
    else:
        raise ProjectError("a switch snubber needs 'ringing' (two measurements) or "
                           "'parasitic' = { l = ..., c = ... }", path=f"{path}.ringing")
    return o


def check_roles(parts, options, path):
    for role in parts:
        if role not in ROLES:
            raise ProjectError(f"role '{role}' is not part of a snubber; it takes r and c",
                               path=f"{path}.{role}")
    if len(parts) == 1:
        missing = "c" if "r" in parts else "r"
        raise ProjectError(f"give both r and c, or neither (to have them proposed); "
                           f"'{missing}' is missing", path=f"{path}.{missing}")


def metrics(options, drive):
    return METRIC_NAMES


def _switch_fixed(o: dict) -> tuple[float, float, float]:
    lp, cp = o["lp_h"], o["cp_f"]
    z0 = math.sqrt(lp / cp)
    rp = o["rp_ohm"] if o["rp_ohm"] is not None else z0 / phys.DEFAULT_LOOP_Q
    return lp, cp, rp


def _ringing(o: dict) -> tuple[float, float]:
    """(L, C) of the loop that rings without the snubber."""
    if o["across"] == "switch":
        return o["lp_h"], o["cp_f"]
    return o["coil_l_h"], o["stray_f"]


def build(stage):
    snubbed = bool(stage.parts)
    return (phys.switch_network(snubbed) if stage.options["across"] == "switch"
            else phys.load_network(snubbed))


def characteristic_hz(stage):
    return float(phys.resonance_hz(*_ringing(stage.options)))


def schematic(stage):
    o, p = stage.options, stage.parts
    r = base.label(p["r"]) if "r" in p else None
    c = base.label(p["c"]) if "c" in p else None
    if o["across"] == "switch":
        return sch.switch_snubber(snubber_r=r, snubber_c=c,
                                  parasitic_l=Label("Lp", format_quantity(o["lp_h"], "H")),
                                  parasitic_c=Label("Cp", format_quantity(o["cp_f"], "F")),
                                  voltage_label=format_quantity(o["voltage_v"], "V"))
    v = format_quantity(o["voltage_v"], "V") + (" rms" if o["ac"] else "")
    return sch.inductive_snubber(snubber_r=r, snubber_c=c,
                                 coil_l=Label("L", format_quantity(o["coil_l_h"], "H")),
                                 coil_r=Label("R", format_quantity(o["coil_r_ohm"], "ohm")),
                                 voltage_label=v, ac=o["ac"])


# --------------------------------------------------------------------------
# proposal


def propose(stage) -> dict[str, Part]:
    """R near the ringing impedance, C from the parasitics (nearest E24 / E12 values).

    Switch node: C = 3·C_par, R = √(Lp/Cp) (common practice). Inductive load:
    C from the energy balance ½·L·I² = ½·C·ΔV² with ΔV the supply peak, so the
    contact sees at most about twice the supply peak; R = √(L/C), which makes
    the first jump I·R about the supply peak as well (common practice).
    """
    o = stage.options
    if o["across"] == "switch":
        lp, cp, _ = _switch_fixed(o)
        c = nearest(SNUBBER_C_PER_PARASITIC * cp, "E12")
        r = nearest(math.sqrt(lp / cp), "E24")
    else:
        i_a = phys.coil_current(o["voltage_v"], o["coil_l_h"], o["coil_r_ohm"], o["ac"],
                                o["line_hz"])
        vpk = _supply_peak(o)
        c = nearest(o["coil_l_h"] * (i_a / vpk) ** 2, "E12")
        r = nearest(math.sqrt(o["coil_l_h"] / c), "E24")
    return {"r": Part(role="r", kind="R", value=r, tol_plus=0.05, tol_minus=0.05,
                      model="proposed", path=f"{stage.path}.parts.r"),
            "c": Part(role="c", kind="C", value=c, tol_plus=0.10, tol_minus=0.10,
                      model="proposed", path=f"{stage.path}.parts.c")}




# --------------------------------------------------------------------------
# analysis


def analyse(stage, analysis, bode: bool = True):
    # ``bode``: a kind's analyse takes it (rcdoc.analysis.analyse.analyse_stage); this
    # kind draws no Bode band, so it changes nothing here.
    from rcdoc.analysis.analyse import MetricResult, StageResult, _assumptions, _part_rows
    proposed = not stage.parts
    if proposed:
        stage = dataclasses.replace(stage, parts=propose(stage))
    batch = spread.build_batch(stage, analysis)
    run = _switch if stage.options["across"] == "switch" else _load
    arrays, extra, network, notes = run(stage, batch)
    metrics = []
    labels = LOAD_LABELS if stage.options["across"] == "inductive-load" else {}
    for name in METRIC_NAMES:
        arr = np.asarray(arrays[name], dtype=float)
        sens = spread.sensitivities(arr, batch) if arr[0] != 0 else np.zeros(len(batch.roles))
        # The range holds the corners, the nominal and every sample (worstcase.py).
        wc, method = worstcase.corners_and_samples(arr[batch.vertex], arr[:batch.mc.stop])
        metrics.append(MetricResult(name=name, at_hz=None, param=None, nominal=float(arr[0]),
                                    samples=arr[batch.mc], worst_case=wc,
                                    worst_case_method=method, label=labels.get(name, ""),
                                    sensitivity={r: float(s) for r, s in zip(batch.roles, sens)}))
    by_name = {m.name: m for m in metrics}
    verdicts = [checkmod.judge(c.metric, by_name[c.metric].samples,
                               nominal=by_name[c.metric].nominal, wc=by_name[c.metric].wc,
                               lo=c.min, hi=c.max, required_yield=c.required_yield)
                for c in stage.checks]
    ratings = []
    r_part = stage.parts["r"]
    for role, metric, rating in (("r", "resistor_power", r_part.power_rating_w),
                                 ("r", "resistor_surge", r_part.pulse_power_w),
                                 ("r", "resistor_edge_energy", r_part.pulse_energy_j),
                                 ("c", "capacitor_voltage", stage.parts["c"].voltage_rating_v)):
        if rating is not None:
            m = by_name[metric]
            ratings.append(checkmod.judge(metric, m.samples, nominal=m.nominal, wc=m.wc, lo=None,
                                          hi=rating, part=stage.parts[role].ref or role,
                                          detail="rating"))
    kind_result = SnubberResult(proposed=proposed, **extra)
    if proposed:
        notes.append("No parts were given: R and C are proposed values (marked 'proposed' in "
                     "the parts table), analysed with the default tolerances (R ±5 %, C ±10 %).")
    empty = np.zeros(0)
    return StageResult(stage=stage, network=network, passband=PASSBAND,
                       char_hz=characteristic_hz(stage), freqs_hz=empty, h_nominal=empty.astype(complex),
                       band=None, metrics=metrics, verdicts=verdicts, ratings=ratings,
                       phasors=None, step=None, pwm=None, parts=_part_rows(stage, analysis),
                       assumptions=notes + _assumptions(stage, analysis), samples=batch.samples,
                       kind_result=kind_result)


def _switch(stage, batch):
    o = stage.options
    v = o["voltage_v"]
    arrays, q = phys.switch_run(v, o["switching_hz"], *_switch_fixed(o), batch.values,
                                batch.rows, batch.mc)
    return arrays, _switch_page(stage, batch, q), phys.switch_network(True), _switch_notes(v)


def _load(stage, batch):
    o = stage.options
    arrays, q = phys.load_run(o["voltage_v"], o["switching_hz"], o["ac"], o["line_hz"],
                              o["coil_l_h"], o["coil_r_ohm"], o["stray_f"],
                              stage.parts["c"].value, batch.values, batch.rows, batch.mc)
    return arrays, _load_page(stage, batch, q), phys.load_network(True), _load_notes(o["ac"])
