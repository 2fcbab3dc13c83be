"""The bill of materials: read the CSV named by ``[analysis].bom`` and merge
its rows into parts by reference designator.

A part takes every key it does not state itself from the BOM row of its
``ref``; a key stated in both places that disagrees is an error unless
``bom_wins = true``, in which case the BOM's value is used. Nothing here
knows about stage kinds or physics.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from pathlib import Path

from .errors import ProjectError
from .quantities import parse_quantity, parse_tolerance

COLUMNS = ("ref", "value", "tolerance", "dielectric", "voltage", "power", "model")
_UNITS = {"R": "ohm", "C": "F", "L": "H"}


@dataclass(frozen=True)
class BomRow:
    ref: str
    line: int
    fields: dict          # column -> text (non-empty cells only)


def read_bom(path: Path, key_path: str) -> dict[str, BomRow]:
    """Read the CSV; return designator -> row. Errors name the file and the line."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise ProjectError(f"cannot read the bill of materials '{path}': {exc.strerror}",
                           path=key_path)
    except UnicodeDecodeError:
        raise ProjectError(f"the bill of materials '{path}' is not UTF-8 text", path=key_path)
    try:
        reader = csv.reader(io.StringIO(text))
        rows = list(reader)
    except csv.Error as exc:
        raise ProjectError(f"malformed CSV in '{path}': {exc}", path=key_path)
    if not rows:
        raise ProjectError(f"the bill of materials '{path}' is empty", path=key_path)
    header = [h.strip().lower() for h in rows[0]]
    for col in ("ref", "value"):
        if col not in header:
            raise ProjectError(f"the bill of materials '{path}' has no '{col}' column "
                               f"(columns found: {', '.join(header) or 'none'})", path=key_path)
    unknown = [h for h in header if h and h not in COLUMNS]
    if unknown:
        raise ProjectError(f"the bill of materials '{path}' has unknown column(s) "
                           f"{', '.join(unknown)}; known: {', '.join(COLUMNS)}", path=key_path)
    table: dict[str, BomRow] = {}
    for line, cells in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in cells):
            continue
        if len(cells) > len(header):
            raise ProjectError(f"'{path}' line {line}: more cells than columns", path=key_path)
        fields = {h: c.strip() for h, c in zip(header, cells) if h and c.strip()}
        refs = [r for r in re.split(r"[,\s]+", fields.get("ref", "")) if r]
        if not refs:
            raise ProjectError(f"'{path}' line {line}: the 'ref' cell is empty", path=key_path)
        if "value" not in fields:
            raise ProjectError(f"'{path}' line {line}: the 'value' cell is empty",
                               path=key_path)
        for ref in refs:
            if ref in table:
                raise ProjectError(f"'{path}' line {line}: {ref} is already listed on line "
                                   f"{table[ref].line}", path=key_path)
            table[ref] = BomRow(ref=ref, line=line, fields={k: v for k, v in fields.items()
                                                            if k != "ref"})
    return table


def _same(key: str, kind: str, a, b, path: str) -> bool:
    if key == "value":
        x, y = parse_quantity(a, _UNITS[kind], path), parse_quantity(b, _UNITS[kind], path)
    elif key == "tolerance":
        x, y = parse_tolerance(a, path), parse_tolerance(b, path)
        return all(abs(p - q) <= 1e-9 for p, q in zip(x, y))
    elif key in ("voltage", "power"):
        unit = "V" if key == "voltage" else "W"
        x, y = parse_quantity(a, unit, path), parse_quantity(b, unit, path)
    else:
        return str(a).strip().lower() == str(b).strip().lower()
    return abs(x - y) <= 1e-9 * max(abs(x), abs(y))


def merge_bom(part: dict, rows: dict[str, BomRow], path: str, *, bom_wins: bool,
              kind: str | None = None) -> dict:
    """Return the part's table with the BOM row of its ``ref`` merged in."""
    ref = part.get("ref")
    if not isinstance(ref, str) or ref not in rows:
        return part
    kind = kind or path.rsplit(".", 1)[-1][0].upper()
    row = rows[ref]
    merged = dict(part)
    for key, text in row.fields.items():
        if key not in part:
            merged[key] = text
        elif bom_wins:
            merged[key] = text
        elif not _same(key, kind, part[key], text, f"{path}.{key}"):
            raise ProjectError(f"{key} {part[key]!r} disagrees with the bill of materials "
                               f"({text!r}, line {row.line}); correct one of them or set "
                               "bom_wins = true in [analysis]", path=f"{path}.{key}")
    return merged


def unused_rows(rows: dict[str, BomRow], used_refs: set[str]) -> list[BomRow]:
    """BOM rows whose designators no stage uses, in file order."""
    return sorted((r for ref, r in rows.items() if ref not in used_refs),
                  key=lambda r: (r.line, r.ref))
