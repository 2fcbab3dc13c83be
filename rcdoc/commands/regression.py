"""``rcdoc diff`` for machines: the comparison as JSON, and what counts as a regression.

What it is for: a CI job that runs ``rcdoc diff git:main board.toml
--fail-on regression`` fails the merge request when the change made the
board worse: a check's verdict went from pass to fail, its yield fell, or a
stage became unstable (its JSON ``samples_unstable`` went from 0 to more;
a summary without that key counts as 0). Both sides are analysed through the
build cache (rcdoc.commands.build, rcdoc.commands.cache), so a diff after a build or a check
analyses only what they have not.

Regressions are judged on the two JSON summaries (rcdoc.note.summary), the same
data a tool would read. What it must not do: decide verdicts or render.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

from rcdoc import __version__
from rcdoc.analysis.metrics import METRICS

__all__ = ["REGRESSION_WHATS", "regressions", "diff_json", "run_diff"]

# Yields equal up to rounding are equal (as in rcdoc.analysis.checks).
YIELD_SLACK = 1e-12
REGRESSION_WHATS = ("verdict", "yield", "unstable")


def _check_key(c: dict) -> tuple:
    return (c.get("metric"), c.get("at"), c.get("detail"), c.get("part"))


def regressions(old: dict, new: dict) -> list[dict]:
    """What got worse from the ``old`` JSON summary to the ``new`` one, in the new
    file's stage order: one entry per stage that became unstable and per check
    whose verdict went from pass to fail or, else, whose yield fell."""
    out = []
    before = {s["id"]: s for s in old.get("stages", [])}
    for s in new.get("stages", []):
        o = before.get(s["id"])
        was = int((o or {}).get("samples_unstable", 0) or 0)
        now = int(s.get("samples_unstable", 0) or 0)
        if now > 0 and was == 0:
            out.append({"stage": s["id"], "what": "unstable", "before": was, "after": now})
        if o is None:
            continue
        old_checks = {_check_key(c): c for c in o.get("checks", [])}
        for c in s.get("checks", []):
            b = old_checks.get(_check_key(c))
            if b is None:
                continue
            label = c.get("label") or c.get("metric")
            if b["status"] == "pass" and c["status"] == "fail":
                out.append({"stage": s["id"], "what": "verdict", "check": label,
                            "before": "pass", "after": "fail"})
            elif c["yield"] + YIELD_SLACK < b["yield"]:
                out.append({"stage": s["id"], "what": "yield", "check": label,
                            "before": b["yield"], "after": c["yield"]})
    return out


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _fields(fields) -> list[dict]:
    return [{"name": f.name, "before": f.text_before, "after": f.text_after} for f in fields]


def _verdict(v) -> dict | None:
    if v is None:
        return None
    return {"status": v.status, "yield": v.yield_, "worst": _num(v.worst),
            "min": _num(v.min), "max": _num(v.max), "required_yield": v.required_yield}


def diff_json(d, regs: list[dict]) -> dict:
    """The comparison (rcdoc.commands.diff.ProjectDiff) and its regressions as plain JSON data.
    Stage and part settings are given as the texts the note shows."""
    from rcdoc.commands.diff_render import metric_name, verdict_name
    return {
        "format": 1,
        "generator": f"rcdoc {__version__}",
        "old": {"label": d.old_label, "revision": d.old_revision, "status": d.old_status},
        "new": {"label": d.new_label, "revision": d.new_revision, "status": d.new_status},
        "stages": [{"stage": s.stage, "change": s.change, "title": s.title,
                    "fields": _fields(s.fields)} for s in d.stages],
        "parts": [{"stage": p.stage, "role": p.role, "ref": p.ref, "change": p.change,
                   "fields": _fields(p.fields), **({"part": p.text} if p.text else {})}
                  for p in d.parts],
        "metrics": [{"stage": m.stage, "metric": m.name,
                     **({"at": m.at_hz} if m.at_hz is not None else {}),
                     **({"detail": m.detail} if m.detail else {}),
                     "label": metric_name(m.name, m.at_hz, m.detail),
                     "unit": METRICS[m.name].json_unit,
                     "before": _num(m.before), "after": _num(m.after)} for m in d.metrics],
        "checks": [{"stage": v.stage, "metric": v.metric,
                    **({"at": v.at_hz} if v.at_hz is not None else {}),
                    **({"detail": v.detail} if v.detail else {}),
                    **({"part": v.part} if v.part else {}),
                    "label": verdict_name(v), "before": _verdict(v.before),
                    "after": _verdict(v.after)} for v in d.verdicts],
        "regressions": regs,
    }


def _analysed(project, cache_file: str, output: str | None, jobs: int):
    """Analyse through the build cache of ``cache_file`` (the file the project
    is, or is a git revision of); the cache does not depend on the file's name."""
    from rcdoc.commands.build import analyse_project, output_dir
    out_dir = output_dir(cache_file, output)
    outcome = analyse_project(dataclasses.replace(project, file=cache_file), jobs=jobs,
                              out_dir=out_dir)
    outcome.project = project
    return outcome


def run_diff(old: str, new: str, *, samples=None, seed=None, jobs: int = 1,
             output: str | None = None):
    """Load, analyse (through the build cache) and compare two sides; returns
    (ProjectDiff, regressions). The cache entries are filed on success."""
    from rcdoc.commands.diff import GIT_PREFIX, compare, load_side
    from rcdoc.note.summary import summary
    p_old = load_side(old, new, samples=samples, seed=seed)
    p_new = load_side(new, old, samples=samples, seed=seed)
    real_old = new if old.startswith(GIT_PREFIX) else old
    real_new = old if new.startswith(GIT_PREFIX) else new
    o_old = _analysed(p_old, real_old, output, jobs)
    o_new = _analysed(p_new, real_new, output, jobs)
    d = compare(p_old, o_old.results, p_new, o_new.results, old_label=old, new_label=new)
    regs = regressions(summary(p_old, o_old.results), summary(p_new, o_new.results))
    for o in (o_old, o_new):
        o.commit_cache()
    return d, regs


def write_json(path: str, data: dict) -> Path:
    from rcdoc.errors import ProjectError
    from rcdoc.files import write_atomic
    from rcdoc.note.summary import to_json
    target = Path(path)
    try:
        write_atomic(target, to_json(data).encode("utf-8"))
    except OSError as exc:
        raise ProjectError(f"cannot write the JSON: {exc.strerror or exc}", path="--json",
                           file=str(path)) from exc
    return target
