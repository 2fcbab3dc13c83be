"""The metric registry is the single source: every metric it holds is in the
documentation's `[[stage.check]]` table with the same unit, every documented
metric is registered, and each entry is complete (labels, definition,
formatting). The table is read from docs/project-format.md."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from rcdoc.analysis.metrics import CATEGORIES, METRICS
from rcdoc.input.quantities import UNITS

DOC = Path(__file__).resolve().parents[1] / "docs" / "project-format.md"
# the documentation's words for unit codes that are not written as their symbol
DOC_UNITS = {"degrees": "deg", "Ω": "ohm", "1": "1"}


def documented() -> dict[str, str]:
    """metric name -> unit code, from the `[[stage.check]]` section's table."""
    text = DOC.read_text(encoding="utf-8")
    section = text[text.index("## `[[stage.check]]`"):]
    section = section[: section.index("\n## ", 1)]
    table = section[section.index("| metric | unit |"):]
    out: dict[str, str] = {}
    for line in table.splitlines()[2:]:
        if not line.startswith("|"):
            break
        cells = [c.strip() for c in line.strip("|").split("|")]
        names = re.findall(r"`([a-z0-9_]+)`", cells[0])
        units = [u.strip().split(" ")[0] for u in cells[1].split(",")]
        if len(units) == 1:
            units *= len(names)
        assert len(units) == len(names), line
        for name, unit in zip(names, units):
            out[name] = DOC_UNITS.get(unit, unit)
    return out


def test_every_registered_metric_is_documented_with_its_unit():
    docs = documented()
    missing = sorted(set(METRICS) - set(docs))
    assert not missing, f"metrics missing from docs/project-format.md: {missing}"
    for name, m in METRICS.items():
        assert docs[name] == m.unit, (name, docs[name], m.unit)


def test_every_documented_metric_is_registered():
    unknown = sorted(set(documented()) - set(METRICS))
    assert not unknown, f"documented but not registered: {unknown}"


def test_the_table_is_found_and_not_trivially_empty():
    # guards the parser itself: the example's metrics are in it
    assert {"corner", "passband_gain", "peaking", "settling"} <= set(documented())


@pytest.mark.parametrize("name", sorted(METRICS))
def test_entry_is_complete(name):
    m = METRICS[name]
    assert m.name == name
    assert m.unit in UNITS and m.json_unit
    assert m.label and m.definition and "\n" not in m.definition
    assert 0 < len(m.short) <= 18
    assert m.resolution >= 0 and 1 <= m.digits <= 6
    assert m.kinds and all(k in CATEGORIES or re.fullmatch(r"[a-z][a-z0-9-]*", k)
                           for k in m.kinds)
    assert set(m.params) <= {"at", "drive", "pwm drive", "settling band"}


def test_short_labels_are_distinct():
    shorts = [m.short for m in METRICS.values()]
    assert len(shorts) == len(set(shorts))


def test_checks_that_need_a_frequency_say_so():
    # the loader reads `at` for exactly these (docs: "| `gain` | dB | `at` |")
    assert {n for n, m in METRICS.items() if m.needs_at} == {
        "gain", "phase", "group_delay", "input_impedance"}
