"""Machine output of ``rcdoc check``: the fields a check carries for tools,
the CI annotation lines, and where ``--json`` writes.

What it is for: a CI job reads the JSON summary, the JUnit report and the
annotation lines instead of the terminal table. Each check gets its label
(as the note words it), unit, nominal value, margin to the nearest limit and
the line of its table in the project file (rcdoc.input.positions).

Annotation lines follow the workflow-command form that hosted CI runners
show beside the changed line: ``::error file=F,line=N,title=T::message``.
Message text escapes ``%``, CR and LF; property values (file, title) escape
``:`` and ``,`` as well (``%25``, ``%0D``, ``%0A``, ``%3A``, ``%2C``).

What it must not do: analyse, render or decide verdicts.
"""

from __future__ import annotations

import math
from pathlib import Path

from rcdoc.errors import ProjectError
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.positions import check_line, rating_line
from rcdoc.input.quantities import distinct_digits, format_quantity

__all__ = ["margin", "check_label", "check_extras", "annotation_lines", "escape_data",
           "escape_property", "json_targets"]


def margin(v) -> float | None:
    """Distance from the worst value to the nearest limit, in the check's unit;
    negative when the worst value is outside; None when no worst value exists."""
    w = float(v.worst)
    if not math.isfinite(w):
        return None
    room = []
    if v.min is not None:
        room.append(w - v.min)
    if v.max is not None:
        room.append(v.max - w)
    return min(room) if room else None


def check_label(v) -> str:
    """The check as the note words it; a rating names its part."""
    from rcdoc.note.context import metric_label
    label = metric_label(v.metric, v.at_hz, v.detail)
    return f"{label} {v.part} (rating)" if v.part else label


def _finite(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def check_extras(r, lines: dict[str, int]) -> list[dict]:
    """One dict per check then rating of a StageResult (the order of its JSON
    "checks"): label, unit, nominal, margin, line."""
    out = []
    for k, v in enumerate(r.verdicts, start=1):
        out.append(_extra(v, check_line(lines, r.stage, k)))
    for v in r.ratings:
        out.append(_extra(v, rating_line(lines, r.stage, v.part)))
    return out


def _extra(v, line) -> dict:
    return {"label": check_label(v), "unit": METRICS[v.metric].json_unit,
            "nominal": _finite(v.nominal), "margin": _finite(margin(v)), "line": line}


def escape_data(text: str) -> str:
    return text.replace("%", "%25").replace("\r", "%0D").replace("\n", "%0A")


def escape_property(text: str) -> str:
    return escape_data(text).replace(":", "%3A").replace(",", "%2C")


def annotation_lines(project, results, lines: dict[str, int]) -> list[str]:
    """One ``::error`` line per failed check or rating of one project."""
    out = []
    for r in results:
        extras = check_extras(r, lines)
        for v, extra in zip(r.verdicts + r.ratings, extras):
            if v.status == "pass":
                continue
            props = [f"file={escape_property(str(project.file))}"]
            if extra["line"] is not None:
                props.append(f"line={extra['line']}")
            title = f"{r.stage.id}: {extra['label']} failed"
            props.append(f"title={escape_property(title)}")
            message = f"{r.stage.title}: {extra['label']}: {describe_verdict(v)}"
            out.append(f"::error {','.join(props)}::{escape_data(message)}")
    return out


def json_targets(target: str, files: list[str]) -> list[Path]:
    """Where ``check --json TARGET`` writes each project's summary.

    One project file: TARGET is the file, or, if TARGET is an existing folder,
    ``TARGET/<stem>.json``. Several: TARGET is a folder (made if missing) and
    each summary is ``<stem>.json`` in it; two files with one stem are an error.
    """
    t = Path(target)
    if len(files) == 1 and not t.is_dir():
        if t.exists() and not t.is_file():
            raise ProjectError("--json names something that is not a file", file=target,
                               path="--json")
        return [t]
    if t.exists() and not t.is_dir():
        raise ProjectError("with several project files, --json names a folder; this is a file",
                           file=target, path="--json")
    out, seen = [], {}
    for f in files:
        stem = Path(f).stem
        if stem in seen:
            raise ProjectError(f"'{f}' and '{seen[stem]}' would both write {stem}.json; "
                               "give one --json per file name", path="--json")
        seen[stem] = f
        out.append(t / f"{stem}.json")
    return out

def describe_verdict(v) -> str:
    """A failed check in one line (JUnit, CI annotations); the worst value and the
    limit get enough digits to read differently when they differ."""
    m = METRICS[v.metric]
    unit = m.unit
    d = distinct_digits([v.worst, v.min, v.max], unit, m.digits, resolution=m.resolution)

    def q(x):
        return format_quantity(x, unit, d, resolution=m.resolution, stress=m.stress)
    lim = []
    if v.min is not None:
        lim.append(f"min {q(v.min)}")
    if v.max is not None:
        lim.append(f"max {q(v.max)}")
    worst = q(v.worst) if math.isfinite(v.worst) else "not found"
    return (f"{' '.join(lim)}; worst {worst}; yield {v.yield_ * 100:.2f} % "
            f"(required {v.required_yield * 100:g} %)")
