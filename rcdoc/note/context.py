"""The design note's content: StageResults -> the report context (tables,
figures as SVG text, paragraphs) that templates/note.html lays out.

Figures are drawn by rcdoc.note from the results' arrays; nothing here
computes physics, and nothing here knows HTML.
"""

from __future__ import annotations

import math

import numpy as np

from rcdoc import __version__
from rcdoc.analysis.analyse import StageResult
from rcdoc.note import charts
from rcdoc.kinds import recipes as sch
from rcdoc.kinds import KINDS
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Project
from rcdoc.input.project import paragraphs
from rcdoc.input.quantities import format_quantity, parse_quantity
from rcdoc.note.summary import board_status

KIND_TITLES = {
    "rc-lowpass": "RC low-pass", "rc-highpass": "RC high-pass", "rc-ladder": "RC ladder",
    "rc-bandpass": "RC band-pass", "sallen-key-lowpass": "Sallen-Key low-pass",
    "mfb-lowpass": "Multiple-feedback low-pass", "network": "Network", "snubber": "Snubber",
    "debounce": "Contact debounce",
    "sampled-input": "Converter input",
}

SAFETY_ITEMS = (
    "Hazardous voltage: this stage works at a voltage that can injure or kill. Only "
    "people qualified for such work should build, probe or repair it.",
    "Stored energy: capacitors can hold a dangerous charge after the power is removed. "
    "Disconnect the supply, discharge them through a suitable resistor and confirm with a "
    "meter before touching the circuit.",
    "Capacitors connected across a supply line must be types rated for that use (safety-"
    "rated classes for mains), at the working voltage and its transients.",
    "Keep the creepage and clearance distances that the applicable standard requires for "
    "the working voltage, pollution degree and insulation class.",
    "These calculations support a design review; they do not replace the local electrical "
    "codes, the product safety standards that apply, or the judgement of a licensed "
    "professional.",
)


def fq(value, unit: str, digits: int = 3) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    return format_quantity(float(value), unit, digits)


def metric_label(m_name: str, at_hz=None, detail: str = "") -> str:
    label = METRICS[m_name].label
    if at_hz is not None:
        label += f" at {fq(at_hz, 'Hz')}"
    if detail and detail != "rating":
        label += f" ({detail})"
    return label


def limit_text(v, unit: str) -> str:
    if v.min is not None and v.max is not None:
        return f"{fq(v.min, unit)} … {fq(v.max, unit)}"
    if v.min is not None:
        return f"≥ {fq(v.min, unit)}"
    return f"≤ {fq(v.max, unit)}"


def pct(x: float) -> str:
    return f"{x * 100:.2f} %" if x < 1 else "100 %"


def stage_voltage(r: StageResult) -> float:
    """Highest voltage the stage sees (DC or peak), for the safety cautions."""
    v = 0.0
    st = r.stage
    if st.drive is not None:
        v = max(v, abs(st.drive.amplitude_v))
    for p in st.parts.values():
        if p.bias_v:
            v = max(v, p.bias_v)
    if r.kind_result is not None:
        v = max(v, float(r.kind_result.peak_voltage_v))
    m = r.metric("capacitor_voltage")
    if m is not None and math.isfinite(m.nominal):
        v = max(v, m.nominal)
    return v


def parts_table(r: StageResult) -> dict:
    rows = []
    for row in r.parts:
        p = row.part
        unit = {"R": "ohm", "C": "F", "L": "H"}[p.kind]
        tol = (f"±{p.tol_plus * 100:g} %" if abs(p.tol_plus - p.tol_minus) < 1e-12
               else f"+{p.tol_plus * 100:g} / −{p.tol_minus * 100:g} %")
        temp = p.dielectric or (f"{p.tcr_ppm:g} ppm/K" if p.tcr_ppm is not None else "—")
        if p.temperature_change:
            temp += f" ({p.temperature_change[1] * 100:g} % at {fq(p.temperature_change[0], 'degC')})"
        if p.dc_bias and p.bias_v:
            temp += f"; {p.dc_bias[1] * 100:g} % at {fq(p.dc_bias[0], 'V')}, biased {fq(p.bias_v, 'V')}"
        rating = (fq(p.power_rating_w, "W") if p.power_rating_w else
                  fq(p.voltage_rating_v, "V") if p.voltage_rating_v else "—")
        series = row.preferred or f"not {row.series}"
        rows.append([p.ref or "—", p.role, fq(p.value, unit, 4), tol, temp,
                     f"{fq(row.low, unit)} … {fq(row.high, unit)}", series, rating,
                     p.model or ""])
    from rcdoc.input.channels import channel_line
    chans = channel_line(r.stage)
    return {"type": "table", "title": "Parts",
            "columns": ["Ref", "Role", "Value", "Tolerance", "Temperature / derating",
                        "Range in circuit", "Series", "Rating", "Model"],
            "rows": rows,
            "note": (f"{chans} (identical parts, analysed once). " if chans else "")
                    + "Range in circuit: lowest and highest value over tolerance, the analysed "
                    "temperature range and DC-bias loss. Series: the IEC 60063 series that "
                    "fits the tolerance and holds the value."}


def checks_table(r: StageResult) -> dict | None:
    if not r.verdicts:
        return None
    rows = []
    for v in r.verdicts:
        unit = METRICS[v.metric].unit
        rows.append([metric_label(v.metric, v.at_hz, v.detail), limit_text(v, unit),
                     fq(v.nominal, unit), fq(v.worst, unit),
                     f"{fq(v.wc_low, unit)} … {fq(v.wc_high, unit)}",
                     pct(v.yield_), pct(v.required_yield), v.status])
    return {"type": "table", "title": "Checks",
            "columns": ["Requirement", "Limit", "Nominal", "Worst sample", "Worst case",
                        "Yield", "Required", "Verdict"],
            "rows": rows,
            "note": f"Yield: share of the {r.samples} Monte Carlo samples inside the limit. "
                    "Worst case: extreme-value analysis over every part's limits."}


def ratings_table(r: StageResult) -> dict | None:
    if not r.ratings:
        return None
    rows = []
    for v in r.ratings:
        unit = METRICS[v.metric].unit
        rows.append([v.part, METRICS[v.metric].label, fq(v.max, unit), fq(v.nominal, unit),
                     fq(v.worst, unit), f"{(v.worst / v.max * 100) if v.max else 0:.0f} %",
                     v.status])
    return {"type": "table", "title": "Part stress against ratings",
            "columns": ["Part", "Stress", "Rating", "Nominal", "Worst sample", "Use of rating",
                        "Verdict"],
            "rows": rows, "note": None}


def metrics_table(r: StageResult) -> dict:
    rows = []
    for m in r.metrics:
        unit = METRICS[m.name].unit
        s = m.samples[np.isfinite(m.samples)]
        if s.size:
            lo, hi, mean, std = s.min(), s.max(), s.mean(), s.std()
            if std <= 1e-9 * abs(mean):      # a constant, up to rounding
                std = 0.0
        else:
            lo = hi = mean = std = math.nan
        missing = m.samples.size - s.size
        rows.append([metric_label(m.name, m.at_hz, m.detail), fq(m.nominal, unit), fq(lo, unit),
                     fq(hi, unit), fq(mean, unit), fq(std, unit)
                     if unit not in ("dB", "deg") or not math.isfinite(std)
                     else f"{std:.3g} {'dB' if unit == 'dB' else '°'}",
                     f"{fq(m.wc[0], unit)} … {fq(m.wc[1], unit)}"
                     + (" (searched inside)" if "search" in m.wc_method else "")
                     + (f" ({missing} samples without a value)" if missing else "")])
    return {"type": "table", "title": "Metrics",
            "columns": ["Metric", "Nominal", "Min", "Max", "Mean", "Std dev", "Worst case"],
            "rows": rows, "note": "Min, max, mean and standard deviation over the Monte "
                                  "Carlo samples; worst case over the parts' limits: the "
                                  "corners of the box of part values, searched inside the box "
                                  "where the metric is not monotonic in a part (\"searched "
                                  "inside\"); it holds the nominal and every sample."}


def sensitivity_table(r: StageResult) -> dict | None:
    chosen = [m for m in r.metrics if m.name in {v.metric for v in r.verdicts}] or \
        [m for m in r.metrics if m.name in ("corner", "f0", "corner_low")]
    chosen = chosen[:4]
    if not chosen or not r.stage.parts:
        return None
    roles = list(chosen[0].sensitivity)
    score = {role: max(abs(m.sensitivity.get(role, 0.0)) if math.isfinite(
        m.sensitivity.get(role, 0.0)) else 0.0 for m in chosen) for role in roles}
    roles.sort(key=lambda role: -score[role])
    rows = []
    for role in roles:
        p = r.stage.parts.get(role)
        tol = max(p.tol_plus, p.tol_minus) if p else 0.0
        cells = [(p.ref if p and p.ref else role), f"±{tol * 100:g} %"]
        for m in chosen:
            s = m.sensitivity.get(role, math.nan)
            unit = METRICS[m.name].unit
            if not math.isfinite(s):         # e.g. an unstable nominal: no value to vary
                cells.append("—")
            elif unit in ("dB", "deg"):
                cells.append(f"{s:+.3g} {'dB' if unit == 'dB' else '°'}/%")
            else:
                cells.append(f"{s:+.3f}")
        rows.append(cells)
    return {"type": "table", "title": "What drives the spread",
            "columns": ["Part", "Tolerance"] + [metric_label(m.name, m.at_hz, m.detail)
                                                for m in chosen],
            "rows": rows,
            "note": "Sensitivity: relative change of the metric per relative change of the "
                    "part (dB or degrees per percent for gains and phases), at the nominal "
                    "design; parts ranked by their largest effect."}


def bode_limits(r: StageResult) -> list[dict]:
    out = []
    for c in r.stage.checks:
        if c.metric in ("gain", "phase"):
            out.append({"panel": c.metric, "f_lo": c.at_hz, "f_hi": c.at_hz, "min": c.min,
                        "max": c.max, "label": metric_label(c.metric, c.at_hz)})
        elif c.metric in ("corner", "corner_low", "corner_high", "f0"):
            out.append({"panel": "corner", "f_lo": None, "f_hi": None, "min": c.min,
                        "max": c.max, "label": metric_label(c.metric)})
    return out


def bode_figure(r: StageResult) -> dict:
    gain = 20 * np.log10(np.abs(r.h_nominal))
    phase = np.degrees(np.unwrap(np.angle(r.h_nominal)))
    corner_m = next((m for m in r.metrics if m.name in ("corner", "f0")), None)
    corner = corner_m.nominal if corner_m and math.isfinite(corner_m.nominal) else None
    spread_ = None
    if corner_m is not None:
        s = corner_m.samples[np.isfinite(corner_m.samples)]
        if s.size:
            spread_ = (float(s.min()), float(s.max()))
    marks = []
    for m in r.metrics:
        if m.name == "gain" and m.at_hz is not None:
            ph = r.metric("phase", m.at_hz)
            marks.append((m.at_hz, m.nominal, ph.nominal if ph else math.nan))
    svg = charts.bode(f"{r.stage.id}-bode", r.freqs_hz, gain, phase, band=r.band.as_mapping(),
                      corner_hz=corner, corner_spread=spread_, marks=marks,
                      limits=bode_limits(r), title="", fmt="png")
    return {"type": "figure", "title": "Frequency response", "image": svg, "width": "full",
            "caption": f"Gain and phase, nominal (line) with the spread of {r.samples} Monte "
                       "Carlo samples: outer band min–max, inner band 5–95 %. Shaded regions "
                       "are forbidden by the checks."}


def phasor_figure(r: StageResult) -> dict | None:
    ph = r.phasors
    if ph is None:
        return None
    vectors, tail = [], 0j
    for name, kind, v in ph.vectors:
        ref = _ref_of(r, name)
        vectors.append({"label": f"V({ref}) {abs(v):.3g} V", "value": v, "kind": kind,
                        "tail": tail})
        tail += v
    if ph.closing is not None:
        node, v = ph.closing
        vectors.append({"label": f"V({node}) to ground {abs(v):.3g} V", "value": v,
                        "kind": "C", "tail": tail})
    vectors.append({"label": "Source 1 V", "value": ph.source, "kind": "source", "tail": 0j})
    if ph.output is not None and ph.closing is not None:
        vectors.append({"label": f"Output {abs(ph.output):.3g} V", "value": ph.output,
                        "kind": "sum", "tail": 0j})
    if ph.reference == "current":
        ref_label = f"Current {fq(abs(ph.current), 'A')} (reference)"
        angle = math.degrees(math.atan2(ph.source.imag, ph.source.real))
    else:
        ref_label = "Source voltage (reference)"
        angle = (math.degrees(math.atan2(ph.output.imag, ph.output.real))
                 if ph.output is not None else None)
    svg = charts.phasor(f"{r.stage.id}-phasor", vectors, reference_label=ref_label,
                        freq_hz=ph.freq_hz, angle_deg=angle, fmt="png")
    what = ("the series current, common to every part on the path, is the reference direction"
            if ph.reference == "current" else "the source voltage is the reference direction")
    return {"type": "figure", "title": f"Phasors at {fq(ph.freq_hz, 'Hz')}", "image": svg,
            "width": "full",
            "caption": f"Part voltages head to tail for a 1 V rms source at "
                       f"{fq(ph.freq_hz, 'Hz')}; they add up to the source voltage; {what}."}


def _ref_of(r: StageResult, element: str) -> str:
    p = r.stage.parts.get(element)
    if p is not None:
        return p.ref or p.role
    return {"source.r": "Rs", "source.l": "Ls", "load.r": "RL", "load.c": "CL"}.get(element, element)


def time_figures(r: StageResult) -> list[dict]:
    out = []
    if r.step is not None:
        s = r.step
        window = None
        # Show the settling band a check asks for, else the default one.
        checked = {v.detail for v in r.verdicts if v.metric == "settling"}
        settling = [m for m in r.metrics if m.name == "settling"]
        st = next((m for m in settling if m.detail in checked), settling[0] if settling else None)
        fin = s.nominal[-1]
        if st is not None and math.isfinite(st.nominal):
            band = st.param.fraction(fin)    # the typed settling band (analysis/results.py)
            window = {"t": st.nominal, "lo": fin * (1 - band), "hi": fin * (1 + band),
                      "label": f"settled {st.detail}: {fq(st.nominal, 's')}"}
        svg = charts.time_response(f"{r.stage.id}-step", s.t_s, s.nominal,
                                   band=(s.min, s.max), window=window,
                                   ylabel="Output [V]", fmt="png")
        out.append({"type": "figure", "title": "Step response", "image": svg, "width": "full",
                    "caption": f"Output for a {fq(r.stage.drive.amplitude_v, 'V')} step at t = 0, "
                               "nominal with the min–max band over the samples."})
    if r.pwm is not None:
        w = r.pwm
        svg = charts.time_response(f"{r.stage.id}-pwm", w.t_s, w.nominal,
                                   band=(w.min, w.max),
                                   ylabel="Output − its mean [V]", series=(), fmt="png")
        d = r.stage.drive
        out.append({"type": "figure", "title": "PWM ripple (steady state)", "image": svg,
                    "width": "full",
                    "caption": f"One period of the output in steady state for a "
                               f"{fq(d.amplitude_v, 'V')} PWM drive at {fq(d.frequency_hz, 'Hz')}, "
                               f"duty {d.duty * 100:g} %, shown about its mean "
                               f"({fq(w.mean, 'V')} nominal); min–max band over the samples."})
    return out


def histogram_figures(r: StageResult) -> list[dict]:
    out = []
    for v in r.verdicts:
        m = next((m for m in r.metrics if (m.name, m.at_hz, m.detail) ==
                  (v.metric, v.at_hz, v.detail)), None)
        if m is None:
            continue
        s = m.samples[np.isfinite(m.samples)]
        if s.size < 2:
            continue
        unit = METRICS[m.name].unit
        svg = charts.histogram(f"{r.stage.id}-hist-{len(out)}", s, nominal=m.nominal,
                               lo=v.min, hi=v.max, label=metric_label(m.name, m.at_hz, m.detail),
                               unit=unit, fmt="png")
        out.append({"type": "figure", "title": f"Distribution: {metric_label(m.name, m.at_hz, m.detail)}",
                    "image": svg, "width": "half",
                    "caption": f"{s.size} samples; shaded: outside the limits."})
    return out


def stage_context(r: StageResult, project: Project) -> dict:
    st = r.stage
    kind = KINDS[st.kind]
    blocks: list[dict] = []
    recipe = kind.schematic(st)
    blocks.append({"type": "figure", "title": "Schematic", "image": sch.render_svg(recipe),
                   "width": "natural", "caption": _schematic_caption(r)})
    blocks.append(parts_table(r))
    from rcdoc.note.alternatives import alternatives_block
    alt = alternatives_block(r, fq, metric_label)
    if alt:
        blocks.append(alt)
    for t in (checks_table(r), ratings_table(r)):
        if t:
            blocks.append(t)
    for b in getattr(r.kind_result, "blocks_before", tuple)():
        blocks.append(b)
    blocks.append(metrics_table(r))
    # An unstable nominal has no steady-state response to draw.
    if (r.h_nominal is not None and r.freqs_hz is not None and len(r.freqs_hz)
            and not r.unstable_poles):
        blocks.append(bode_figure(r))
    pf = phasor_figure(r)
    if pf:
        blocks.append(pf)
    blocks += time_figures(r)
    blocks += list(r.kind_result.blocks()) if r.kind_result is not None else []
    blocks += histogram_figures(r)
    sens = sensitivity_table(r)
    if sens:
        blocks.append(sens)
    blocks.append({"type": "text", "title": "Assumptions",
                   "paragraphs": list(_analysis_sentences(r, project)) + list(r.assumptions)})
    v = stage_voltage(r)
    safety = None
    if v > project.board.hazardous_voltage_v:
        safety = {"voltage": fq(v, "V"), "items": list(SAFETY_ITEMS)}
    return {"id": st.id, "title": st.title, "kind": KIND_TITLES.get(st.kind, st.kind),
            "status": r.status, "notes": list(paragraphs(st.notes)) if st.notes else [],
            "safety": safety, "caution": stability_caution(r), "blocks": blocks}


def pole_text(p: complex) -> str:
    """A pole in Hz as a complex value: "120 Hz + j 3.4 kHz"."""
    re, im = p.real / (2 * math.pi), p.imag / (2 * math.pi)
    sign = "−" if im < 0 else "+"
    return f"{fq(re, 'Hz')} {sign} j {fq(abs(im), 'Hz')}"


def stability_caution(r: StageResult) -> dict | None:
    """The caution box of an unstable stage: the offending poles of the nominal design,
    or how many Monte Carlo samples are unstable."""
    items = []
    if r.unstable_poles:
        items.append("The nominal design is unstable: it has poles in the right half-plane or "
                     "on the imaginary axis (s/2π): "
                     + "; ".join(pole_text(p) for p in r.unstable_poles)
                     + ". Its metrics are missing, every check fails and no time response, "
                     "noise or steady state is computed.")
    if r.samples_unstable:
        items.append(f"{r.samples_unstable} of {r.samples} Monte Carlo samples are unstable; "
                     "their metrics are missing and they count as failing every check.")
    if not items:
        return None
    return {"title": "Unstable", "items": items}


def _schematic_caption(r: StageResult) -> str:
    st = r.stage
    bits = []
    if st.source_r or st.source_l:
        bits.append("the source impedance (Rs, Ls) is part of the analysis")
    if st.load_r is not None or st.load_c is not None:
        bits.append("the load (RL, CL) is part of the analysis")
    return ("Values as marked; " + "; ".join(bits) + ".") if bits else \
        "Values as marked; ideal source, output unloaded."


def _analysis_sentences(r: StageResult, project: Project):
    a = project.analysis
    t0, t1 = a.temperature_c
    temp = f"{t0:g} °C" if t0 == t1 else f"{t0:g} °C to {t1:g} °C"
    yield (f"{r.samples} Monte Carlo samples, seed {a.seed}, {a.distribution} tolerance "
           f"distribution" + (" (tolerance = 3σ)" if a.distribution == "normal" else "") +
           f"; ambient {temp}, one temperature per sample shared by all parts.")
    if len(r.freqs_hz):      # kinds with their own analysis (snubbers) have no sweep
        yield (f"Sweep {fq(r.freqs_hz[0], 'Hz')} to {fq(r.freqs_hz[-1], 'Hz')}, "
               f"{a.points_per_decade} points per decade; noise integrated over the sweep at "
               f"{t1:g} °C.")


def summary_rows(results: list[StageResult]) -> list[dict]:
    rows = []
    for r in results:
        key = next((m for m in r.metrics if m.name in ("corner", "f0", "corner_low")), None)
        if key is not None:
            unit = METRICS[key.name].unit
            s = key.samples[np.isfinite(key.samples)]
            spread_ = f" ({fq(s.min(), unit)} … {fq(s.max(), unit)})" if s.size else ""
            key_text = f"{METRICS[key.name].label.split(' (')[0]}: {fq(key.nominal, unit)}{spread_}"
        else:
            key_text = r.kind_result.summary if r.kind_result is not None else "—"
        n = len(r.verdicts) + len(r.ratings)
        ok = sum(v.status == "pass" for v in r.verdicts + r.ratings)
        rows.append({"id": r.stage.id, "cells": [r.stage.title, KIND_TITLES.get(r.stage.kind, r.stage.kind),
                                                 key_text, f"{ok} of {n}", r.status]})
    return rows


def overview_image(results: list[StageResult]) -> str | None:
    rows = []
    for r in results:
        m = next((m for m in r.metrics if m.name in ("corner", "f0", "corner_low",
                                                      "ring_frequency")), None)
        if m is None or not math.isfinite(m.nominal):
            continue
        s = m.samples[np.isfinite(m.samples)]
        rows.append({"label": r.stage.id, "nominal": m.nominal,
                     "min": float(s.min()) if s.size else m.nominal,
                     "max": float(s.max()) if s.size else m.nominal, "status": r.status})
    if not rows:
        return None
    return charts.corner_overview("board-overview", rows, fmt="png")


def method_appendix() -> list[dict]:
    metric_rows = [[m.label, m.name, m.unit, m.description or "—"] for m in METRICS.values()]
    return [
        {"title": "Method", "blocks": [
            {"type": "text", "title": "Circuit solution", "paragraphs": [
                "Each stage becomes a network of resistors, capacitors, inductors and op-amps "
                "between named nodes, driven by an ideal voltage source through the stage's "
                "source impedance and loaded by its stated load. The network is solved by "
                "modified nodal analysis: Kirchhoff's current law at every node, plus one "
                "equation per voltage source, inductor and op-amp output, written as "
                "(G + sC)·x = b. The same matrices give the frequency response (s = j2πf), "
                "the poles (where G + sC is singular) and the time response, stepped by the "
                "three-stage Radau IIA rule (order 5, L-stable: fast parasitic poles are damped, "
                "never ring) on a grid set by the nominal design alone, so that no sample's "
                "result depends on the others.",
                "An op-amp follows the single-pole model A(s) = A0 / (1 + s·A0/(2π·GBW)); "
                "without an amplifier table it is ideal (infinite gain).",
                "Every row of part values (nominal, each Monte Carlo sample, each worst-case "
                "corner, each sensitivity probe) is solved at once as an array, at every "
                "frequency of the sweep."]},
            {"type": "text", "title": "Spread", "paragraphs": [
                "Monte Carlo: each part's value is drawn within its tolerance (uniform, or "
                "normal with the tolerance as 3σ), then moved by its temperature coefficient "
                "or dielectric band at the sample's ambient temperature, then reduced by any "
                "DC-bias loss. The seed fixes the draw: the same file gives the same numbers.",
                "Worst case: extreme-value analysis evaluates the metric at the corners of the "
                "box spanned by every part's lowest and highest in-circuit value (every "
                "corner for up to 8 parts; beyond that, the two corners the sensitivities "
                "point to). A worst-case range wider than the Monte Carlo range is expected. "
                "Corners suffice only for a metric that is monotonic in every part, so each "
                "part is also walked alone through the nominal design (9 values from its "
                "lowest to its highest); where a walk turns back, or the nominal or a sample "
                "lies outside the corners' range, a bounded pattern search inside the box "
                "(from the nominal, the most extreme samples and the best corner, one step up "
                "and down in every part, halving the steps) widens the range. The range "
                "always holds the nominal and every sample; the JSON names the method per "
                "metric (worst_case_method).",
                "Sensitivity: each part is moved by 0.1 % from the nominal design; the "
                "relative change of the metric divided by 0.1 % ranks the parts."]},
            {"type": "text", "title": "Metrics", "paragraphs": [
                "Corner frequencies are found on the sweep and refined by bisection to far "
                "better than 1 ppm. f0 and Q come from the two poles of smallest magnitude. "
                "Rise time is 10 % to 90 % of the step response; settling is the last time "
                "the step response is outside the band around its final value (half an LSB "
                "of an N-bit converter is a band of 2^−(N+1) of the final value, or of the "
                "converter's full scale where the check states one). Ripple is the peak-to-peak "
                "output in periodic steady state. Noise is the Johnson–Nyquist noise of every "
                "resistor (4kTR) carried to the output and integrated over the sweep, which "
                "includes the kT/C limit of the capacitors."]},
            {"type": "text", "title": "Poles and stability", "paragraphs": [
                "Poles are computed for every row on a scaled problem: the unknowns are the "
                "voltages across a spanning tree of the largest admittances at the network's "
                "characteristic frequency, each part is entered in those coordinates "
                "directly, frequency is scaled by the characteristic rate and rows and "
                "columns are balanced, so that parts from 1 mΩ to 1 GΩ and 1 fF to 10 mF "
                "give the closed-form values. A network stage takes f0, Q and peaking from "
                "its complex pole pair nearest the imaginary axis; without one they are "
                "missing.",
                "A row is unstable when a pole p has Re p ≥ −10⁻⁹·|p| (right half-plane, "
                "imaginary axis, or a Q above 5·10⁸ that rounding could put on either side; "
                "a pole at s = 0 included). An unstable row has no metrics: they are "
                "missing, every check fails on it, and its time responses, steady states "
                "and noise are not computed. A stage whose nominal design is unstable fails, "
                "whatever its checks."]},
            {"type": "table", "title": "Metric reference", "columns": ["Metric", "Key",
                                                                        "Unit", "Definition"],
             "rows": metric_rows, "note": None},
        ]},
    ]


def bom_appendix(project: Project) -> list[dict]:
    """An appendix section listing the BOM rows no stage uses (none if all are used)."""
    rows_by_line: dict[int, list] = {}
    for row in project.bom_unused:
        rows_by_line.setdefault(row.line, []).append(row)
    if not rows_by_line:
        return []
    first = [rows[0] for _, rows in sorted(rows_by_line.items())]
    cols = [c for c in ("value", "tolerance", "dielectric", "voltage", "power", "model")
            if c == "value" or any(c in r.fields for r in first)]     # only filled columns
    table = [[", ".join(r.ref for r in rows_by_line[row.line]), str(row.line)]
             + [row.fields.get(c, "") for c in cols] for row in first]
    n = sum(len(v) for v in rows_by_line.values())
    return [{"title": "Bill of materials: parts not analysed", "blocks": [
        {"type": "table", "title": "",
         "columns": ["Ref", "BOM line"] + [c.capitalize() for c in cols],
         "rows": table,
         "note": f"{n} designator{'' if n == 1 else 's'} of {project.analysis.bom} that no "
                 "stage of this note uses, as written in the bill of materials. They are not "
                 "analysed here."}]}]


def note_context(project: Project, results: list[StageResult], *, extra_appendix=(),
                 stage_contexts: list[dict] | None = None, changes: dict | None = None) -> dict:
    """The whole note's context. ``stage_contexts`` (one stage_context per result,
    made in worker processes or taken from the build cache) saves drawing them here;
    ``changes`` (rcdoc.commands.since.changes_section) goes right after the summary."""
    b = project.board
    a = project.analysis
    t0, t1 = a.temperature_c
    return {
        "title": f"Design note: {b.name} rev {b.revision}",
        "generator": f"rcdoc {__version__}",
        "board": {"name": b.name, "revision": b.revision, "date": b.date,
                  "authors": list(b.authors), "notes": list(paragraphs(b.notes)) if b.notes else []},
        "status": board_status(results),
        "analysis": [["Stages", str(len(results))],
                     ["Monte Carlo samples per stage", str(a.samples)],
                     ["Seed", str(a.seed)], ["Tolerance distribution", a.distribution],
                     ["Ambient temperature", f"{t0:g} °C" if t0 == t1 else f"{t0:g} °C to {t1:g} °C"],
                     ["Hazardous voltage threshold", fq(b.hazardous_voltage_v, "V")]],
        "summary": {"columns": ["Stage", "Kind", "Key result (spread)", "Checks passed",
                                "Verdict"], "rows": summary_rows(results)},
        "overview_image": overview_image(results),
        "stages": (list(stage_contexts) if stage_contexts is not None
                   else [stage_context(r, project) for r in results]),
        "appendix": list(extra_appendix) + bom_appendix(project) + method_appendix(),
        "changes": changes,
    }
