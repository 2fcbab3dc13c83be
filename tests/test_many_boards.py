"""Several project files in one command share one pool of worker processes.

`rcdoc check a.toml b.toml --jobs 2` (and build) start the workers once, not
once a board: the test counts how many process pools rcdoc.commands.build
creates by putting a counting subclass in its place (the workers are real).
Each board's verdict must still be its own: the limits bracket the textbook
first-order corner fc = 1/(2πRC) = 1.59 kHz of a 10 kΩ / 10 nF low-pass, so
which board passes is known from the formula, not from the program.
"""

from __future__ import annotations

import textwrap
import xml.etree.ElementTree as ET
from concurrent.futures import ProcessPoolExecutor

import pytest

from rcdoc.commands import build, cli, workers

HEAD = """\
[board]
name = "{name}"
revision = "A"
date = "2026-02-02"

[analysis]
samples = 200
seed = 5
"""


def stage(sid: str, check: str) -> str:
    return textwrap.dedent(f"""
    [[stage]]
    id = "{sid}"
    title = "Filter {sid}"
    kind = "rc-lowpass"
    parts.r = {{ ref = "R{sid}", value = "10k", tolerance = "1%" }}
    parts.c = {{ ref = "C{sid}", value = "10n", tolerance = "1%", dielectric = "C0G", voltage = "50 V" }}
    [[stage.check]]
    {check}
    """)


# Textbook corner 1/(2π·10 kΩ·10 nF) = 1591.5 Hz, within ±2 % for 1 % parts.
PASSING = 'metric = "corner"\nmin = "1.4 kHz"\nmax = "1.8 kHz"'
FAILING = 'metric = "corner"\nmax = "1.2 kHz"'


@pytest.fixture
def pools(monkeypatch):
    """Counts the process pools rcdoc.commands.workers starts."""
    made = []

    class Counting(ProcessPoolExecutor):
        def __init__(self, *args, **kw):
            made.append(kw.get("max_workers"))
            super().__init__(*args, **kw)

    monkeypatch.setattr(workers, "ProcessPoolExecutor", Counting)
    return made


def boards(tmp_path):
    good = tmp_path / "good.toml"
    good.write_text(HEAD.format(name="Good board") + stage("1", PASSING) + stage("2", PASSING),
                    encoding="utf-8")
    bad = tmp_path / "bad.toml"
    bad.write_text(HEAD.format(name="Bad board") + stage("1", PASSING) + stage("2", FAILING),
                   encoding="utf-8")
    return good, bad


@pytest.mark.slow
def test_check_of_two_boards_starts_one_pool(tmp_path, pools):
    good, bad = boards(tmp_path)
    junit = tmp_path / "checks.xml"
    rc = cli.main(["check", str(good), str(bad), "--jobs", "2", "--quiet",
                   "-o", str(tmp_path / "out"), "--junit", str(junit)])
    assert pools == [2]                 # one pool for both boards, --jobs workers
    assert rc == 1                      # the bad board's second stage fails
    suites = {s.get("name"): s for s in ET.parse(junit).getroot().iter("testsuite")}
    failures = {name: int(s.get("failures")) for name, s in suites.items()}
    assert sorted(failures.values()) == [0, 1], failures
    # Each board's stages were analysed in this run, none from the other's cache.
    assert sum(int(s.get("tests")) for s in suites.values()) >= 4

    # Everything is in the cache now: a second check starts no pool at all.
    pools.clear()
    assert cli.main(["check", str(good), str(bad), "--jobs", "2", "--quiet",
                     "-o", str(tmp_path / "out")]) == 1
    assert pools == []


@pytest.mark.slow
def test_one_project_without_a_shared_pool_starts_its_own(tmp_path, pools):
    # The library call (no pool given) keeps working on its own, as diff uses it.
    good, _ = boards(tmp_path)
    project = build.load_project(str(good))
    outcome = build.analyse_project(project, jobs=2)
    assert len(pools) == 1
    assert [r.status for r in outcome.results] == ["pass", "pass"]


@pytest.mark.slow
def test_build_of_two_boards_starts_one_pool(tmp_path, pools):
    good, bad = boards(tmp_path)
    out = tmp_path / "notes"
    rc = cli.main(["build", str(good), str(bad), "--jobs", "2", "--quiet", "-o", str(out)])
    assert pools == [2]
    assert rc == 1
    assert (out / "good.pdf").stat().st_size > 0 and (out / "bad.pdf").stat().st_size > 0
