"""The snubber kind's page as block specs (data only; rcdoc.note draws them).

Split from rcdoc.kinds.snubber, which it serves: the switch-node and the
inductive-load pages, their tables, notes and trade-off sweeps, and the
formatting they share. Nothing here computes physics beyond bookkeeping.
"""

from __future__ import annotations

import math

import numpy as np

from rcdoc.analysis import snubber as phys
from rcdoc.analysis.blocks import Curve, SweepChart, TableBlock, WaveformChart
from rcdoc.input.quantities import format_quantity


def fq(v, unit, digits=3):
    if not math.isfinite(v):
        return "—"
    return format_quantity(float(v), unit, digits)


def _supply_peak(o: dict) -> float:
    return o["voltage_v"] * (math.sqrt(2.0) if o.get("ac") else 1.0)


def _switch_page(stage, batch, q):
    """The switch snubber's page (block specs), JSON entry and summary line."""
    o, sid, mc = stage.options, stage.id, batch.mc
    v, fsw, lp, cp, rp, z0, f_ring = (q[k] for k in ("v", "fsw", "lp", "cp", "rp", "z0",
                                                      "f_ring"))
    zeta, zeta_wo, edge, t_wo, y_wo = (q[k] for k in ("zeta", "zeta_wo", "edge", "t_wo", "y_wo"))
    r_n, c_n = stage.parts["r"].value, stage.parts["c"].value
    derived = [["Parasitic capacitance Cp", fq(cp, "F"), _how_cp(o)],
               ["Loop inductance Lp", fq(lp, "H"), "Lp = 1/((2π·f)²·Cp)"],
               ["Characteristic impedance Z0", fq(z0, "ohm"), "Z0 = √(Lp/Cp)"],
               ["Ringing frequency", fq(f_ring, "Hz"), "f = 1/(2π·√(Lp·Cp))"],
               ["Loop resistance Rp", fq(rp, "ohm"),
                "as given" if o["rp_ohm"] is not None else
                f"assumed: Z0/{phys.DEFAULT_LOOP_Q:g} (Q = {phys.DEFAULT_LOOP_Q:g})"]]
    stress = [["Damping ratio ζ", f"{zeta_wo:.3f}", f"{zeta[0]:.3f}", _rng(zeta[mc], "1")],
              ["Peak node voltage", fq(y_wo.max(), "V"), fq(edge["peak"][0], "V"),
               _rng(edge["peak"][mc], "V")],
              ["Overshoot above V", fq(y_wo.max() - v, "V"), fq(edge["overshoot"][0], "V"),
               _rng(edge["overshoot"][mc], "V")],
              ["Resistor energy, turn-off edge", "—", fq(edge["e_off"][0], "J"),
               _rng(edge["e_off"][mc], "J")],
              ["Resistor energy, turn-on edge (½·C·V²)", "—", fq(edge["e_on"][0], "J"),
               _rng(edge["e_on"][mc], "J")],
              ["Resistor power at f_sw", "—", fq(edge["power"][0], "W"),
               _rng(edge["power"][mc], "W")],
              ["of which C·V²·f_sw", "—", fq(c_n * v * v * fsw, "W"), "—"],
              ["Capacitor peak voltage", "—", fq(edge["cap_peak"][0], "V"),
               _rng(edge["cap_peak"][mc], "V")]]
    blocks = [WaveformChart(
                  f"{sid}-ring", "Switch node ringing, with and without the snubber",
                  f"Node voltage after the switch turns off (a step of {fq(v, 'V')} through "
                  f"Lp into Cp), nominal with the min–max band of {batch.samples} Monte "
                  "Carlo samples of R and C; without the snubber the node rings at "
                  f"{fq(f_ring, 'Hz')} (damped by Rp only).",
                  q["t"], q["nominal"], "Switch node [V]", "with snubber (nominal)",
                  band=q["band"], curves=(Curve("without snubber", y_wo, "without", t_wo),)),
              _tab("Derived parasitics", ["Quantity", "Value", "From"], derived, None),
              _tab("Stresses", ["Quantity", "Without snubber", "With snubber (nominal)",
                                "With snubber (Monte Carlo range)"], stress,
                   "Resistor power = (turn-off edge energy + ½·C·V²) × f_sw: the turn-off "
                   "edge from the time-domain solution, the turn-on edge when the switch "
                   "discharges C through R. C·V²·f_sw is the hard-switching share.")]
    blocks.append(_switch_sweep(sid, lp, cp, rp, r_n, c_n, v, fsw, q["w0"]))
    peak_all = float(np.nanmax(edge["peak"]))
    json = {"across": "switch", "voltage": v, "switching_frequency": fsw, "parasitic_c": cp,
            "parasitic_l": lp, "loop_resistance": rp, "characteristic_impedance": z0,
            "ring_frequency": f_ring, "r": r_n, "c": c_n, "damping": float(zeta[0]),
            "damping_without": zeta_wo, "peak_voltage": float(edge["peak"][0]),
            "peak_voltage_without": float(y_wo.max()),
            "energy_turn_off": float(edge["e_off"][0]), "energy_turn_on": float(edge["e_on"][0]),
            "resistor_power": float(edge["power"][0]),
            "capacitor_voltage": float(edge["cap_peak"][0])}
    if o["measured"]:
        json["measured"] = dict(zip(("frequency", "with_added", "frequency_with_added"),
                                    o["measured"]))
    summary = (f"ζ {zeta[0]:.2f}, overshoot {fq(edge['overshoot'][0], 'V')} "
               f"(without {fq(y_wo.max() - v, 'V')}), R {fq(edge['power'][0], 'W')}")
    return {"across": "switch", "figures": tuple(blocks), "record": tuple(json.items()),
            "summary": summary, "peak_voltage_v": max(v, peak_all)}


def _switch_notes(v):
    return [f"Switch node model: the supply of {fq(v, 'V')} feeds the node through the loop "
            "inductance Lp and resistance Rp; the node carries Cp and the snubber R–C to "
            "ground. The switch turning off is a step of the node's drive from 0 V to V, "
            "applied from rest; the network is solved in the time domain (modified nodal "
            "analysis, Radau IIA steps) for every Monte Carlo sample.",
            "Damping ratio: of the least damped pole pair of the snubbed network, "
            "ζ = −(p1 + p2)/(2·√(p1·p2)); 1 or more means no ringing."]


def _how_cp(o):
    if not o["measured"]:
        return "as given"
    f1, cadd, f2 = o["measured"]
    return (f"ringing {fq(f1, 'Hz')}, {fq(f2, 'Hz')} with {fq(cadd, 'F')} added: "
            "Cp = C_add/((f1/f2)² − 1)")


def _switch_sweep(sid, lp, cp, rp, r, c, v, fsw, w0):
    cs, zeta, power = phys.switch_tradeoff(lp, cp, rp, r, c, v, fsw, w0)
    return _tradeoff(sid, "Trade-off: damping and resistor power against C",
                     f"R held at {fq(r, 'ohm')}; nominal parasitics. More C damps the ringing "
                     "better but the resistor dissipates about C·V²·f_sw.", cs, c,
                     (Curve("damping ratio ζ", zeta, unit="", axis="left"),
                      Curve("resistor power", power, unit="W", axis="right")))


def _load_page(stage, batch, q):
    """The inductive-load snubber's page (block specs), JSON entry and summary line."""
    o, sid, mc = stage.options, stage.id, batch.mc
    v, fsw, ac, line = o["voltage_v"], o["switching_hz"], o["ac"], o["line_hz"]
    vpk, ll, rc, stray = _supply_peak(o), o["coil_l_h"], o["coil_r_ohm"], o["stray_f"]
    r_n, c_n = stage.parts["r"].value, stage.parts["c"].value
    i_a, f_ring, z0, zeta, zeta_wo, kick, t_wo, y_wo = (
        q[k] for k in ("i_a", "f_ring", "z0", "zeta", "zeta_wo", "kick", "t_wo", "y_wo"))
    e_close, i_close, leak, power, cap = (q[k] for k in ("e_close", "i_close", "leak",
                                                         "power", "cap"))
    supply = f"{fq(v, 'V')} rms" if ac else f"{fq(v, 'V')} DC"
    e_coil, e_rs = 0.5 * ll * i_a ** 2, float(kick["e_open"][0])
    energy = _energy_rows(ll, c_n, e_coil, kick)
    bare_peak = float(np.abs(y_wo).max())
    wo_v, wo_text = _without(o, bare_peak)
    derived = _load_derived(ll, rc, i_a, ac, stray, f_ring, z0)
    stress = [["Damping ratio ζ", f"{zeta_wo:.4f}", f"{zeta[0]:.3f}", _rng(zeta[mc], "1")],
              ["Peak contact voltage", wo_text, fq(kick["peak"][0], "V"),
               _rng(kick["peak"][mc], "V")],
              ["Resistor energy per opening", "—", fq(kick["e_open"][0], "J"),
               _rng(kick["e_open"][mc], "J")],
              ["Resistor energy per closing (½·C·V_pk²)", "—", fq(e_close[0], "J"),
               _rng(e_close[mc], "J")],
              ["Capacitor discharge into the closing contact", "—", fq(i_close[0], "A"),
               _rng(i_close[mc], "A")],
              ["Resistor power at the switching frequency", "—", fq(power[0], "W"),
               _rng(power[mc], "W")],
              ["Capacitor peak voltage", "—", fq(cap[0], "V"), _rng(cap[mc], "V")]]
    if ac:
        stress.insert(5, ["Leakage through the snubber, contact open (rms)", "—",
                          fq(leak["i_rms"][0], "A"), _rng(leak["i_rms"][mc], "A")])
    blocks = [WaveformChart(
                  f"{sid}-kick", "Contact voltage with the snubber",
                  f"Voltage across the contact after it opens on {fq(i_a, 'A')} "
                  f"({supply} supply), nominal with the min–max band of {batch.samples} "
                  "Monte Carlo samples of R and C.", q["t"], q["nominal"],
                  "Contact voltage [V]", "with snubber (nominal)", band=q["band"]),
              WaveformChart(
                  f"{sid}-kick-bare", "Contact voltage without the snubber",
                  f"The coil's current charges only the {fq(stray, 'F')} stray capacitance "
                  f"across the contact: the ideal circuit rings at {fq(f_ring, 'Hz')} "
                  "without bound from the contact, "
                  + (f"which breaks down at the stated {fq(wo_v, 'V')} (curve clipped "
                     "there)." if o["breakdown_v"] is not None else
                     "which arcs long before (no breakdown voltage stated).")
                  + " This is what the snubber prevents.", t_wo,
                  y_wo if o["breakdown_v"] is None
                  else np.clip(y_wo, -o["breakdown_v"], o["breakdown_v"]),
                  "Contact voltage [V]", "without snubber"),
              _tab("Derived parasitics", ["Quantity", "Value", "From"], derived, None),
              _tab("Stresses", ["Quantity", "Without snubber", "With snubber (nominal)",
                                "With snubber (Monte Carlo range)"], stress,
                   "Resistor power = (opening + closing energy) × switching frequency"
                   + (" + the leakage power as if the contact were always open (upper bound). "
                      "The opening energy is integrated over the analysis window and so "
                      "includes the leakage during it." if ac else ".")),
              _tab("Where the coil's energy goes (nominal, one opening)", ["Energy", "Value"],
                   energy, "Energies from the time-domain solution over the analysis window.")]
    blocks.append(_load_sweep(sid, o, i_a, r_n, c_n))
    peak_all = float(np.nanmax(kick["peak"]))
    json = {"across": "inductive-load", "voltage": v, "ac": ac, "switching_frequency": fsw,
            "coil_l": ll, "coil_r": rc, "current_interrupted": i_a, "coil_energy": e_coil,
            "stray": stray, "ring_frequency_without": f_ring, "r": r_n, "c": c_n,
            "damping": float(zeta[0]), "peak_voltage": float(kick["peak"][0]),
            "peak_voltage_without": wo_v, "breakdown": o["breakdown_v"],
            "energy_opening": e_rs, "energy_closing": float(e_close[0]),
            "closing_current": float(i_close[0]), "resistor_power": float(power[0]),
            "capacitor_voltage": float(cap[0])}
    if ac:
        json.update({"line_frequency": line, "leakage_current": float(leak["i_rms"][0]),
                     "leakage_power": float(leak["power"][0])})
    summary = (f"contact peak {fq(kick['peak'][0], 'V')} (without: {wo_text}),"
               f" R {fq(power[0], 'W')}")
    return {"across": "inductive-load", "figures": tuple(blocks),
            "record": tuple(json.items()), "summary": summary,
            "peak_voltage_v": max(vpk, peak_all)}


def _load_derived(ll, rc, i_a, ac, stray, f_ring, z0) -> list:
    """Rows of the inductive load's "Derived parasitics" table."""
    return [["Coil inductance and resistance", f"{fq(ll, 'H')}, {fq(rc, 'ohm')}", "as given"],
            ["Current interrupted", fq(i_a, "A"),
             "√2·V/|R + jωL| (AC, opening at the current peak)" if ac else "V/R"],
            ["Stray capacitance across the contact", fq(stray, "F"),
             "as given" if stray != phys.DEFAULT_STRAY_F else "assumed (default)"],
            ["Ring frequency after opening, no snubber", fq(f_ring, "Hz"),
             "f = 1/(2π·√(L_coil·C_stray))"],
            ["Characteristic impedance Z0", fq(z0, "ohm"), "Z0 = √(L_coil/C_stray)"]]


def _without(o: dict, bare_peak: float) -> tuple[float | None, str]:
    """The contact peak without a snubber, bounded by the stated breakdown of the
    switch or contact; with none stated no number (the ideal ring has no bound a
    contact reaches): (value or None, text)."""
    bd = o.get("breakdown_v")
    if bd is None:
        return None, "the contact arcs"
    if bare_peak <= bd:
        return bare_peak, fq(bare_peak, "V")
    return bd, f"breaks down at {fq(bd, 'V')}"


def _energy_rows(ll, c_n, e_coil, kick) -> list:
    """Where the coil's energy goes (nominal, one opening), from the kick's integrals."""
    e_rs, e_rc = float(kick["e_open"][0]), float(kick["e_coil_r"][0])
    e_c_end = 0.5 * c_n * kick["v_c_end"][0] ** 2
    e_l_end = 0.5 * ll * kick["i_coil_end"][0] ** 2
    return [["Stored in the coil, ½·L·I²", fq(e_coil, "J")],
            ["Into the snubber resistor while opening", fq(e_rs, "J")],
            ["Into the coil's own resistance", fq(e_rc, "J")],
            ["Left on the snubber capacitor (goes into R at the next closing)",
             fq(e_c_end, "J")],
            ["Left in the coil at the end of the window", fq(e_l_end, "J")],
            ["From the supply over the window (balance)",
             fq(e_rs + e_rc + e_c_end + e_l_end - e_coil, "J")]]


def _load_notes(ac):
    return [("Inductive load model: the coil (L in series with its resistance) carries "
             + ("the peak current of the AC supply when the contact opens (the worst case)"
                if ac else "V/R when the contact opens")
             + ". By the compensation theorem the contact voltage is the response of the "
             "network with the supply shorted and the contact removed to the current the "
             "contact carried, injected across it; that current source and the branch across "
             "the contact become an equivalent voltage source (Norton–Thevenin), solved in "
             "the time domain for every Monte Carlo sample."),
            "With the snubber fitted the stray capacitance is left out (far smaller than C; it "
            "only slows the first jump of the contact voltage).",
            "When the contact closes the snubber capacitor, charged up to the supply's peak, "
            "discharges through R into the contact: peak current V/R, energy ½·C·V²."]


def _load_sweep(sid, o, i_a, r, c):
    ac = o["ac"]
    cs, peak, power = phys.load_tradeoff(o["coil_l_h"], o["coil_r_ohm"], ac, o["line_hz"], i_a,
                                         _supply_peak(o), o["switching_hz"], r, c)
    return _tradeoff(sid, "Trade-off: contact voltage and resistor power against C",
                     f"R held at {fq(r, 'ohm')}. More C lowers the kick but stores more "
                     "energy, dumped into R at every closing"
                     + (", and lets more current leak through the open contact." if ac
                        else "."), cs, c,
                     (Curve("peak contact voltage", peak, unit="V", axis="left"),
                      Curve("resistor power (switching)", power, unit="W", axis="right")))


def _rng(a: np.ndarray, unit: str) -> str:
    a = a[np.isfinite(a)]
    if not a.size:
        return "—"
    if unit == "1":
        return f"{a.min():.3f} … {a.max():.3f}"
    return f"{fq(a.min(), unit)} … {fq(a.max(), unit)}"


def _tradeoff(sid, title, caption, cs, c, curves) -> SweepChart:
    return SweepChart(f"{sid}-tradeoff", title, caption, cs, "Snubber capacitance", "F",
                      curves, marker_x=c)


def _tab(title, columns, rows, note):
    return TableBlock(title, columns, rows, note)
