"""What changed between two revisions of a project: parts, metrics, verdicts.

What it is for: ``rcdoc diff OLD NEW`` and ``rcdoc build --since REV``. Both
sides are loaded (a side written ``git:REV`` is the same file as it was at
that git revision, read with ``git show``), analysed, and compared: stages by
id, parts by stage and role (then by reference designator), metrics by their
key (name, frequency, settling band) on the nominal design, verdicts by
their check. The result is a plain data structure, rendered by
rcdoc.commands.diff_render as a terminal table and as note blocks.

What it must not do: write files outside a temporary folder, change the git
repository (it only reads with ``git show``), or decide verdicts itself.
"""

from __future__ import annotations

import dataclasses
import math
import posixpath
import subprocess
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from rcdoc.analysis.analyse import StageResult
from rcdoc.errors import ProjectError
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Project, Stage
from rcdoc.input.quantities import PART_UNITS, format_quantity

GIT_PREFIX = "git:"
GIT_TIMEOUT_S = 60
# A nominal metric "moved" beyond these. The nominal design is deterministic,
# so smaller changes are real too, but below what a design review cares about
# (0.01 %, 0.001 dB, 0.001°) they only bury the changes that matter.
REL_MOVE = 1e-4            # linear units: relative change
ABS_MOVE = 1e-3            # dB and degrees: absolute change
UNIT_OF = PART_UNITS


# --------------------------------------------------------------------------- data

@dataclass(frozen=True)
class FieldChange:
    name: str              # "value", "tolerance", "dielectric", ... or a stage setting
    before: Any
    after: Any
    text_before: str
    text_after: str


@dataclass(frozen=True)
class StageChange:
    stage: str
    change: str            # "added", "removed" or "changed"
    title: str
    fields: tuple[FieldChange, ...] = ()


@dataclass(frozen=True)
class PartChange:
    stage: str
    role: str
    ref: str
    change: str            # "added", "removed" or "changed"
    fields: tuple[FieldChange, ...] = ()
    text: str = ""         # the part in one line (added and removed parts)


@dataclass(frozen=True)
class MetricChange:
    stage: str
    name: str
    at_hz: float | None
    detail: str
    before: float | None   # nominal; None where the side has no such metric
    after: float | None

    @property
    def unit(self) -> str:
        return METRICS[self.name].unit


@dataclass(frozen=True)
class VerdictChange:
    stage: str
    metric: str
    at_hz: float | None
    detail: str
    part: str
    before: Any            # rcdoc.analysis.checks.Verdict or None (check added)
    after: Any             # rcdoc.analysis.checks.Verdict or None (check removed)


@dataclass
class ProjectDiff:
    old_label: str
    new_label: str
    old_revision: str
    new_revision: str
    stages: list[StageChange] = field(default_factory=list)
    parts: list[PartChange] = field(default_factory=list)
    metrics: list[MetricChange] = field(default_factory=list)
    verdicts: list[VerdictChange] = field(default_factory=list)
    old_status: str = ""
    new_status: str = ""

    @property
    def empty(self) -> bool:
        return not (self.stages or self.parts or self.metrics or self.verdicts)


# --------------------------------------------------------------------------- loading

def _git(args: list[str], cwd: Path) -> subprocess.CompletedProcess:
    try:
        return subprocess.run(["git", *args], cwd=cwd, capture_output=True,
                              timeout=GIT_TIMEOUT_S, check=False)
    except FileNotFoundError:
        raise ProjectError("git is not installed (or not on PATH); it is needed to read "
                           "a project at a git revision") from None
    except subprocess.TimeoutExpired:
        raise ProjectError(f"git {' '.join(args)} did not answer within "
                           f"{GIT_TIMEOUT_S} s") from None


def _git_show(top: Path, rev: str, rel: str, what: str) -> bytes:
    out = _git(["show", f"{rev}:{rel}"], top)
    if out.returncode == 0:
        return out.stdout
    known = _git(["rev-parse", "--verify", "--quiet", f"{rev}^{{commit}}"], top)
    if known.returncode != 0:
        raise ProjectError(f"'{rev}' is not a revision of the git repository at '{top}'")
    raise ProjectError(f"{what} '{rel}' does not exist at git revision '{rev}'")


def read_at_revision(file: str | Path, rev: str, *, samples: int | None = None,
                     seed: int | None = None) -> Project:
    """Load ``file`` as it was at git revision ``rev`` (its BOM too, from the same revision).

    Errors in the old file are reported against "FILE at git:REV".
    """
    from rcdoc.kinds import load_project
    rev = rev.strip()
    if not rev or rev.startswith("-"):
        raise ProjectError(f"'{GIT_PREFIX}{rev}' names no revision; write e.g. git:HEAD~1 "
                           "or git:v1.2")
    path = Path(file).resolve()
    if not path.parent.is_dir():
        raise ProjectError(f"the folder of '{file}' does not exist")
    top_out = _git(["rev-parse", "--show-toplevel"], path.parent)
    if top_out.returncode != 0:
        raise ProjectError(f"'{file}' is not inside a git repository, so it has no "
                           f"revision '{rev}'")
    top = Path(top_out.stdout.decode("utf-8", "replace").strip()).resolve()
    rel = path.relative_to(top).as_posix()
    label = f"{file} at {GIT_PREFIX}{rev}"
    text = _git_show(top, rev, rel, "the project file")
    with tempfile.TemporaryDirectory(prefix="rcdoc-diff-") as tmp:
        root = Path(tmp)
        target = root / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(text)
        bom = _bom_name(text)
        if bom is not None and not Path(bom).is_absolute():
            bom_rel = posixpath.normpath(posixpath.join(posixpath.dirname(rel), bom))
            if not bom_rel.startswith("../"):
                try:
                    data = _git_show(top, rev, bom_rel, "the bill of materials")
                except ProjectError as exc:
                    raise ProjectError(exc.message, path="analysis.bom", file=label) from None
                (root / bom_rel).parent.mkdir(parents=True, exist_ok=True)
                (root / bom_rel).write_bytes(data)
        try:
            project = load_project(target, samples=samples, seed=seed)
        except ProjectError as exc:
            exc.file = label
            raise
    return dataclasses.replace(project, file=label)


def _bom_name(text: bytes) -> str | None:
    """``[analysis].bom`` of a project text, if it reads as one (load_project judges the rest)."""
    from rcdoc.input.limits import read_toml
    try:
        data = read_toml(text)       # the same guards as any project file read
    except ProjectError:
        return None
    a = data.get("analysis")
    bom = a.get("bom") if isinstance(a, dict) else None
    return bom if isinstance(bom, str) and bom.strip() else None


def load_side(spec: str, other_file: str | None = None, *, samples: int | None = None,
              seed: int | None = None) -> Project:
    """A project file, or ``git:REV`` for ``other_file`` at that revision."""
    from rcdoc.kinds import load_project
    if spec.startswith(GIT_PREFIX):
        if other_file is None or other_file.startswith(GIT_PREFIX):
            raise ProjectError(f"'{spec}' needs the other side to be a project file: "
                               "rcdoc diff git:REV FILE")
        return read_at_revision(other_file, spec[len(GIT_PREFIX):], samples=samples, seed=seed)
    return load_project(spec, samples=samples, seed=seed)


def analyse(project: Project) -> list[StageResult]:
    from rcdoc.commands.build import analyse_project
    return analyse_project(project).results


def diff_files(old: str, new: str, *, samples: int | None = None,
               seed: int | None = None) -> ProjectDiff:
    """Load, analyse and compare two sides (``old`` or ``new`` may be ``git:REV``)."""
    p_old = load_side(old, new, samples=samples, seed=seed)
    p_new = load_side(new, old, samples=samples, seed=seed)
    return compare(p_old, analyse(p_old), p_new, analyse(p_new),
                   old_label=old, new_label=new)


# --------------------------------------------------------------------------- comparing

def _fmt_tol(plus: float, minus: float) -> str:
    if abs(plus - minus) < 1e-12:
        return f"±{plus * 100:g} %"
    return f"+{plus * 100:g} / −{minus * 100:g} %"


def _part_fields(p) -> dict[str, tuple[Any, str]]:
    """The part's comparable keys -> (value, text)."""
    unit = UNIT_OF[p.kind]
    f: dict[str, tuple[Any, str]] = {
        "ref": (p.ref, p.ref or "—"),
        "value": (p.value, format_quantity(p.value, unit, 4)),
        "tolerance": ((p.tol_plus, p.tol_minus), _fmt_tol(p.tol_plus, p.tol_minus)),
        "tcr": (p.tcr_ppm, "—" if p.tcr_ppm is None else f"{p.tcr_ppm:g} ppm/K"),
        "dielectric": (p.dielectric, p.dielectric or "—"),
        "dc_bias": (p.dc_bias, "—" if p.dc_bias is None else
                    f"{p.dc_bias[1] * 100:g} % at {format_quantity(p.dc_bias[0], 'V')}"),
        "temperature_change": (p.temperature_change, "—" if p.temperature_change is None else
                               f"{p.temperature_change[1] * 100:g} % at "
                               f"{format_quantity(p.temperature_change[0], 'degC')}"),
        "bias": (p.bias_v, "—" if p.bias_v is None else format_quantity(p.bias_v, "V")),
        "voltage": (p.voltage_rating_v, "—" if p.voltage_rating_v is None
                    else format_quantity(p.voltage_rating_v, "V")),
        "power": (p.power_rating_w, "—" if p.power_rating_w is None
                  else format_quantity(p.power_rating_w, "W")),
        "model": (p.model, p.model or "—"),
    }
    return f


def _same_value(a, b) -> bool:
    if isinstance(a, float) and isinstance(b, float):
        return abs(a - b) <= 1e-12 * max(abs(a), abs(b))
    if isinstance(a, tuple) and isinstance(b, tuple) and len(a) == len(b):
        return all(_same_value(x, y) for x, y in zip(a, b))
    return a == b


def _field_changes(before: dict[str, tuple[Any, str]],
                   after: dict[str, tuple[Any, str]]) -> tuple[FieldChange, ...]:
    out = []
    for key in before:
        (a, ta), (b, tb) = before[key], after[key]
        if not _same_value(a, b):
            out.append(FieldChange(key, a, b, ta, tb))
    return tuple(out)


def _part_line(p) -> str:
    f = _part_fields(p)
    bits = [f["value"][1], f["tolerance"][1]]
    bits += [f[k][1] for k in ("dielectric", "voltage", "power") if f[k][0]]
    return ", ".join(bits)


def _stage_fields(st: Stage) -> dict[str, tuple[Any, str]]:
    def imp(r, l_or_c, unit2):
        bits = []
        if r:
            bits.append(format_quantity(r, "ohm"))
        if l_or_c:
            bits.append(format_quantity(l_or_c, unit2))
        return " + ".join(bits) or "—"
    d = st.drive
    drive = "—" if d is None else (
        f"step {format_quantity(d.amplitude_v, 'V')}" if d.kind == "step" else
        f"pwm {format_quantity(d.amplitude_v, 'V')}, {format_quantity(d.frequency_hz, 'Hz')}, "
        f"duty {d.duty * 100:g} %")
    return {
        "title": (st.title, st.title),
        "kind": (st.kind, st.kind),
        "source": ((st.source_r, st.source_l), imp(st.source_r, st.source_l, "H")),
        "load": ((st.load_r, st.load_c), imp(st.load_r, st.load_c, "F")),
        "drive": (d, drive),
        "marks": (st.marks_hz, ", ".join(format_quantity(f, "Hz") for f in st.marks_hz) or "—"),
        "kind settings": (repr(sorted(st.options.items())), "see the project file"),
    }


def _moved(a: float | None, b: float | None, unit: str) -> bool:
    if a is None or b is None:
        return a is not b
    fa, fb = math.isfinite(a), math.isfinite(b)
    if not (fa and fb):
        return fa != fb or (not fa and not fb and (a == a) != (b == b))
    if unit in ("dB", "deg"):
        return abs(a - b) > ABS_MOVE
    return abs(a - b) > REL_MOVE * max(abs(a), abs(b), 1e-300)


def _verdict_key(v) -> tuple:
    return (v.metric, v.at_hz, v.detail, v.part)


def _verdict_moved(a, b) -> bool:
    if a is None or b is None:
        return True
    return (a.status != b.status or abs(a.yield_ - b.yield_) > 1e-12
            or not _same_value((a.min, a.max, a.required_yield), (b.min, b.max, b.required_yield)))


def compare(old: Project, old_results: list[StageResult], new: Project,
            new_results: list[StageResult], *, old_label: str = "",
            new_label: str = "") -> ProjectDiff:
    """Compare two analysed projects."""
    from rcdoc.note.summary import board_status
    d = ProjectDiff(old_label=old_label or old.file, new_label=new_label or new.file,
                    old_revision=old.board.revision, new_revision=new.board.revision,
                    old_status=board_status(old_results), new_status=board_status(new_results))
    res_old = {r.stage.id: r for r in old_results}
    res_new = {r.stage.id: r for r in new_results}
    st_old = {s.id: s for s in old.stages}
    st_new = {s.id: s for s in new.stages}
    order = [s.id for s in new.stages] + [s.id for s in old.stages if s.id not in st_new]
    for sid in order:
        a, b = st_old.get(sid), st_new.get(sid)
        if a is None:
            d.stages.append(StageChange(sid, "added", b.title))
        elif b is None:
            d.stages.append(StageChange(sid, "removed", a.title))
        else:
            fields = _field_changes(_stage_fields(a), _stage_fields(b))
            if fields:
                d.stages.append(StageChange(sid, "changed", b.title, fields))
        d.parts += _compare_parts(sid, a, b)
        ra, rb = res_old.get(sid), res_new.get(sid)
        d.metrics += _compare_metrics(sid, ra, rb)
        d.verdicts += _compare_verdicts(sid, ra, rb)
    return d


def _compare_parts(sid: str, a: Stage | None, b: Stage | None) -> list[PartChange]:
    pa = dict(a.parts) if a else {}
    pb = dict(b.parts) if b else {}
    pairs: list[tuple[Any, Any]] = []
    for role in list(pb):
        if role in pa:
            pairs.append((pa.pop(role), pb.pop(role)))
    # A part that moved to another role keeps its designator: match those next.
    by_ref = {p.ref: role for role, p in pa.items() if p.ref}
    for role in list(pb):
        ref = pb[role].ref
        if ref and ref in by_ref and by_ref[ref] in pa:
            pairs.append((pa.pop(by_ref[ref]), pb.pop(role)))
    out = []
    for x, y in pairs:
        fields = _field_changes(_part_fields(x), _part_fields(y))
        if x.role != y.role:
            fields = (FieldChange("role", x.role, y.role, x.role, y.role),) + fields
        if fields:
            out.append(PartChange(sid, y.role, y.ref or x.ref, "changed", fields))
    for p in pb.values():
        out.append(PartChange(sid, p.role, p.ref, "added", text=_part_line(p)))
    for p in pa.values():
        out.append(PartChange(sid, p.role, p.ref, "removed", text=_part_line(p)))
    return out


def _compare_metrics(sid: str, ra, rb) -> list[MetricChange]:
    ma = {m.key: m for m in ra.metrics} if ra else {}
    mb = {m.key: m for m in rb.metrics} if rb else {}
    keys = list(mb) + [k for k in ma if k not in mb]
    out = []
    for key in keys:
        a = ma[key].nominal if key in ma else None
        b = mb[key].nominal if key in mb else None
        if _moved(a, b, METRICS[key[0]].unit):
            out.append(MetricChange(sid, key[0], key[1], key[2], a, b))
    return out


def _compare_verdicts(sid: str, ra, rb) -> list[VerdictChange]:
    va = {_verdict_key(v): v for v in (ra.verdicts + ra.ratings if ra else [])}
    vb = {_verdict_key(v): v for v in (rb.verdicts + rb.ratings if rb else [])}
    keys = list(vb) + [k for k in va if k not in vb]
    out = []
    for key in keys:
        a, b = va.get(key), vb.get(key)
        if _verdict_moved(a, b):
            out.append(VerdictChange(sid, key[0], key[1], key[2], key[3], a, b))
    return out
