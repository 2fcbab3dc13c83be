"""Small project files for the tests: write the TOML into tmp_path and load it
through the real loader (so every test also exercises loading)."""

import textwrap
from pathlib import Path

from rcdoc.kinds import analyse_stage
from rcdoc.kinds import load_project


def load(tmp_path: Path, stages: str, analysis: str = "samples = 200", name: str = "p",
         board: str = "Test bench"):
    head = textwrap.dedent(f"""\
        [board]
        name = "{board}"
        revision = "A"
        date = "2026-01-01"
        [analysis]
        {analysis}
        """)
    path = tmp_path / f"{name}.toml"
    path.write_text(head + textwrap.dedent(stages), encoding="utf-8")
    return load_project(path)


def analyse_one(tmp_path, stages, analysis="samples = 200", name="p"):
    """Load a one-stage project and analyse its stage."""
    project = load(tmp_path, stages, analysis, name)
    return analyse_stage(project.stages[0], project.analysis)


def mc_evaluator(path: Path):
    """The Evaluator of the first stage of a project file over its Monte Carlo rows
    alone (no nominal or worst-case rows), with those rows' part values."""
    import numpy as np
    from rcdoc.analysis.analyse import passband_of
    from rcdoc.analysis.evaluate import Evaluator, sweep_for
    from rcdoc.analysis.spread import build_batch
    from rcdoc.kinds import kind_of
    project = load_project(str(path))
    stage = project.stages[0]
    kind = kind_of(stage)
    batch = build_batch(stage, project.analysis)
    values = {n: np.ascontiguousarray(v[batch.mc]) for n, v in batch.values.items()}
    char = kind.characteristic_hz(stage)
    return Evaluator(stage, kind.build(stage), values, sweep_for(char, project.analysis),
                     passband_of(stage, kind), char), values


def overview_rows(n: int) -> list:
    """Rows of the summary chart (rcdoc.note.charts_time.corner_overview) for n
    stages: every seventh a snubber's ring frequency, every fifth failing, the
    frequencies six decades apart; invented, for layout tests."""
    return [{"label": f"s{i}", "kind": "ring" if i % 7 == 3 else "corner",
             "status": "fail" if i % 5 == 0 else "pass",
             "nominal": 10.0 ** (1 + i % 6), "min": 0.9 * 10.0 ** (1 + i % 6),
             "max": 1.1 * 10.0 ** (1 + i % 6)} for i in range(n)]


def summary_context(rows: list, charts: list, status: str = "pass", changes=None) -> dict:
    """A note context of the board "Many" with no stage pages: the summary table
    of ``rows`` (overview_rows), the summary charts ``charts`` and, optionally, a
    change record; for tests of the front matter and the summary charts."""
    from rcdoc.note.page import _overview_keys
    return {"title": "Design note: Many rev A", "generator": "rcdoc test",
            "board": {"name": "Many", "revision": "A", "date": "2026-01-01", "authors": [],
                      "notes": []},
            "status": status, "analysis": [],
            "summary": {"columns": ["Stage", "Verdict"],
                        "rows": [{"id": r["label"], "cells": [r["label"], r["status"]]}
                                 for r in rows]},
            **_overview_keys(charts), "stages": [], "appendix": [], "changes": changes}
