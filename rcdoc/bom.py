"""The bill of materials: read the CSV named by ``[analysis].bom`` and merge
its rows into parts by reference designator.

A part takes every key it does not state itself from the BOM row of its
``ref``; a key stated in both places that disagrees is an error unless
``bom_wins = true``, in which case the BOM's value is used. Errors about a
BOM cell name the part's key path and the BOM file and line.

What it must not do: know about stage kinds or physics, or build Part
objects (project.py validates the merged table like any other part table).
"""

from __future__ import annotations

import csv
import difflib
import io
import re
from dataclasses import dataclass, field
from pathlib import Path

from .errors import ProjectError
from .quantities import parse_positive, parse_tolerance

COLUMNS = ("ref", "value", "tolerance", "dielectric", "voltage", "power", "model")
_UNITS = {"R": "ohm", "C": "F", "L": "H"}
MAX_BOM_BYTES = 10_000_000   # far above any board's BOM; refuses a wrong file early
# Columns that describe only some part types. A board-wide BOM fills them for
# the parts they fit (a resistor's working voltage in the `voltage` column is
# not a capacitor's rating), so a part takes them only where they apply.
_APPLIES = {"dielectric": "C", "voltage": "C", "power": "R"}


@dataclass(frozen=True)
class BomRow:
    ref: str                     # one designator, as written in the BOM
    line: int                    # line number in the CSV (the header is line 1)
    fields: dict                 # column -> text (non-empty cells only, without `ref`)
    file: str = field(default="")  # the CSV as named in errors

    @property
    def where(self) -> str:
        return f"bill of materials '{self.file}' line {self.line}" if self.file else \
            f"bill of materials line {self.line}"


def _key(ref: str) -> str:
    """Designators match without regard to case or surrounding blanks (r12 = R12)."""
    return ref.strip().upper()


def read_bom(path: Path, key_path: str) -> dict[str, BomRow]:
    """Read the CSV; return designator (upper case) -> row. Errors name the file and line.

    Columns other than the known ones are ignored (exported BOMs carry
    quantities and descriptions), unless a name is close to a known column,
    which is taken as a typing mistake.
    """
    name = str(path)
    # A folder, a fifo or a device (/dev/zero) would fail obscurely or hang the
    # loader; a BOM is a small regular file.
    if Path(path).exists() and not Path(path).is_file():
        raise ProjectError(f"the bill of materials '{name}' is not a regular file",
                           path=key_path)
    try:
        if Path(path).is_file() and Path(path).stat().st_size > MAX_BOM_BYTES:
            raise ProjectError(f"the bill of materials '{name}' is larger than "
                               f"{MAX_BOM_BYTES // 1_000_000} MB; is it the right file?",
                               path=key_path)
        text = Path(path).read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise ProjectError(f"cannot read the bill of materials '{name}': {exc.strerror}",
                           path=key_path)
    except UnicodeDecodeError:
        raise ProjectError(f"the bill of materials '{name}' is not UTF-8 text", path=key_path)
    try:
        rows = list(csv.reader(io.StringIO(text)))
    except csv.Error as exc:
        raise ProjectError(f"malformed CSV in '{name}': {exc}", path=key_path)
    if not rows or not any(c.strip() for c in rows[0]):
        raise ProjectError(f"the bill of materials '{name}' is empty (it needs a header row)",
                           path=key_path)
    header = [h.strip().lower() for h in rows[0]]
    for col in ("ref", "value"):
        if col not in header:
            raise ProjectError(f"the bill of materials '{name}' has no '{col}' column "
                               f"(columns found: {', '.join(h for h in header if h) or 'none'})",
                               path=key_path)
    for h in header:
        if h and h not in COLUMNS:
            close = difflib.get_close_matches(h, COLUMNS, n=1, cutoff=0.75)
            if close and close[0] not in header:
                raise ProjectError(f"the bill of materials '{name}' has a column '{h}'; "
                                   f"did you mean '{close[0]}'?", path=key_path)
        if h in COLUMNS and header.count(h) > 1:
            raise ProjectError(f"the bill of materials '{name}' has the column '{h}' twice",
                               path=key_path)
    used = [(i, h) for i, h in enumerate(header) if h in COLUMNS]
    table: dict[str, BomRow] = {}
    for line, cells in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in cells):
            continue
        if len(cells) > len(header) and any(c.strip() for c in cells[len(header):]):
            raise ProjectError(f"'{name}' line {line}: more cells than columns", path=key_path)
        fields = {h: cells[i].strip() for i, h in used if i < len(cells) and cells[i].strip()}
        refs = [r for r in re.split(r"[,;\s]+", fields.get("ref", "")) if r]
        if not refs:
            raise ProjectError(f"'{name}' line {line}: the 'ref' cell is empty", path=key_path)
        if "value" not in fields:
            raise ProjectError(f"'{name}' line {line}: the 'value' cell is empty",
                               path=key_path)
        for ref in refs:
            k = _key(ref)
            if k in table:
                raise ProjectError(f"'{name}' line {line}: {ref} is already listed on line "
                                   f"{table[k].line}", path=key_path)
            table[k] = BomRow(ref=ref, line=line, file=name,
                              fields={c: v for c, v in fields.items() if c != "ref"})
    return table


def _parse(key: str, kind: str, text, path: str):
    """The cell or key as a comparable value; ProjectError (at ``path``) if unreadable."""
    if key == "value":
        return parse_positive(text, _UNITS[kind], path)
    if key == "tolerance":
        return parse_tolerance(text, path)
    if key in ("voltage", "power"):
        return parse_positive(text, "V" if key == "voltage" else "W", path)
    if key == "dielectric":
        from .parts import decode_dielectric
        return decode_dielectric(text, path).code      # NP0 and C0G are the same code
    if not isinstance(text, str):
        raise ProjectError(f"expected a string, got {text!r}", path=path)
    return text.strip()


def _same(key: str, a, b) -> bool:
    if key == "tolerance":
        return all(abs(p - q) <= 1e-9 for p, q in zip(a, b))
    if isinstance(a, float):
        return abs(a - b) <= 1e-9 * max(abs(a), abs(b))
    return str(a).lower() == str(b).lower()


def _from_bom(key: str, kind: str, row: BomRow, path: str):
    """Check a BOM cell before a part takes it, so that a bad cell names its line."""
    text = row.fields[key]
    try:
        _parse(key, kind, text, f"{path}.{key}")
    except ProjectError as exc:
        raise ProjectError(f"{exc.message} (from the {row.where}, {row.ref})",
                           path=f"{path}.{key}") from None
    return text


def merge_bom(part: dict, rows: dict[str, BomRow], path: str, *, bom_wins: bool,
              kind: str | None = None) -> dict:
    """Return the part's table with the BOM row of its ``ref`` merged in.

    ``path`` is the part's key path (``stage[2].parts.c``); the part type
    comes from the role's first letter unless ``kind`` ("R", "C", "L") is given.
    """
    ref = part.get("ref")
    kind = kind or path.rsplit(".", 1)[-1][:1].upper()
    if not isinstance(ref, str) or not ref.strip():
        return part
    row = rows.get(_key(ref))
    if row is None:
        if "value" not in part:
            file = next(iter(rows.values())).file if rows else ""
            raise ProjectError(f"'value' is missing and {ref} is not in the bill of materials"
                               + (f" '{file}'" if file else "")
                               + "; add a row for it or give the value here",
                               path=f"{path}.value")
        return part
    merged = dict(part)
    for key in row.fields:
        if key in _APPLIES and _APPLIES[key] != kind:
            continue
        bom_text = _from_bom(key, kind, row, path)
        if key not in part or bom_wins:
            merged[key] = bom_text
            continue
        mine = _parse(key, kind, part[key], f"{path}.{key}")
        theirs = _parse(key, kind, bom_text, f"{path}.{key}")
        if not _same(key, mine, theirs):
            raise ProjectError(f"{key} {part[key]!r} disagrees with the {row.where} "
                               f"({row.ref}: {bom_text!r}); correct one of them, or set "
                               "bom_wins = true in [analysis] to take the BOM's",
                               path=f"{path}.{key}")
    return merged


def unused_rows(rows: dict[str, BomRow], used_refs) -> list[BomRow]:
    """BOM rows whose designators no stage uses, in file order."""
    used = {_key(r) for r in used_refs if r}
    return sorted((r for k, r in rows.items() if k not in used),
                  key=lambda r: (r.line, r.ref))
