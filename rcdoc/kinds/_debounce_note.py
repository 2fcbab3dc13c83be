"""The debounce stage's page: edge waveforms, levels, the slow-edge caution, JSON.

Called by rcdoc.kinds.debounce once the rows are evaluated; the waveforms are
computed here from the closed forms of rcdoc.analysis.debounce (nominal and every
Monte Carlo row) and handed to the chart as arrays. Nothing is drawn by hand.
"""

from __future__ import annotations

import math

import numpy as np

from rcdoc.analysis import debounce as phys
from rcdoc.note import logic_chart
from rcdoc.input.quantities import format_quantity

MC_WAVES = 2000        # Monte Carlo rows used for the waveform bands (all of them up to this)
# An input without hysteresis (no Schmitt trigger) needs edges faster than
# about 1 V/µs, or noise near its single threshold makes it toggle several
# times on one slow edge (common practice for CMOS logic inputs).
NO_HYSTERESIS_MIN_RATE = 1e6     # V/s


def fq(v, unit, digits=3):
    return "—" if v is None or not math.isfinite(v) else format_quantity(float(v), unit, digits)


def _rng(a, unit):
    a = np.asarray(a, float)
    a = a[np.isfinite(a)]
    return "—" if not a.size else f"{fq(a.min(), unit)} … {fq(a.max(), unit)}"


def _edges(stage, values, rising, falling):
    o = stage.options
    return phys.edges(o["pull"], o["supply_v"], o["leakage_a"], values["r_pull"], values["r"],
                      values["c"], np.asarray(rising, float), np.asarray(falling, float))


def _panel(title, e, rows, delays, band, other):
    """One edge: nominal (row 0) and the Monte Carlo rows' band on one time grid."""
    t = np.linspace(0.0, phys.window(e, float(delays[0])), phys.WAVE_POINTS)
    sub = {k: np.asarray(e[k], float)[rows] for k in ("v0", "vinf", "tau")}
    waves = phys.waveform(sub, t)
    nominal = phys.waveform({k: np.asarray(e[k], float)[:1] for k in sub}, t)[0]
    d = np.asarray(delays, float)[rows][1:]
    d = d[np.isfinite(d)]
    return {"title": title, "t": t, "nominal": nominal, "lo": waves[1:].min(axis=0),
            "hi": waves[1:].max(axis=0), "band": band, "other": other,
            "cross": float(delays[0]),
            "cross_range": (float(d.min()), float(d.max())) if d.size else (math.nan,) * 2}


def extra(stage, batch, rising, falling, arrays) -> dict:
    o, sid = stage.options, stage.id
    pull, vs, leak = o["pull"], o["supply_v"], o["leakage_a"]
    ed = _edges(stage, batch.values, rising, falling)
    mc = batch.mc
    rows = np.concatenate([[0], np.arange(mc.start, min(mc.stop, mc.start + MC_WAVES))])
    r_band, f_band = o["rising_v"], o["falling_v"]
    press_band, rel_band = (f_band, r_band) if pull == "up" else (r_band, f_band)
    panels = [_panel("Press (contact closes)", ed["press"], rows, arrays["press_delay"],
                     press_band, rel_band),
              _panel("Release (contact opens)", ed["release"], rows, arrays["release_delay"],
                     rel_band, press_band)]
    image = logic_chart.edges(f"{sid}-edges", panels, fmt="png")
    rate = np.asarray(arrays["edge_rate"], float)
    slow_release = bool(phys.slower_edge(pull, vs, leak, *(batch.values[k][:1] for k in
                                                             ("r_pull", "r", "c")),
                                         rising[:1], falling[:1])[0])
    slower = "release" if slow_release else "press"
    rate_mc = rate[mc][np.isfinite(rate[mc])]
    slowest = float(rate_mc.min()) if rate_mc.size else math.nan
    blocks_before = []
    if not (math.isfinite(rate[0]) and rate[0] >= NO_HYSTERESIS_MIN_RATE):
        blocks_before.append(_caution(rate[0], slowest, slower))
    tau_p, tau_r = float(ed["press"]["tau"][0]), float(ed["release"]["tau"][0])
    edges_rows = [
        ["Press", f"{fq(ed['press']['v0'][0], 'V')} → {fq(ed['press']['vinf'][0], 'V')}",
         "R·C", fq(tau_p, "s"), _th(press_band), fq(arrays["press_delay"][0], "s"),
         _rng(arrays["press_delay"][mc], "s")],
        ["Release", f"{fq(ed['release']['v0'][0], 'V')} → {fq(ed['release']['vinf'][0], 'V')}",
         "(R_pull + R)·C", fq(tau_r, "s"), _th(rel_band), fq(arrays["release_delay"][0], "s"),
         _rng(arrays["release_delay"][mc], "s")]]
    blocks = [
        {"type": "figure", "title": "Press and release at the input", "image": image,
         "width": "full",
         "caption": f"Input voltage after the contact closes and after it opens, nominal with "
                    f"the min–max band of {batch.samples} Monte Carlo samples of the parts "
                    "and thresholds. Shaded horizontally: the threshold range each edge must "
                    "cross; vertically: the spread of the crossing time."},
        {"type": "table", "title": "Edges",
         "columns": ["Edge", "From → towards (nominal)", "τ", "τ nominal", "Threshold range",
                     "Delay (nominal)", "Delay (Monte Carlo range)"],
         "rows": edges_rows,
         "note": "Delay = τ·ln((V∞ − V0)/(V∞ − V_th)), the time a first-order RC takes from "
                 "its start level V0 towards V∞ to cross the threshold V_th; nominal with "
                 "each threshold at the middle of its range."}]
    json = {"pull": pull, "supply": vs, "leakage": leak,
            "thresholds": {"rising": list(r_band), "falling": list(f_band)},
            "tau_press": tau_p, "tau_release": tau_r, "slower_edge": slower,
            "hysteresis_needed": bool(blocks_before)}
    summary = (f"press {fq(arrays['press_delay'][0], 's')}, "
               f"release {fq(arrays['release_delay'][0], 's')}")
    return {"blocks": blocks, "blocks_before": blocks_before, "json": json,
            "summary": summary, "peak_voltage_v": vs}


def _th(band):
    return f"{fq(band[0], 'V')} … {fq(band[1], 'V')}"


def _caution(nominal, slowest, slower):
    limit = format_quantity(NO_HYSTERESIS_MIN_RATE * 1e-6, "V") + "/µs"
    rate = (fq(nominal, "V/s") if math.isfinite(nominal)
            else "not defined (a level never crosses its threshold)")
    slow = f"; slowest sample {fq(slowest, 'V/s')}" if math.isfinite(slowest) else ""
    return {"type": "text", "title": "Caution: slow edge, the input needs hysteresis",
            "paragraphs": [
                f"Edge rate at the threshold of the slower edge ({slower}): {rate}{slow}. "
                f"An input without hysteresis needs edges faster than about {limit} (common "
                "practice for CMOS logic inputs); on an edge this slow, noise near its single "
                "threshold makes it toggle several times, and it draws supply current while "
                "the voltage sits between the logic levels.",
                "Use an input with hysteresis (a Schmitt-trigger input), as the thresholds "
                "given for this stage assume; confirm the part's input has it."]}


def assumptions(stage) -> list[str]:
    o = stage.options
    side = "the supply" if o["pull"] == "up" else "ground"
    rail = "ground" if o["pull"] == "up" else "the supply"
    return [
        f"Circuit: r_pull from {side} to the contact node, the contact from that node to "
        f"{rail}, r from the contact node to the input, c from the input to ground; supply "
        f"{fq(o['supply_v'], 'V')}. The contact is ideal (zero resistance closed, open "
        "circuit open) and changes state at t = 0 from the settled level of the other state.",
        "Each state is a first-order RC: contact open, C charges through r_pull + r; contact "
        "closed, the contact holds its node at the rail and C changes through r alone (the "
        "pull resistor's current flows into the contact). Delays are in closed form, "
        "τ·ln((V∞ − V0)/(V∞ − V_th)).",
        f"Input leakage {fq(o['leakage_a'], 'A')} in its worst direction for each level: "
        "drawn out of the input for the high level, into it for the low level (Thevenin: "
        "the level moves by the leakage times the resistance in series with the input).",
        "Thresholds: V_T+ and V_T− drawn uniformly within their ranges for every Monte Carlo "
        "sample (V_T− never above the same sample's V_T+); nominal at the middle of each "
        "range; the worst case takes every corner of the parts with every corner of the two "
        "ranges.",
        "A delay is missing (the check fails) where a level does not cross its threshold: "
        "the low level not below V_T−, or the high level not above V_T+ (leakage through "
        "too large a resistance leaves an invalid level), since the input then cannot "
        "toggle."]
