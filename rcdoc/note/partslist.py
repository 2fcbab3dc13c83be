"""The parts list: every analysed part with its worst stress, rating and margin,
written beside the note as ``<stem>-parts.csv``.

Stresses: a resistor's average power and a capacitor's peak voltage (bias plus
the drive's response), as the analysis computes them for the ratings
(rcdoc.analysis.analyse, the snubber kind); "worst" is the highest over the Monte Carlo
samples, the number the rating check judges. A part without a drive has no
computed stress unless a capacitor states its ``bias``. The margin is the
rating minus the worst stress, in the stress's unit (negative: over-stressed),
the same sense as a check's margin in the JSON summary. A resistor also has
its surge power and energy per edge, judged against its ``pulse`` rating.

What it must not do: analyse or judge; it reads StageResults and writes text.
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np

COLUMNS = ("stage", "channel", "ref", "role", "type", "value", "unit", "tolerance_plus",
           "tolerance_minus", "dielectric", "model", "stress", "stress_unit",
           "stress_nominal", "stress_worst", "rating", "margin", "status",
           "surge_worst", "edge_energy_worst", "pulse_rating", "pulse_unit", "pulse_margin",
           "pulse_status")
_TYPES = {"R": ("resistor", "ohm"), "C": ("capacitor", "F"), "L": ("inductor", "H")}
_STRESS = {"R": ("resistor_power", "W"), "C": ("capacitor_voltage", "V")}


def _highest(samples: np.ndarray) -> float:
    # As rcdoc.analysis.checks.worst_value with an upper limit: NaN if any sample has no value.
    if samples.size == 0 or not np.all(np.isfinite(samples)):
        return math.nan
    return float(samples.max())


def _stress_of(result, role: str, part) -> dict | None:
    """The stress of one part: its rating check where it has one, else what the analysis kept."""
    for v in result.ratings:
        if v.part == (part.ref or role) and v.metric == _STRESS.get(part.kind, ("",))[0]:
            return {"metric": v.metric, "nominal": v.nominal, "worst": v.worst,
                    "rating": v.max, "status": v.status}
    st = result.stresses.get(role)     # computed by the analysis (rcdoc.analysis.analyse)
    kept = {"metric": st.metric, "nominal": st.nominal, "worst": st.worst} if st else None
    if kept is None and result.stage.kind == "snubber" and part.kind in _STRESS:
        m = result.metric(_STRESS[part.kind][0])    # a snubber's one R and one C
        if m is not None:
            kept = {"metric": m.name, "nominal": m.nominal, "worst": _highest(m.samples)}
    return kept


def _pulse_of(result, role: str, part) -> list[str]:
    """A resistor's surge power and energy per edge (worst sample) and its pulse
    rating: the rating check where the part states ``pulse``, else what the
    analysis kept (a snubber's from its metrics)."""
    if part.kind != "R":
        return [""] * 6
    worst = {}
    st = result.stresses.get(role)
    for ps in (st.pulse if st else ()):
        worst[ps.metric] = ps.worst
    if not worst and result.stage.kind == "snubber":
        for name in ("resistor_surge", "resistor_edge_energy"):
            m = result.metric(name)
            if m is not None:
                worst[name] = _highest(m.samples)
    metric, unit, rating = (("resistor_edge_energy", "J", part.pulse_energy_j)
                            if part.pulse_energy_j is not None else
                            ("resistor_surge", "W", part.pulse_power_w))
    status = ""
    for v in result.ratings:
        if v.part == (part.ref or role) and v.metric == metric:
            worst[metric], status = v.worst, v.status
    w = worst.get(metric)
    margin = rating - w if rating is not None and w is not None and math.isfinite(w) else None
    return [_num(worst.get("resistor_surge")), _num(worst.get("resistor_edge_energy")),
            _num(rating), unit if rating is not None else "", _num(margin), status]


def _num(x) -> str:
    if x is None:
        return ""
    x = float(x)
    return repr(x) if math.isfinite(x) else ""


def rows(results) -> list[list[str]]:
    """One row per analysed part, per channel where the stage has channels."""
    out = []
    for r in results:
        chans = r.stage.channels or ({},)
        for k, chan in enumerate(chans, start=1):
            for row in r.parts:
                p = row.part
                kind, unit = _TYPES[p.kind]
                s = _stress_of(r, p.role, p) or {}
                rating, worst = s.get("rating"), s.get("worst")
                if rating is None:     # rated, but no stress computed (no drive)
                    rating = p.power_rating_w if p.kind == "R" else \
                        p.voltage_rating_v if p.kind == "C" else None
                margin = (rating - worst if rating is not None and worst is not None
                          and math.isfinite(worst) else None)
                out.append([r.stage.id, str(k) if r.stage.channels else "",
                            chan.get(p.role, p.ref), p.role, kind, _num(p.value), unit,
                            _num(p.tol_plus), _num(p.tol_minus), p.dielectric or "",
                            p.model or "", s.get("metric", ""),
                            _STRESS[p.kind][1] if p.kind in _STRESS and (s or rating)
                            else "", _num(s.get("nominal")),
                            _num(worst), _num(rating), _num(margin), s.get("status", "")]
                           + _pulse_of(r, p.role, p))
    return out


def parts_csv(results) -> bytes:
    """The parts list as UTF-8 CSV text, one header row; numbers in SI base units."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    w.writerows(rows(results))
    return buf.getvalue().encode("utf-8")
