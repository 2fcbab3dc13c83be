"""Machine-readable outputs: the JSON summary (format 1) and the JUnit XML report.

Both read StageResults and write text; the key names of the JSON are part of
the interface (see README). Non-finite numbers are written as null.
"""

from __future__ import annotations

import json
import math

import numpy as np

from rcdoc import __version__
from rcdoc.analysis.analyse import StageResult
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Project
from rcdoc.input.quantities import PART_UNITS, format_quantity
from rcdoc.note.machine import check_extras, describe_verdict  # noqa: F401 - part of this module's interface

# XML escaping as xml.sax.saxutils writes it (tests/test_machine_output.py compares
# the two), without that module: it imports urllib.request and with it http.client,
# email and ssl (about 10 ms of `rcdoc check`, which loads no renderer).
def escape(text: str) -> str:
    """Character data: &, < and > as entities."""
    return text.replace("&", "&amp;").replace(">", "&gt;").replace("<", "&lt;")


def quoteattr(text: str) -> str:
    """An attribute value with its quotes: escaped, line breaks and tabs as
    character references, in double quotes (single ones where it holds a double
    quote and no single one)."""
    text = escape(text).replace("\n", "&#10;").replace("\r", "&#13;").replace("\t", "&#9;")
    if '"' not in text:
        return f'"{text}"'
    if "'" not in text:
        return f"'{text}'"
    return '"' + text.replace('"', "&quot;") + '"'


def _num(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def board_status(results: list[StageResult]) -> str:
    return "fail" if any(r.status != "pass" for r in results) else "pass"


def metric_entry(m) -> dict:
    s = m.samples
    finite = s[np.isfinite(s)]
    entry = {"metric": m.name}
    if m.at_hz is not None:
        entry["at"] = float(m.at_hz)
    if m.detail:
        entry["detail"] = m.detail
    entry["unit"] = METRICS[m.name].json_unit
    entry["nominal"] = _num(m.nominal)
    entry["min"] = _num(finite.min()) if finite.size else None
    entry["max"] = _num(finite.max()) if finite.size else None
    entry["mean"] = _num(finite.mean()) if finite.size else None
    # The spread of one sample says nothing about the spread of the parts: no std.
    entry["std"] = _num(finite.std()) if finite.size > 1 else None
    entry["worst_case"] = [_num(m.worst_case[0]), _num(m.worst_case[1])]
    entry["worst_case_method"] = m.worst_case_method
    entry["missing"] = m.missing
    return entry


def verdict_entry(v) -> dict:
    entry = {"metric": v.metric}
    if v.part:
        entry["part"] = v.part
    if v.at_hz is not None:
        entry["at"] = float(v.at_hz)
    if v.detail:
        entry["detail"] = v.detail
    entry.update({"min": _num(v.min), "max": _num(v.max), "yield": v.yield_,
                  "required_yield": v.required_yield, "worst": _num(v.worst),
                  "status": v.status})
    return entry


def part_entry(row) -> dict:
    p = row.part
    tol = p.tol_plus if abs(p.tol_plus - p.tol_minus) < 1e-12 else \
        {"plus": p.tol_plus, "minus": p.tol_minus}
    entry = {"role": p.role, "ref": p.ref, "value": p.value,
             "unit": PART_UNITS[p.kind], "tolerance": tol,
             "preferred": row.preferred}
    if p.dielectric:
        entry["dielectric"] = p.dielectric
    return entry


def summary(project: Project, results: list[StageResult]) -> dict:
    from rcdoc.input.positions import project_lines
    a = project.analysis
    lines = project_lines(project)     # each check's line in the file (rcdoc.input.positions)
    return {
        "format": 1,
        "generator": f"rcdoc {__version__}",
        "board": {"name": project.board.name, "revision": project.board.revision,
                  "date": project.board.date},
        "analysis": {"samples": a.samples, "seed": a.seed, "distribution": a.distribution,
                     "temperature": list(a.temperature_c)},
        "status": board_status(results),
        "stages": [{
            "id": r.stage.id, "kind": r.stage.kind, "title": r.stage.title,
            "status": r.status,
            **({"reason": r.reason} if r.reason else {}),
            "samples_unstable": r.samples_unstable,
            "metrics": [metric_entry(m) for m in r.metrics],
            "checks": [{**verdict_entry(v), **extra} for v, extra
                       in zip(r.verdicts + r.ratings, check_extras(r, lines))],
            "parts": [part_entry(row) for row in r.parts],
            # Kind-specific results under the kind's name ("snubber", "debounce").
            **_kind_json(r),
            **({"channels": [dict(c) for c in r.stage.channels]} if r.stage.channels else {}),
        } for r in results],
    }


def _kind_json(r: StageResult) -> dict:
    js = r.kind_result.json() if r.kind_result is not None else None
    return {r.stage.kind: js} if js is not None else {}


def to_json(data: dict) -> str:
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n"



def case_name(v) -> str:
    name = v.metric
    if v.part:
        name += f" {v.part} rating"
    if v.at_hz is not None:
        name += f" at {format_quantity(v.at_hz, 'Hz')}"
    if v.detail and v.detail != "rating":
        name += f" ({v.detail})"
    return name


def junit(projects: list[tuple[Project, list[StageResult]]], seconds=None) -> str:
    """JUnit XML: one suite per project file, one test case per check or rating.

    Cases carry the project file and the line of their check (rcdoc.input.positions);
    suites carry seed, samples and rcdoc's version as properties. ``seconds``
    (one {stage id: analysis seconds} per project; 0 for a stage from the
    cache) gives each case its stage's time shared evenly over its cases.
    """
    from rcdoc.input.positions import project_lines
    seconds = list(seconds) if seconds is not None else [{} for _ in projects]
    lines = ['<?xml version="1.0" encoding="UTF-8"?>']
    total = sum(len(r.verdicts) + len(r.ratings) for _, rs in projects for r in rs)
    fails = sum(v.status != "pass" for _, rs in projects for r in rs
                for v in r.verdicts + r.ratings)
    whole = sum(sum(s.values()) for s in seconds)
    lines.append(f'<testsuites name="rcdoc" tests="{total}" failures="{fails}" '
                 f'time="{whole:.3f}">')
    for (project, results), times in zip(projects, seconds):
        n = sum(len(r.verdicts) + len(r.ratings) for r in results)
        f = sum(v.status != "pass" for r in results for v in r.verdicts + r.ratings)
        file = quoteattr(project.file)
        lines.append(f'  <testsuite name={file} tests="{n}" failures="{f}" '
                     f'time="{sum(times.values()):.3f}">')
        lines.append("    <properties>")
        for name, value in (("seed", project.analysis.seed),
                            ("samples", project.analysis.samples),
                            ("rcdoc version", __version__)):
            lines.append(f'      <property name="{name}" value={quoteattr(str(value))}/>')
        lines.append("    </properties>")
        where = project_lines(project)
        for r in results:
            checks = r.verdicts + r.ratings
            each = times.get(r.stage.id, 0.0) / len(checks) if checks else 0.0
            for v, extra in zip(checks, check_extras(r, where)):
                cls = quoteattr(f"{project.board.name}.{r.stage.id}")
                line = f' line="{extra["line"]}"' if extra["line"] is not None else ""
                lines.append(f'    <testcase classname={cls} name={quoteattr(case_name(v))} '
                             f'file={file}{line} time="{each:.3f}">')
                if v.status != "pass":
                    msg = describe_verdict(v)
                    lines.append(f'      <failure message={quoteattr(msg)}>{escape(msg)}</failure>')
                lines.append("    </testcase>")
        lines.append("  </testsuite>")
    lines.append("</testsuites>")
    return "\n".join(lines) + "\n"
