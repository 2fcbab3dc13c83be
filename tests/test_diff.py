"""rcdoc diff: parts, metrics and verdicts that changed between two revisions,
from files and from git revisions (a throw-away repository in tmp_path)."""

from __future__ import annotations

import math
import os
import shutil
import subprocess

import pytest

from rcdoc.commands.cli import main
from rcdoc.commands.diff import diff_files, read_at_revision
from rcdoc.commands.diff_render import note_blocks
from rcdoc.errors import ProjectError

PROJECT = """
[board]
name = "Diff test"
revision = "{rev}"
date = "2026-01-01"
[analysis]
samples = 50
[[stage]]
id = "lp"
title = "Low-pass"
kind = "rc-lowpass"
parts.r = {{ ref = "R1", value = "{r}", tolerance = "1%" }}
parts.c = {{ ref = "C1", value = "10 nF", tolerance = "1%", dielectric = "C0G" }}
[[stage.check]]
metric = "corner"
min = "3.2 kHz"
max = "3.5 kHz"
{extra}
"""

EXTRA_STAGE = """
[[stage]]
id = "hp"
title = "High-pass"
kind = "rc-highpass"
parts.c = { ref = "C2", value = "100 nF" }
parts.r = { ref = "R2", value = "10k" }
"""


def rc_corner(r, c):
    # Textbook first-order RC low-pass: f_c = 1 / (2π R C).
    return 1 / (2 * math.pi * r * c)


def write(path, rev="A", r="4k7", extra=""):
    path.write_text(PROJECT.format(rev=rev, r=r, extra=extra), encoding="utf-8")
    return path


def test_diff_finds_a_changed_value_and_the_metric_it_moved(tmp_path):
    old = write(tmp_path / "old.toml", "A", "4k7")
    new = write(tmp_path / "new.toml", "B", "5k1")
    d = diff_files(str(old), str(new))
    assert (d.old_revision, d.new_revision) == ("A", "B")
    assert len(d.parts) == 1
    part = d.parts[0]
    assert (part.stage, part.ref, part.change) == ("lp", "R1", "changed")
    assert [(f.name, f.before, f.after) for f in part.fields] == [("value", 4700.0, 5100.0)]
    corner = [m for m in d.metrics if m.name == "corner"]
    assert len(corner) == 1
    assert corner[0].before == pytest.approx(rc_corner(4700, 10e-9), rel=1e-5)
    assert corner[0].after == pytest.approx(rc_corner(5100, 10e-9), rel=1e-5)
    # 1/(2π·5.1k·10n) = 3.12 kHz, below the 3.2 kHz limit: the verdict moves to fail.
    v = [v for v in d.verdicts if v.metric == "corner"]
    assert len(v) == 1 and v[0].before.status == "pass" and v[0].after.status == "fail"
    assert (d.old_status, d.new_status) == ("pass", "fail")


def test_identical_projects_have_no_differences(tmp_path):
    a = write(tmp_path / "a.toml")
    d = diff_files(str(a), str(a))
    assert d.empty
    assert "No differences" in note_blocks(d)[-1]["paragraphs"][0]


@pytest.mark.slow
def test_stage_and_parts_added_and_removed(tmp_path):
    old = write(tmp_path / "old.toml")
    new = write(tmp_path / "new.toml", extra=EXTRA_STAGE)
    d = diff_files(str(old), str(new))
    assert [(s.stage, s.change) for s in d.stages] == [("hp", "added")]
    assert sorted((p.ref, p.change) for p in d.parts) == [("C2", "added"), ("R2", "added")]
    assert all(m.before is None for m in d.metrics)          # the new stage's metrics are new
    back = diff_files(str(new), str(old))
    assert [(s.stage, s.change) for s in back.stages] == [("hp", "removed")]
    assert sorted(p.change for p in back.parts) == ["removed", "removed"]


def test_note_blocks_carry_before_and_after(tmp_path):
    old = write(tmp_path / "old.toml", "A", "4k7")
    new = write(tmp_path / "new.toml", "B", "5k1")
    blocks = note_blocks(diff_files(str(old), str(new)))
    tables = {b["title"]: b for b in blocks if b["type"] == "table"}
    assert tables["Parts"]["rows"] == [["lp", "R1", "r", "value changed", "4.7 kΩ", "5.1 kΩ"]]
    metrics = {row[1]: row for row in tables["Metrics that moved"]["rows"]}
    row = metrics["Corner frequency (−3 dB)"]
    assert row[2] == "3.386 kHz" and row[3] == "3.121 kHz"
    checks = tables["Checks that moved"]["rows"]
    assert checks[0][3:5] == ["pass", "fail"]


@pytest.mark.slow
def test_cli_diff_prints_a_table_and_exits_0(tmp_path, capsys):
    old = write(tmp_path / "old.toml", "A", "4k7")
    new = write(tmp_path / "new.toml", "B", "5k1")
    assert main(["diff", str(old), str(new), "--samples", "30"]) == 0
    out = capsys.readouterr().out
    assert "R1" in out and "4.7 kΩ" in out and "5.1 kΩ" in out


# --------------------------------------------------------------------------- git

def _git(cwd, *args):
    env = dict(os.environ, GIT_AUTHOR_NAME="t", GIT_AUTHOR_EMAIL="t@example.invalid",
               GIT_COMMITTER_NAME="t", GIT_COMMITTER_EMAIL="t@example.invalid",
               GIT_CONFIG_GLOBAL=os.devnull, GIT_CONFIG_SYSTEM=os.devnull)
    subprocess.run(["git", *args], cwd=cwd, env=env, check=True, capture_output=True)


needs_git = pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")


@pytest.fixture
def repo(tmp_path):
    """A repository whose committed project has R1 = 4k7; the working copy has 5k1."""
    root = tmp_path / "repo"
    (root / "boards").mkdir(parents=True)
    f = write(root / "boards" / "b.toml", "A", "4k7")
    _git(root, "init", "-q")
    _git(root, "add", ".")
    _git(root, "commit", "-q", "-m", "rev A")
    write(f, "B", "5k1")
    return f


@needs_git
@pytest.mark.slow
def test_git_revision_is_read_for_the_same_file(repo):
    old = read_at_revision(repo, "HEAD")
    assert old.board.revision == "A"
    assert old.stages[0].parts["r"].value == pytest.approx(4700.0)
    d = diff_files("git:HEAD", str(repo))
    assert [(f.name, f.before, f.after) for f in d.parts[0].fields] == [("value", 4700.0, 5100.0)]


@needs_git
@pytest.mark.slow
def test_git_revision_reads_the_bom_of_that_revision(tmp_path):
    root = tmp_path / "repo"
    root.mkdir()
    (root / "bom.csv").write_text("ref,value\nR1,4k7\n", encoding="utf-8")
    text = PROJECT.format(rev="A", r="4k7", extra="").replace(
        'value = "4k7", ', "").replace("samples = 50", 'samples = 50\nbom = "bom.csv"')
    f = root / "b.toml"
    f.write_text(text, encoding="utf-8")
    _git(root, "init", "-q")
    _git(root, "add", ".")
    _git(root, "commit", "-q", "-m", "A")
    (root / "bom.csv").write_text("ref,value\nR1,5k1\n", encoding="utf-8")
    d = diff_files("git:HEAD", str(f))
    assert [(f.name, f.before, f.after) for f in d.parts[0].fields] == [("value", 4700.0, 5100.0)]


@needs_git
def test_unknown_revision_is_a_project_error(repo):
    with pytest.raises(ProjectError) as e:
        read_at_revision(repo, "no-such-branch")
    assert "no-such-branch" in str(e.value) and "not a revision" in str(e.value)


@needs_git
def test_file_missing_at_revision(repo):
    other = repo.parent / "new.toml"
    write(other)
    with pytest.raises(ProjectError) as e:
        read_at_revision(other, "HEAD")
    assert "does not exist at git revision 'HEAD'" in str(e.value)


@needs_git
def test_outside_a_repository(tmp_path):
    f = write(tmp_path / "alone.toml")
    with pytest.raises(ProjectError) as e:
        read_at_revision(f, "HEAD")
    assert "not inside a git repository" in str(e.value)


def test_git_not_installed(tmp_path, monkeypatch):
    f = write(tmp_path / "a.toml")
    monkeypatch.setenv("PATH", str(tmp_path / "empty-bin"))
    with pytest.raises(ProjectError) as e:
        read_at_revision(f, "HEAD")
    assert "git is not installed" in str(e.value)


def test_git_side_needs_a_file_on_the_other_side(tmp_path):
    assert main(["diff", "git:HEAD", "git:HEAD~1"]) == 2


@pytest.mark.slow
@needs_git
def test_build_since_adds_the_changes_section(repo, tmp_path, monkeypatch):
    # What the build hands to the note; the PDF is read in the test below.
    import rcdoc.commands.build
    seen = {}

    def fake_write_outputs(outcome, out_dir, *, template_dirs=(), extra_appendix=(),
                           changes=None):
        seen["appendix"] = list(extra_appendix)
        seen["changes"] = changes
        return out_dir / "b.pdf", out_dir / "b.json"

    monkeypatch.setattr(rcdoc.commands.build, "write_outputs", fake_write_outputs)
    status = main(["build", str(repo), "-o", str(tmp_path / "out"), "--since", "HEAD",
                   "--samples", "30", "--quiet"])
    assert status == 1                      # the new corner fails its check
    assert seen["appendix"] == []           # no longer at the back of the note
    section = seen["changes"]
    short, date = _head(repo.parent.parent)
    assert section["title"] == f"Changes since {short} ({date})"
    parts = next(b for b in section["blocks"] if b.get("title") == "Parts")
    assert parts["rows"] == [["lp", "R1", "r", "value changed", "4.7 kΩ", "5.1 kΩ"]]


def _head(root):
    """HEAD's short id and commit date, asked of git directly."""
    out = subprocess.run(["git", "log", "-1", "--format=%h %cd", "--date=short"], cwd=root,
                         check=True, capture_output=True, text=True).stdout.split()
    return out[0], out[1]


@pytest.mark.slow
@needs_git
def test_since_head_names_the_commit_on_the_cover_and_after_the_summary(repo, tmp_path):
    import pypdf
    out = tmp_path / "out"
    assert main(["build", str(repo), "-o", str(out), "--since", "HEAD", "--samples", "30",
                 "--quiet", "--jobs", "1"]) == 1
    short, date = _head(repo.parent.parent)
    pages = [p.extract_text() for p in pypdf.PdfReader(out / "b.pdf").pages]
    title = f"Changes since {short} ({date})"
    assert title in pages[0]                                    # the cover names the commit
    at = next(i for i, t in enumerate(pages) if i > 0 and title in t)
    summary = next(i for i, t in enumerate(pages) if "Summary" in t and i > 0)
    stage = next(i for i, t in enumerate(pages) if "Low-pass" in t and "Parts" in t
                 and title not in t)
    assert summary < at < stage                                 # right after the summary
    assert "HEAD" not in pages[at]                              # the commit, not the name
    assert f"git:{short}" in pages[at]
    # The cover (a part of its own) links to the change record in another part.
    reader = pypdf.PdfReader(out / "b.pdf")
    targets = [a.get_object()["/Dest"][0] for a in reader.pages[0].get("/Annots", [])
               if a.get_object().get("/Subtype") == "/Link"]
    assert reader.pages[at].indirect_reference in targets


@needs_git
def test_build_since_bad_revision_writes_nothing(repo, tmp_path):
    out = tmp_path / "out"
    assert main(["build", str(repo), "-o", str(out), "--since", "nope", "--quiet"]) == 2
    assert not out.exists()


# --------------------------------------------------------------------------- for machines

@pytest.mark.slow
def test_fail_on_regression_exits_1_when_a_check_goes_from_pass_to_fail(tmp_path, capsys):
    import json
    old = write(tmp_path / "old.toml", "A", "4k7")     # corner 3.39 kHz: inside 3.2-3.5 kHz
    new = write(tmp_path / "new.toml", "B", "5k1")     # corner 3.12 kHz: below (rc_corner)
    report = tmp_path / "diff.json"
    assert main(["diff", str(old), str(new), "--samples", "30", "--jobs", "1",
                 "--json", str(report), "--fail-on", "regression"]) == 1
    data = json.loads(report.read_text(encoding="utf-8"))
    assert data["regressions"] == [{"stage": "lp", "what": "verdict",
                                    "check": "Corner frequency (−3 dB)",
                                    "before": "pass", "after": "fail"}]
    (check,) = data["checks"]
    assert (check["before"]["status"], check["after"]["status"]) == ("pass", "fail")
    (metric,) = [m for m in data["metrics"] if m["metric"] == "corner"]
    assert metric["before"] == pytest.approx(rc_corner(4700, 10e-9), rel=1e-5)
    assert metric["after"] == pytest.approx(rc_corner(5100, 10e-9), rel=1e-5)
    assert data["parts"][0]["fields"] == [{"name": "value", "before": "4.7 kΩ",
                                           "after": "5.1 kΩ"}]
    assert (data["old"]["status"], data["new"]["status"]) == ("pass", "fail")
    # Without --fail-on the same comparison exits 0.
    assert main(["diff", str(old), str(new), "--samples", "30", "--jobs", "1"]) == 0


@pytest.mark.slow
def test_fail_on_regression_exits_0_on_an_improvement(tmp_path):
    import json
    old = write(tmp_path / "old.toml", "A", "5k1")
    new = write(tmp_path / "new.toml", "B", "4k7")
    report = tmp_path / "diff.json"
    assert main(["diff", str(old), str(new), "--samples", "30", "--jobs", "1",
                 "--json", str(report), "--fail-on", "regression"]) == 0
    data = json.loads(report.read_text(encoding="utf-8"))
    assert data["regressions"] == []
    assert data["checks"][0]["after"]["status"] == "pass"


def _summary(stages):
    return {"stages": stages}


def _stage(checks, **extra):
    return {"id": "s", "checks": checks, **extra}


def _chk(status, y, metric="corner"):
    return {"metric": metric, "status": status, "yield": y, "label": metric}


def test_regressions_yield_fall_and_instability():
    from rcdoc.commands.regression import regressions
    # A yield that fell while the check still passes (required yield below 1).
    regs = regressions(_summary([_stage([_chk("pass", 0.999)])]),
                       _summary([_stage([_chk("pass", 0.990)])]))
    assert [(r["what"], r["before"], r["after"]) for r in regs] == [("yield", 0.999, 0.990)]
    # A summary without samples_unstable counts as 0; 0 -> 3 is a regression.
    regs = regressions(_summary([_stage([])]), _summary([_stage([], samples_unstable=3)]))
    assert [(r["what"], r["before"], r["after"]) for r in regs] == [("unstable", 0, 3)]
    # Already unstable before, an improved yield, a removed check: none.
    assert regressions(_summary([_stage([_chk("fail", 0.5), _chk("pass", 1, "q")],
                                        samples_unstable=2)]),
                       _summary([_stage([_chk("fail", 0.7)], samples_unstable=5)])) == []


@pytest.mark.slow
def test_diff_reads_and_fills_the_build_cache(tmp_path, monkeypatch):
    import rcdoc.commands.workers
    calls = []
    real = rcdoc.commands.workers.analyse_stage
    monkeypatch.setattr(rcdoc.commands.workers, "analyse_stage",
                        lambda st, a, **kw: calls.append(st.id) or real(st, a, **kw))
    old = write(tmp_path / "old.toml", "A", "4k7")
    new = write(tmp_path / "new.toml", "B", "5k1")
    assert main(["diff", str(old), str(new), "--samples", "30", "--jobs", "1"]) == 0
    assert calls == ["lp", "lp"]
    calls.clear()
    assert main(["check", str(new), "--samples", "30", "--jobs", "1", "--quiet"]) == 1
    assert main(["diff", str(old), str(new), "--samples", "30", "--jobs", "1"]) == 0
    assert calls == []                       # both sides, and the check, from the cache
