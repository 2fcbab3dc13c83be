"""What rcdoc prints on a terminal or a CI log: progress, the check table, and
the console's character set.

What it is for: ``rcdoc build`` and ``rcdoc check`` report progress on stderr
(one line per stage with its time off a terminal, a live bar on one) and
their results on stdout: a check table that fits the console's width (80
columns when the stream is not a terminal) without wrapping, in one of three
layouts (a table with a stage column; per-stage tables; a list, where no table
fits), ending with the failures alone and their count. A console that cannot
encode the symbols (Ω, µ, ≤, …) gets ASCII spellings instead.

What it must not do: analyse or judge; labels, units and number formatting
come from the metric registry and the one formatter.
"""

from __future__ import annotations

import contextlib
import dataclasses
import logging
import math
import os
import shutil
import sys
import time
import warnings
from dataclasses import dataclass

from rcdoc.analysis.metrics import METRICS
from rcdoc.input.quantities import distinct_digits, format_quantity, format_yield

# ASCII spellings of the symbols rcdoc prints, for consoles that cannot encode them.
_ASCII = str.maketrans({
    "Ω": "ohm", "µ": "u", "…": "...", "≥": ">=", "≤": "<=", "°": "deg", "\u2212": "-",
    "–": "-", "—": "-", "ζ": "zeta", "√": "sqrt", "·": "*", "½": "1/2", "→": "->",
    "±": "+/-", "×": "x", "‑": "-",
})
_PROBE = "Ω µ ≤ ≥ … − °"
GAP = "  "


def can_encode(stream, text: str = _PROBE) -> bool:
    """Whether ``stream``'s encoding holds ``text`` (rcdoc's symbols)."""
    enc = getattr(stream, "encoding", None) or "utf-8"
    try:
        text.encode(enc)
    except (UnicodeEncodeError, LookupError):
        return False
    return True


def for_console(text: str, stream) -> str:
    """``text`` as ``stream`` can print it: ASCII spellings where symbols cannot be
    encoded, and '?' for anything else left over."""
    if can_encode(stream, text):
        return text
    enc = getattr(stream, "encoding", None) or "ascii"
    return text.translate(_ASCII).encode(enc, "replace").decode(enc)


def is_terminal(stream) -> bool:
    try:
        return stream.isatty()
    except (AttributeError, ValueError):
        return False


def width_of(stream) -> int:
    """Columns to fit: the terminal's width, else $COLUMNS, else 80."""
    if is_terminal(stream):
        return max(40, shutil.get_terminal_size((80, 24)).columns)
    try:
        return max(40, int(os.environ.get("COLUMNS", "80")))
    except ValueError:
        return 80


@contextlib.contextmanager
def third_party_quiet():
    """Warnings and log records of the libraries under the renderer (fontTools'
    font subsetting, weasyprint) are captured, not printed: they are about
    fonts, not about the board, and a CI log is read for the board."""
    # fontTools logs its font-subsetting notes at WARNING with no handler of its
    # own, so Python's last-resort handler prints them. weasyprint's logger has a
    # handler that drops them, but its records also reach the root logger, which
    # a library's logging.debug() call may have set up to print (ziafont's does:
    # logging.basicConfig): it is kept from passing them on, as in the workers.
    # Its missing-glyph records are gathered there (rcdoc.note.glyphs).
    loggers = [logging.getLogger("fontTools"), logging.getLogger("weasyprint")]
    saved = [(lg, lg.propagate) for lg in loggers]
    null = logging.NullHandler()
    for lg in loggers:
        lg.addHandler(null)
        lg.propagate = False
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            yield
    finally:
        for lg, propagate in saved:
            lg.removeHandler(null)
            lg.propagate = propagate


# --------------------------------------------------------------------------- progress

class Progress:
    """Progress of one project's analysis on stderr.

    Off a terminal: one line per stage, "rcdoc: FILE: STAGE 1.2 s" (or
    "cached"), written as each stage is done, so a CI job is never silent for
    long. On a terminal: a live bar (rich) that disappears when done.
    """

    def __init__(self, stream=None):
        self.stream = stream if stream is not None else sys.stderr
        self.live = None
        self.file = ""

    def start(self, file: str, stages: int) -> None:
        self.file = file
        self.t0 = time.perf_counter()
        if is_terminal(self.stream):
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, TextColumn
            from rich.progress import Progress as Bar
            self.live = Bar(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                            console=Console(file=self.stream), transient=True)
            self.live.start()
            self.task = self.live.add_task(self._text(f"{file}: analysing"), total=stages)

    def _text(self, text: str) -> str:
        return for_console(text, self.stream)

    def done(self, stage_id: str, seconds: float | None) -> None:
        """A stage finished (``seconds`` None: taken from the cache)."""
        took = "cached" if seconds is None else f"{seconds:.1f} s"
        if self.live is not None:
            from rich.markup import escape
            self.live.update(self.task, advance=1,
                             description=escape(self._text(f"{self.file}: {stage_id} {took}")))
        else:
            print(self._text(f"rcdoc: {self.file}: {stage_id} {took}"), file=self.stream,
                  flush=True)

    def stop(self) -> None:
        if self.live is not None:
            self.live.stop()
            self.live = None


# --------------------------------------------------------------------------- the check table

@dataclass(frozen=True)
class Row:
    stage: str
    check: str
    nominal: str
    worst: str
    limit: str
    margin: str
    yield_: str
    verdict: str            # "pass" / "fail"


COLUMNS = ("check", "nominal", "worst", "limit", "margin", "yield", "verdict")
NARROW = ("check", "nominal", "worst", "margin", "yield", "verdict")   # without the limit


def check_label(v) -> str:
    """The terminal's name of a check: the registry's short label, where, and a
    rating's part."""
    label = METRICS[v.metric].short
    if v.at_hz is not None:
        label += f" at {format_quantity(v.at_hz, 'Hz')}"
    if v.detail and v.detail != "rating":
        label += f" ({v.detail})"
    if v.part:
        label += f" {v.part}"
    return label


def verdict_row(stage_id: str, v) -> Row:
    from rcdoc.note.machine import margin
    m = METRICS[v.metric]
    d = distinct_digits([v.worst, v.min, v.max], m.unit, m.digits, resolution=m.resolution)

    def q(x):
        if x is None or not math.isfinite(x):
            return "-"
        return format_quantity(x, m.unit, d, resolution=m.resolution, stress=m.stress)
    if v.min is not None and v.max is not None:
        limit = f"{q(v.min)}…{q(v.max)}"
    else:
        limit = f"≥ {q(v.min)}" if v.min is not None else f"≤ {q(v.max)}"
    room = margin(v)
    worst = q(v.worst) if math.isfinite(v.worst) else "not found"
    return Row(stage_id, check_label(v), q(v.nominal), worst, limit,
               "-" if room is None else format_quantity(room, m.unit, 3), format_yield(v.yield_),
               v.status)


def stage_rows(r) -> list[Row]:
    rows = []
    if r.reason or r.samples_unstable:
        # Stability is judged before any check: an unstable nominal fails the stage.
        n = r.samples_unstable
        rows.append(Row(r.stage.id, "Stability", "unstable" if r.reason else "stable",
                        "unstable" if r.reason else f"{n} unstable", "Re(p) < 0", "-",
                        format_yield(1 - n / max(r.samples, 1)), "fail" if r.reason else "pass"))
    for v in r.verdicts + r.ratings:
        rows.append(verdict_row(r.stage.id, v))
    if not rows:
        rows.append(Row(r.stage.id, "(no checks)", "", "", "", "", "", r.status))
    return rows


def _cells(r: Row, cols: tuple[str, ...]) -> list[str]:
    by_name = {"stage": r.stage, "check": r.check, "nominal": r.nominal, "worst": r.worst,
               "limit": r.limit, "margin": r.margin, "yield": r.yield_, "verdict": r.verdict}
    return [by_name[c] for c in cols]


def _widths(rows: list[Row], cols: tuple[str, ...]) -> list[int]:
    cells = [_cells(r, cols) for r in rows]
    return [max([len(c)] + [len(cs[k]) for cs in cells]) for k, c in enumerate(cols)]


def _line(cells: list[str], cols: tuple[str, ...], widths: list[int], indent: str = "") -> str:
    # numbers right-aligned, words left-aligned
    out = [c.ljust(w) if name in ("stage", "check", "verdict") else c.rjust(w)
           for c, w, name in zip(cells, widths, cols)]
    return (indent + GAP.join(out)).rstrip()


def table_lines(title: str, rows: list[Row], width: int = 80) -> list[str]:
    """The check table in the widest layout that fits ``width`` columns: one table
    with a stage column; a table per stage (with, then without the limit
    column); else a list."""
    lines = [title]
    for cols, indent in ((("stage",) + COLUMNS, ""), (COLUMNS, "  "), (NARROW, "  ")):
        w = _widths(rows, cols)
        if len(indent) + sum(w) + len(GAP) * (len(w) - 1) > width:
            continue
        lines.append(_line(list(cols), cols, w, indent))
        stage = None
        for r in rows:
            if indent and r.stage != stage:
                stage = r.stage
                lines.append(stage[:width])
            lines.append(_line(_cells(r, cols), cols, w, indent))
        return lines
    return lines + list_lines(rows, width)


def list_lines(rows: list[Row], width: int) -> list[str]:
    """One block per check: its name and verdict, then its numbers, folded to ``width``."""
    out, stage = [], None
    for r in rows:
        if r.stage != stage:
            stage = r.stage
            out.append(stage[:width])
        out.append(_fold(f"  {r.check}: {r.verdict}", width, "    "))
        fields = [f"nominal {r.nominal}", f"worst {r.worst}", f"limit {r.limit}",
                  f"margin {r.margin}", f"yield {r.yield_}"]
        out.append(_fold("    " + "; ".join(fields), width, "    "))
    return out


def _fold(text: str, width: int, indent: str) -> str:
    """Break ``text`` at spaces so that no line is longer than ``width``."""
    body = text.lstrip(" ")
    lines, line = [], text[: len(text) - len(body)]
    start = len(line)
    for word in body.split(" "):
        trial = f"{line} {word}" if len(line) > start else line + word
        if len(trial) > width and len(line) > start:
            lines.append(line)
            line, start = indent + word, len(indent)
        else:
            line = trial
    lines.append(line)
    return "\n".join(x[:width] for x in lines)


def failure_lines(rows: list[Row], width: int) -> list[str]:
    """The failures alone, and their count."""
    failed = [r for r in rows if r.verdict != "pass"]
    checks = sum(r.check != "(no checks)" for r in rows)
    if not failed:
        return ["the check passes" if checks == 1 else f"all {checks} checks pass"]
    out = [f"{len(failed)} of {checks} checks fail:"]
    for r in failed:
        out.append(_fold(f"  {r.stage}: {r.check}: worst {r.worst}, limit {r.limit}, "
                         f"yield {r.yield_}", width, "    "))
    return out


def print_outcome(outcome, stream=None) -> None:
    """The check table of one analysed project, then its failures, on stdout."""
    stream = stream if stream is not None else sys.stdout
    width = width_of(stream)
    p = outcome.project
    rows = [row for r in outcome.results for row in stage_rows(r)]
    if not can_encode(stream):           # spell the symbols in ASCII before measuring
        rows = [Row(*(f.translate(_ASCII) for f in dataclasses.astuple(r))) for r in rows]
    title = f"{p.board.name} rev {p.board.revision}: {outcome.status.upper()}"
    lines = table_lines(_fold(title, width, "  "), rows, width) + failure_lines(rows, width)
    text = "\n".join(lines)
    print(for_console(text, stream), file=stream, flush=True)
