"""The design note's content, drawing-free part: number formatting, the stage's
tables (parts, checks, ratings, metrics, sensitivities), the summary rows and
the appendix texts.

rcdoc.note.page builds the whole report context (with the figures) from these;
the terminal, the diff and the machine-readable outputs read the formatting
helpers here without loading any drawing library.
"""

from __future__ import annotations

import math

import numpy as np

from rcdoc.analysis.analyse import StageResult
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Project
from rcdoc.input.quantities import NOTE_MINUS, PART_UNITS, distinct_digits, format_quantity, format_yield
from rcdoc.kinds import KINDS

def fq(value, unit: str, digits: int = 3, metric: str | None = None) -> str:
    """A number for the note: the one formatter, U+2212 minus; with ``metric``,
    that metric's resolution and digits from the registry."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    if metric is None:
        return format_quantity(float(value), unit, digits, minus=NOTE_MINUS)
    m = METRICS[metric]
    return format_quantity(float(value), unit, max(digits, m.digits), minus=NOTE_MINUS,
                           resolution=m.resolution, stress=m.stress)


def metric_label(m_name: str, at_hz=None, detail: str = "", label: str = "") -> str:
    label = label or METRICS[m_name].label
    if at_hz is not None:
        label += f" at {fq(at_hz, 'Hz')}"
    if detail and detail != "rating":
        label += f" ({detail})"
    return label


def limit_text(v, unit: str, minus: str = NOTE_MINUS) -> str:
    """A verdict's limit, with enough digits that it reads differently from the
    worst value when they differ (``verdict_digits``)."""
    digits = verdict_digits(v, unit)

    def f(x):
        return format_quantity(x, unit, digits, minus=minus)
    if v.min is not None and v.max is not None:
        return f"{f(v.min)} … {f(v.max)}"
    if v.min is not None:
        return f"≥ {f(v.min)}"
    return f"≤ {f(v.max)}"


def verdict_digits(v, unit: str) -> int:
    """Significant figures that print a verdict's worst value and limits apart."""
    m = METRICS.get(v.metric)
    return distinct_digits([v.worst, v.min, v.max], unit, m.digits if m else 3,
                           resolution=m.resolution if m else 0.0)


def pct(x: float) -> str:
    """A yield: two decimals, and never "100.00 %" for a yield below 100 %."""
    return format_yield(x, 2)


def stage_voltage(r: StageResult) -> float:
    """Highest voltage the stage sees (DC or peak), for the safety cautions."""
    v = 0.0
    st = r.stage
    if st.drive is not None:
        v = max(v, abs(st.drive.amplitude_v))
    for p in st.parts.values():
        if p.bias_v:
            v = max(v, p.bias_v)
    kr = kind_result(r)
    if kr is not None:
        v = max(v, float(kr.peak_voltage_v))
    m = r.metric("capacitor_voltage")
    if m is not None and math.isfinite(m.nominal):
        v = max(v, m.nominal)
    return v


def parts_table(r: StageResult) -> dict:
    rows = []
    for row in r.parts:
        p = row.part
        unit = PART_UNITS[p.kind]
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
        d = verdict_digits(v, unit)          # worst and limit print apart when they differ
        rows.append([metric_label(v.metric, v.at_hz, v.detail), limit_text(v, unit),
                     fq(v.nominal, unit, d, v.metric), fq(v.worst, unit, d, v.metric),
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
        rows.append([v.part, METRICS[v.metric].label, fq(v.max, unit),
                     fq(v.nominal, unit, metric=v.metric), fq(v.worst, unit, metric=v.metric),
                     f"{(v.worst / v.max * 100) if v.max else 0:.0f} %",
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
            if s.size < 2:                   # one sample has no spread to speak of
                std = math.nan
        else:
            lo = hi = mean = std = math.nan
        missing = m.samples.size - s.size
        def q(x, name=m.name, unit=unit):
            return fq(x, unit, metric=name)    # the registry's resolution: no rounding noise
        rows.append([metric_label(m.name, m.at_hz, m.detail, m.label), q(m.nominal), q(lo),
                     q(hi), q(mean), q(std),
                     f"{q(m.wc[0])} … {q(m.wc[1])}"
                     + (" (searched inside)" if "search" in m.wc_method else "")
                     + (f" ({missing} samples without a value)" if missing else "")])
    return {"type": "table", "title": "Metrics",
            "columns": ["Metric", "Nominal", "Min", "Max", "Mean", "Std dev", "Worst case"],
            "rows": rows, "note": "Min, max, mean and standard deviation over the Monte "
                                  "Carlo samples; worst case over the parts' limits: the "
                                  "corners of the box of part values, searched inside the box "
                                  "where the metric is not monotonic in a part (\"searched "
                                  "inside\"); it holds the nominal and every sample."}


def _signed(s: float) -> str:
    """A sensitivity with three significant figures in positional notation; below
    1e-4 (per percent) it is rounding noise and reads 0."""
    if abs(s) < 1e-4:
        return "0"
    text = np.format_float_positional(abs(s), precision=3, unique=False, fractional=False,
                                      trim="-")
    return ("+" if s > 0 else NOTE_MINUS) + text


def _short_heading(m) -> str:
    """A narrow column heading: the registry's short label, its frequency, its band."""
    text = METRICS[m.name].short
    if m.at_hz is not None:
        text += f" at {fq(m.at_hz, 'Hz')}"
    return f"{text} ({m.detail})" if m.detail else text


def sensitivity_table(r: StageResult) -> dict | None:
    chosen = [m for m in r.metrics if m.name in {v.metric for v in r.verdicts}] or \
        [m for m in r.metrics if m.name in ("corner", "f0", "corner_low")]
    chosen = chosen[:3]         # the part and tolerance columns plus three fit the text width
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
                cells.append(f"{_signed(s)} {'dB' if unit == 'dB' else '°'}/%")
            else:
                cells.append(_signed(s))
        rows.append(cells)
    return {"type": "table", "title": "What drives the spread",
            "columns": ["Part", "Tolerance"] + [_short_heading(m) for m in chosen],
            "rows": rows,
            "note": "Sensitivity: relative change of the metric per relative change of the "
                    "part (dB or degrees per percent for gains and phases), at the nominal "
                    "design; parts ranked by their largest effect."}


def summary_rows(results: list[StageResult]) -> list[dict]:
    rows = []
    for r in results:
        # The kind's own one-line summary, else the first frequency of its headline.
        kr = kind_result(r)
        own = kr is not None and kr.summary not in ("", "—")
        key = None if own else next(
            (m for m in r.metrics if m.name in KINDS[r.stage.kind].HEADLINE
             and METRICS[m.name].unit == "Hz"), None)
        if key is not None:
            unit = METRICS[key.name].unit
            s = key.samples[np.isfinite(key.samples)]
            spread_ = f" ({fq(s.min(), unit)} … {fq(s.max(), unit)})" if s.size else ""
            key_text = f"{METRICS[key.name].label.split(' (')[0]}: {fq(key.nominal, unit)}{spread_}"
        else:
            kr = kind_result(r)
            key_text = kr.summary if kr is not None else "—"
        n = len(r.verdicts) + len(r.ratings)
        ok = sum(v.status == "pass" for v in r.verdicts + r.ratings)
        rows.append({"id": r.stage.id, "cells": [r.stage.title, KINDS[r.stage.kind].TITLE,
                                                 key_text, f"{ok} of {n}", r.status]})
    return rows


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


def kind_result(r: StageResult):
    """The stage's kind result (rcdoc.analysis.results.KindResult), or None."""
    return r.kind_result
