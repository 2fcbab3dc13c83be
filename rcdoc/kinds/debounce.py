"""debounce: a mechanical contact read by a logic input through an RC.

This module reads the stage's keys (supply, pull, thresholds, leakage),
builds the rows of the analysis (the parts' Monte Carlo samples, sensitivity
probes and worst-case corners from rcdoc.analysis.spread, each with its own draw of
the input's thresholds; the corners also take the thresholds' extremes),
evaluates the closed-form metrics of rcdoc.analysis.debounce on every row, judges the
checks and describes the note page as block specs (rcdoc.analysis.blocks) in a
DebounceResult: press and release waveforms with the threshold bands, the
edges table, and the caution about slow edges; the note draws them. It
replaces the generic frequency-domain analysis (``analyse``).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from rcdoc.analysis import checks as checkmod
from rcdoc.analysis import debounce as phys
from rcdoc.analysis import spread
from rcdoc.analysis.blocks import LEAD, EdgeChart, EdgePanel, TableBlock, TextBlock
from rcdoc.errors import ProjectError
from rcdoc.kinds import recipes as sch
from rcdoc.analysis.network import GROUND, Element, Network
from rcdoc.input.quantities import format_quantity, parse_positive, parse_quantity
from rcdoc.kinds import base

NAME = "debounce"
OPTIONS = ("supply", "pull", "thresholds", "leakage")
PASSBAND = "low"
TITLE = "Contact debounce"
ROLES = ("r_pull", "r", "c")
METRIC_NAMES = ("press_delay", "release_delay", "high_level", "low_level", "edge_rate")
HEADLINE = METRIC_NAMES
NOT_FOR_DEBOUNCE = ("source", "load", "marks", "drive")
PULLS = ("up", "down")


def fq(v, unit, digits=3):
    return "—" if v is None or not math.isfinite(v) else format_quantity(float(v), unit, digits)


# --------------------------------------------------------------------------
# project keys


def _range(raw, path: str, supply: float) -> tuple[float, float]:
    if not isinstance(raw, list) or len(raw) != 2:
        raise ProjectError("expected a range of two voltages, e.g. [\"1.5 V\", \"2.3 V\"]",
                           path=path)
    lo, hi = (parse_quantity(v, "V", f"{path}[{k}]") for k, v in enumerate(raw))
    for k, v in enumerate((lo, hi)):
        if not 0 < v < supply:
            raise ProjectError(f"a threshold must lie between 0 V and the supply "
                               f"({format_quantity(supply, 'V')})", path=f"{path}[{k}]")
    if lo > hi:
        raise ProjectError("write the range lowest first", path=path)
    return lo, hi


def parse_options(t: dict, path: str) -> dict:
    from rcdoc.input.project import check_keys, need_string, need_table
    for key in NOT_FOR_DEBOUNCE:
        if key in t:
            raise ProjectError(f"'{key}' does not apply to a debounce stage: its circuit is "
                               "set by 'supply', 'pull' and the parts", path=f"{path}.{key}")
    for key in ("supply", "thresholds"):
        if key not in t:
            raise ProjectError(f"a debounce stage needs '{key}'", path=f"{path}.{key}")
    supply = parse_positive(t["supply"], "V", f"{path}.supply")
    pull = need_string(t.get("pull", "up"), f"{path}.pull")
    if pull not in PULLS:
        raise ProjectError(f"'{pull}' is not a pull direction; use \"up\" or \"down\"",
                           path=f"{path}.pull")
    th = need_table(t["thresholds"], f"{path}.thresholds")
    check_keys(th, ("rising", "falling"), f"{path}.thresholds")
    for key in ("rising", "falling"):
        if key not in th:
            raise ProjectError(f"'{key}' is missing (the input's "
                               f"{'V_T+' if key == 'rising' else 'V_T−'} range)",
                               path=f"{path}.thresholds.{key}")
    rising = _range(th["rising"], f"{path}.thresholds.rising", supply)
    falling = _range(th["falling"], f"{path}.thresholds.falling", supply)
    for k, what in ((0, "lowest"), (1, "highest")):
        if falling[k] > rising[k]:
            raise ProjectError(f"the {what} falling threshold (V_T−) is above the {what} "
                               "rising threshold (V_T+); a Schmitt input switches lower on "
                               "a falling edge", path=f"{path}.thresholds.falling[{k}]")
    leak = parse_quantity(t.get("leakage", 0.0), "A", f"{path}.leakage")
    if leak < 0:
        raise ProjectError("leakage is a magnitude (both directions are taken); write it "
                           "without a sign", path=f"{path}.leakage")
    return {"supply_v": supply, "pull": pull, "rising_v": rising, "falling_v": falling,
            "leakage_a": leak}


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path)


def metrics(options, drive):
    return METRIC_NAMES


def build(stage) -> Network:
    """The contact open: the pull resistor from the rail ("in"), r, c at the input ("out")."""
    els = [Element("r_pull", "R", "in", "contact"), Element("r", "R", "contact", "out"),
           Element("c", "C", "out", GROUND)]
    return Network(elements=tuple(els), drive="in", output="out", path=("r_pull", "r", "c"))


def characteristic_hz(stage):
    p = stage.parts
    return 1.0 / (2 * math.pi * (p["r_pull"].value + p["r"].value) * p["c"].value)


def schematic(stage):
    o, p = stage.options, stage.parts
    return sch.debounce(r_pull=base.label(p["r_pull"]), r=base.label(p["r"]),
                        c=base.label(p["c"]), supply_label=format_quantity(o["supply_v"], "V"),
                        pull=o["pull"])


# --------------------------------------------------------------------------
# rows: the parts' batch with the thresholds of each row


def threshold_batch(stage, analysis):
    """The parts' batch with V_T+ and V_T- per row.

    Nominal and sensitivity rows take the middle of each range; Monte Carlo
    rows a uniform draw (from a stream spawned off the stage's generator, so
    the parts' samples stay those of every other kind); each worst-case corner
    of the parts is repeated for the four corners of the threshold ranges.
    """
    batch = spread.build_batch(stage, analysis)
    o = stage.options
    rising, falling = o["rising_v"], o["falling_v"]
    mid_r, mid_f = sum(rising) / 2, sum(falling) / 2
    rng = spread.rng_for(stage, analysis).spawn(1)[0]
    up_mc, down_mc = phys.threshold_rows(rng, batch.samples, rising, falling)
    up_c, down_c = phys.threshold_corners(rising, falling)
    nv, vstart = len(batch.vertices), batch.vertex.start
    values = {k: np.concatenate([v[:vstart], np.repeat(v[batch.vertex], 4)])
              for k, v in batch.values.items()}
    n_sens = len(batch.roles)
    up = np.concatenate([[mid_r], up_mc, np.full(n_sens, mid_r), np.tile(up_c, nv)])
    down = np.concatenate([[mid_f], down_mc, np.full(n_sens, mid_f), np.tile(down_c, nv)])
    temps = np.concatenate([batch.temperature_c[:vstart], np.full(4 * nv, np.nan)])
    out = dataclasses.replace(batch, values=values, temperature_c=temps,
                              vertices=np.repeat(batch.vertices, 4, axis=0))
    return out, up, down


def evaluate(stage, values: dict, rising, falling) -> dict:
    o = stage.options
    return phys.metrics(o["pull"], o["supply_v"], o["leakage_a"], values["r_pull"],
                        values["r"], values["c"], np.asarray(rising, float),
                        np.asarray(falling, float))


# --------------------------------------------------------------------------
# analysis


def _metric_result(name, arr, batch):
    from rcdoc.analysis.analyse import MetricResult
    finite0 = math.isfinite(arr[0]) and arr[0] != 0
    sens = spread.sensitivities(arr, batch) if finite0 else np.zeros(len(batch.roles))
    wc_vals = arr[batch.vertex]
    wc_vals = wc_vals[np.isfinite(wc_vals)]
    wc = (float(wc_vals.min()), float(wc_vals.max())) if wc_vals.size else (math.nan,) * 2
    return MetricResult(name=name, at_hz=None, param=None, nominal=float(arr[0]),
                        samples=arr[batch.mc], worst_case=wc, worst_case_method="vertices",
                        sensitivity={r: float(s) for r, s in zip(batch.roles, sens)})


def _ratings(stage, batch, arrays):
    """Stated ratings: the pull resistor carries the supply with the contact closed,
    the series resistor only the leakage; the capacitor sees at most the high level."""
    o, out = stage.options, []
    v = batch.values
    stress = {"r_pull": ("resistor_power", o["supply_v"] ** 2 / v["r_pull"]),
              "r": ("resistor_power", o["leakage_a"] ** 2 * v["r"]),
              "c": ("capacitor_voltage", arrays["high_level"])}
    for role, (metric, arr) in stress.items():
        part = stage.parts[role]
        rating = part.power_rating_w if part.kind == "R" else part.voltage_rating_v
        if rating is None:
            continue
        arr = np.broadcast_to(np.asarray(arr, float), (batch.rows,))
        vx = arr[batch.vertex]
        out.append(checkmod.judge(metric, arr[batch.mc], nominal=float(arr[0]),
                                  wc=(float(vx.min()), float(vx.max())), lo=None, hi=rating,
                                  part=part.ref or role, detail="rating"))
    return out


def analyse(stage, analysis, bode: bool = True):
    # ``bode``: a kind's analyse takes it (rcdoc.analysis.analyse.analyse_stage); this
    # kind draws no Bode band, so it changes nothing here.
    from rcdoc.analysis.analyse import StageResult, _assumptions, _part_rows
    batch, rising, falling = threshold_batch(stage, analysis)
    arrays = evaluate(stage, batch.values, rising, falling)
    metrics_ = [_metric_result(name, np.asarray(arrays[name], float), batch)
                for name in METRIC_NAMES]
    by_name = {m.name: m for m in metrics_}
    verdicts = [checkmod.judge(c.metric, by_name[c.metric].samples,
                               nominal=by_name[c.metric].nominal, wc=by_name[c.metric].wc,
                               lo=c.min, hi=c.max, required_yield=c.required_yield)
                for c in stage.checks]
    kind_result = _page(stage, batch, rising, falling, arrays)
    empty = np.zeros(0)
    return StageResult(stage=stage, network=build(stage), passband=PASSBAND,
                       char_hz=characteristic_hz(stage), freqs_hz=empty,
                       h_nominal=empty.astype(complex), band=None, metrics=metrics_,
                       verdicts=verdicts, ratings=_ratings(stage, batch, arrays), phasors=None,
                       step=None, pwm=None, parts=_part_rows(stage, analysis),
                       assumptions=assumptions(stage) + _assumptions(stage, analysis),
                       samples=batch.samples, kind_result=kind_result)


# --------------------------------------------------------------------------
# the page

MC_WAVES = 2000        # Monte Carlo rows used for the waveform bands (all of them up to this)
# An input without hysteresis (no Schmitt trigger) needs edges faster than
# about 1 V/µs, or noise near its single threshold makes it toggle several
# times on one slow edge (common practice for CMOS logic inputs).
NO_HYSTERESIS_MIN_RATE = 1e6     # V/s


def _rng(a, unit):
    a = np.asarray(a, float)
    a = a[np.isfinite(a)]
    return "—" if not a.size else f"{fq(a.min(), unit)} … {fq(a.max(), unit)}"


def _edges(stage, values, rising, falling):
    o = stage.options
    return phys.edges(o["pull"], o["supply_v"], o["leakage_a"], values["r_pull"], values["r"],
                      values["c"], np.asarray(rising, float), np.asarray(falling, float))


def _panel(title, e, rows, delays, band, other) -> EdgePanel:
    """One edge: nominal (row 0) and the Monte Carlo rows' band on one time grid."""
    t = np.linspace(0.0, phys.window(e, float(delays[0])), phys.WAVE_POINTS)
    sub = {k: np.asarray(e[k], float)[rows] for k in ("v0", "vinf", "tau")}
    waves = phys.waveform(sub, t)
    nominal = phys.waveform({k: np.asarray(e[k], float)[:1] for k in sub}, t)[0]
    d = np.asarray(delays, float)[rows][1:]
    d = d[np.isfinite(d)]
    return EdgePanel(title, t, nominal, waves[1:].min(axis=0), waves[1:].max(axis=0),
                     tuple(band), tuple(other), float(delays[0]),
                     (float(d.min()), float(d.max())) if d.size else (math.nan,) * 2)


def _page(stage, batch, rising, falling, arrays) -> DebounceResult:
    """The page (block specs), JSON entry and summary line of a debounce stage."""
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
    rate = np.asarray(arrays["edge_rate"], float)
    slow_release = bool(phys.slower_edge(pull, vs, leak, *(batch.values[k][:1] for k in
                                                             ("r_pull", "r", "c")),
                                         rising[:1], falling[:1])[0])
    slower = "release" if slow_release else "press"
    rate_mc = rate[mc][np.isfinite(rate[mc])]
    slowest = float(rate_mc.min()) if rate_mc.size else math.nan
    slow = not (math.isfinite(rate[0]) and rate[0] >= NO_HYSTERESIS_MIN_RATE)
    caution = (_caution(rate[0], slowest, slower),) if slow else ()
    tau_p, tau_r = float(ed["press"]["tau"][0]), float(ed["release"]["tau"][0])
    edges_rows = [
        ["Press", f"{fq(ed['press']['v0'][0], 'V')} → {fq(ed['press']['vinf'][0], 'V')}",
         "R·C", fq(tau_p, "s"), _th(press_band), fq(arrays["press_delay"][0], "s"),
         _rng(arrays["press_delay"][mc], "s")],
        ["Release", f"{fq(ed['release']['v0'][0], 'V')} → {fq(ed['release']['vinf'][0], 'V')}",
         "(R_pull + R)·C", fq(tau_r, "s"), _th(rel_band), fq(arrays["release_delay"][0], "s"),
         _rng(arrays["release_delay"][mc], "s")]]
    blocks = caution + (
        EdgeChart(f"{sid}-edges", "Press and release at the input",
                  f"Input voltage after the contact closes and after it opens, nominal with "
                  f"the min–max band of {batch.samples} Monte Carlo samples of the parts "
                  "and thresholds. Shaded horizontally: the threshold range each edge must "
                  "cross; vertically: the spread of the crossing time.", panels),
        TableBlock("Edges", ("Edge", "From → towards (nominal)", "τ", "τ nominal",
                             "Threshold range", "Delay (nominal)", "Delay (Monte Carlo range)"),
                   edges_rows,
                   "Delay = τ·ln((V∞ − V0)/(V∞ − V_th)), the time a first-order RC takes from "
                   "its start level V0 towards V∞ to cross the threshold V_th; nominal with "
                   "each threshold at the middle of its range."))
    summary = (f"press {fq(arrays['press_delay'][0], 's')}, "
               f"release {fq(arrays['release_delay'][0], 's')}")
    return DebounceResult(pull=pull, supply_v=vs, leakage_a=leak, rising_v=tuple(r_band),
                          falling_v=tuple(f_band), tau_press_s=tau_p, tau_release_s=tau_r,
                          slower_edge=slower, hysteresis_needed=slow, summary=summary,
                          figures=blocks)


def _th(band):
    return f"{fq(band[0], 'V')} … {fq(band[1], 'V')}"


def _caution(nominal, slowest, slower):
    limit = format_quantity(NO_HYSTERESIS_MIN_RATE * 1e-6, "V") + "/µs"
    rate = (fq(nominal, "V/s") if math.isfinite(nominal)
            else "not defined (a level never crosses its threshold)")
    slow = f"; slowest sample {fq(slowest, 'V/s')}" if math.isfinite(slowest) else ""
    return TextBlock("Caution: slow edge, the input needs hysteresis", [
                f"Edge rate at the threshold of the slower edge ({slower}): {rate}{slow}. "
                f"An input without hysteresis needs edges faster than about {limit} (common "
                "practice for CMOS logic inputs); on an edge this slow, noise near its single "
                "threshold makes it toggle several times, and it draws supply current while "
                "the voltage sits between the logic levels.",
                "Use an input with hysteresis (a Schmitt-trigger input), as the thresholds "
                "given for this stage assume; confirm the part's input has it."], place=LEAD)


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


@dataclass(frozen=True)
class DebounceResult:
    """The debounce stage's own results (the KindResult of rcdoc.analysis.results)."""
    pull: str
    supply_v: float
    leakage_a: float
    rising_v: tuple[float, float]       # V_T+ range
    falling_v: tuple[float, float]      # V_T− range
    tau_press_s: float
    tau_release_s: float
    slower_edge: str                    # "press" or "release"
    hysteresis_needed: bool
    summary: str                        # one line for the summary table
    figures: tuple                      # block specs of the page (rcdoc.analysis.blocks)

    @property
    def peak_voltage_v(self) -> float:
        return self.supply_v

    def blocks(self) -> tuple:
        return self.figures

    def json(self) -> dict:
        return {"pull": self.pull, "supply": self.supply_v, "leakage": self.leakage_a,
                "thresholds": {"rising": list(self.rising_v), "falling": list(self.falling_v)},
                "tau_press": self.tau_press_s, "tau_release": self.tau_release_s,
                "slower_edge": self.slower_edge, "hysteresis_needed": self.hysteresis_needed}

