"""Input limits: what a project file may hold before any of it is read as physics.

Every TOML text rcdoc reads (a project file, the same file at a git revision)
goes through ``read_toml``: a size limit, a UTF-8 check, the TOML parse with
its failure modes (malformed text, nesting too deep for the parser, integers
too long for Python) turned into a ProjectError, then a walk over the values:
integers within TOML's 64-bit range, strings within a length limit and free
of control and line-separator characters. The limits are stated in README
("Limits"); the numbers live here only.
"""

from __future__ import annotations

import re
import sys
import tomllib
import unicodedata
from typing import Any

from rcdoc.errors import ProjectError

MAX_FILE_BYTES = 1_000_000          # a project file; a board's file is a few kB
MAX_TEXT_CHARS = 20_000             # any text value (notes are the long ones)
MAX_LINE_CHARS = 200                # one-line text: names, titles, references
INT_MIN, INT_MAX = -2**63, 2**63 - 1   # TOML 1.0: integers are 64-bit signed

# Frequency sweep bounds (analysis.sweep): a tool for board-level RC networks;
# outside these the numbers say nothing useful and the arithmetic overflows.
# The top is high enough for the noise of a 100 Ω / 1 pF corner (1.6 GHz) to
# integrate to kT/C within 0.1 %.
SWEEP_MIN_HZ, SWEEP_MAX_HZ, SWEEP_MAX_DECADES = 1e-3, 10e12, 12

# Characters no text value may hold: C0/C1 controls and the Unicode line and
# paragraph separators (they break one-line messages, tables and the note).
# Notes may keep ordinary newlines and tabs.
_LINE_BREAKS = {"\u2028", "\u2029", "\x85"}


def read_toml(raw: bytes) -> dict:
    """TOML bytes -> data, within the limits; a ProjectError (no file set) otherwise."""
    if len(raw) > MAX_FILE_BYTES:
        raise ProjectError(f"the file is {len(raw):,} bytes; a project file may hold at most "
                           f"{MAX_FILE_BYTES:,} bytes")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise ProjectError("the file is not UTF-8 text") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProjectError(f"malformed TOML: {exc}") from None
    except RecursionError:   # tomllib recurses once per level of [ or {
        raise ProjectError("malformed TOML: lists or tables nested too deeply") from None
    except ValueError:       # an integer longer than Python converts (sys.get_int_max_str_digits)
        line, path = _long_number_place(text)
        raise ProjectError(f"line {line}: a number with too many digits; integers must lie "
                           f"between {INT_MIN} and {INT_MAX}", path=path) from None
    check_values(data, "")
    return data


def _long_number_place(text: str) -> tuple[int, str]:
    """Line and key path (as far as the text shows it) of an over-long integer.

    tomllib gives no place for this failure, so the text is scanned: the last
    table header above the line and the key on it ([[stage]] counted from 1).
    """
    limit = getattr(sys, "get_int_max_str_digits", lambda: 4300)() or 4300
    m = re.search(r"\d[\d_]{%d,}" % (limit - 1), text)
    if m is None:
        return 0, ""
    lines = text[:m.start()].split("\n")
    key = re.match(r"\s*([^=\s]+)\s*=", lines[-1])
    table, counts = "", {}
    for ln in lines[:-1]:
        h = re.match(r"\s*(\[\[?)\s*([^\]]+?)\s*\]", ln)
        if h:
            name = h.group(2)
            if h.group(1) == "[[":
                counts[name] = counts.get(name, 0) + 1
                table = f"{name}[{counts[name]}]"
            else:
                table = name
    path = ".".join(p for p in (table, key.group(1) if key else "") if p)
    return len(lines), path


def check_values(value: Any, path: str) -> None:
    """Integers in range, text within its limits, anywhere in the data."""
    if isinstance(value, dict):
        for key, v in value.items():
            check_values(v, f"{path}.{key}" if path else str(key))
    elif isinstance(value, list):
        # Lists of tables are counted from 1 (stage[1]), lists of values from 0
        # (marks[0]), as the rest of rcdoc's messages do.
        base = 1 if value and all(isinstance(v, dict) for v in value) else 0
        for k, v in enumerate(value, start=base):
            check_values(v, f"{path}[{k}]")
    elif isinstance(value, bool):
        pass
    elif isinstance(value, int):
        if not INT_MIN <= value <= INT_MAX:
            raise ProjectError(f"the whole number is out of range; allowed {INT_MIN} to "
                               f"{INT_MAX}", path=path)
    elif isinstance(value, str):
        check_text(value, path, multiline=True)


# Every quantity a board's file states lies far inside this (a femtofarad is
# 1e-15 F, a teraohm 1e12 ohm). Beyond it, squares and products of values
# (energies, conductances, matrix entries) leave the range of floats: refused
# here, before any analysis, not met as an overflow or a failed factorisation.
QUANTITY_RANGE = (1e-30, 1e30)


def check_size(value: float, shown: str, expected: str, path: str) -> float:
    """A quantity's ``value`` if zero or its size lies within QUANTITY_RANGE;
    -0.0 becomes 0.0 (a negative zero turns a zero-width interval round: high <
    low). ``shown`` is the value as written, ``expected`` what the key takes."""
    lo, hi = QUANTITY_RANGE
    if value != 0 and not lo <= abs(value) <= hi:
        raise ProjectError(f"{shown} is out of range: the size of a quantity must lie "
                           f"between {lo:g} and {hi:g} in its base unit; expected {expected}",
                           path=path)
    return value + 0.0


def check_text(value: str, path: str, *, multiline: bool = False) -> str:
    """A text value: length within limit; no control or line-separator characters
    (``multiline`` text may keep newlines and tabs)."""
    limit = MAX_TEXT_CHARS if multiline else MAX_LINE_CHARS
    if len(value) > limit:
        raise ProjectError(f"the text is {len(value):,} characters; the limit here is "
                           f"{limit:,}", path=path)
    allowed = "\n\t" if multiline else ""
    for ch in value:
        if ch in allowed:
            continue
        if unicodedata.category(ch) == "Cc" or ch in _LINE_BREAKS:
            what = "a line break" if ch in "\r\n" or ch in _LINE_BREAKS else \
                "a control character"
            where = "" if multiline else " (this text must be one line)"
            raise ProjectError(f"the text holds {what} (U+{ord(ch):04X}){where}", path=path)
    return value


def check_sweep(lo: float, hi: float, path: str) -> None:
    """The frequency sweep within SWEEP_MIN_HZ…SWEEP_MAX_HZ, at most SWEEP_MAX_DECADES."""
    import math
    if lo < SWEEP_MIN_HZ:
        raise ProjectError(f"the sweep must start at or above {SWEEP_MIN_HZ * 1e3:g} mHz",
                           path=f"{path}[0]")
    if hi > SWEEP_MAX_HZ:
        raise ProjectError(f"the sweep must end at or below {SWEEP_MAX_HZ / 1e12:g} THz",
                           path=f"{path}[1]")
    if math.log10(hi / lo) > SWEEP_MAX_DECADES:
        raise ProjectError(f"the sweep spans {math.log10(hi / lo):.1f} decades; at most "
                           f"{SWEEP_MAX_DECADES}", path=path)
