"""`rcdoc check` and `rcdoc diff` never draw: they load no drawing library.

Each command runs in a fresh interpreter (the example board, few samples,
one job so everything happens in that process); the test reads which
modules ended up in sys.modules. The JSON and JUnit writers
(rcdoc.note.summary, rcdoc.note.machine) and the drawing-free tables
(rcdoc.note.context) may load; the note's drawing modules may not.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "projects" / "greenhouse-controller.toml"
LIBRARIES = ("matplotlib", "schemdraw", "weasyprint", "jinja2")
DRAWING = ("rcdoc.note.charts", "rcdoc.note.logic_chart", "rcdoc.note.schematic",
           "rcdoc.note.blocks", "rcdoc.note.page", "rcdoc.note.report", "rcdoc.note.assemble")

SCRIPT = """
import json, sys
from rcdoc.commands.cli import main
if __name__ == "__main__":
    try:
        rc = main(sys.argv[2:])
    except SystemExit as exc:
        rc = exc.code
    with open(sys.argv[1], "w") as fh:
        json.dump({"rc": rc, "modules": sorted(sys.modules)}, fh)
"""


def _loaded(tmp_path: Path, args: list[str]) -> tuple[int, set[str]]:
    script = tmp_path / "probe.py"
    script.write_text(SCRIPT)
    report = tmp_path / "modules.json"
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    subprocess.run([sys.executable, str(script), str(report), *args], cwd=tmp_path, env=env,
                   capture_output=True, check=False, timeout=600)
    data = json.loads(report.read_text())
    return data["rc"], set(data["modules"])


def _drawing(modules: set[str]) -> list[str]:
    return sorted(m for m in modules
                  if m.split(".")[0] in LIBRARIES or m in DRAWING)


@pytest.mark.slow
def test_check_loads_no_drawing_module(tmp_path):
    rc, modules = _loaded(tmp_path, ["check", str(EXAMPLE), "--samples", "50", "--jobs", "1",
                                     "--json", str(tmp_path / "out.json")])
    assert rc == 0
    assert "rcdoc.analysis.analyse" in modules        # it did analyse the board
    assert (tmp_path / "out.json").exists()
    assert _drawing(modules) == []


@pytest.mark.slow
def test_diff_loads_no_drawing_module(tmp_path):
    new = tmp_path / "new.toml"
    new.write_text(EXAMPLE.read_text(encoding="utf-8"), encoding="utf-8")
    rc, modules = _loaded(tmp_path, ["diff", str(EXAMPLE), str(new), "--samples", "50",
                                     "--jobs", "1"])
    assert rc in (0, 1)
    assert "rcdoc.commands.diff" in modules
    assert _drawing(modules) == []
