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

import difflib
import re
from dataclasses import dataclass, field
from pathlib import Path

from rcdoc.input import bom_columns as cols
from rcdoc.errors import ProjectError
from rcdoc.input.quantities import PART_UNITS, parse_positive, parse_tolerance

COLUMNS = ("ref", "value", "tolerance", "dielectric", "voltage", "power", "model")
_UNITS = PART_UNITS
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
    fitted: bool = True          # False where a do-not-populate column says so

    @property
    def where(self) -> str:
        return f"bill of materials '{self.file}' line {self.line}" if self.file else \
            f"bill of materials line {self.line}"


def _key(ref: str) -> str:
    """Designators match without regard to case or surrounding blanks (r12 = R12)."""
    return ref.strip().upper()


def read_bom(path: Path, key_path: str) -> dict[str, BomRow]:
    """Read the CSV; return designator (upper case) -> row. Errors name the file and line.

    The file may be UTF-8 (with or without a byte-order mark) or UTF-16 with its
    mark, separated by commas, semicolons or tabs, with the header names EDA
    tools export (rcdoc.input.bom_columns). Columns other than the known ones are
    ignored (exported BOMs carry quantities and descriptions), unless a name is
    close to a known column, which is taken as a typing mistake.
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
        data = Path(path).read_bytes()
    except OSError as exc:
        raise ProjectError(f"cannot read the bill of materials '{name}': {exc.strerror}",
                           path=key_path)
    text = cols.decode(data, name, key_path)
    rows = cols.rows_with_lines(text, cols.sniff_separator(text), name, key_path)
    if not rows or not any(c.strip() for c in rows[0][1]):
        raise ProjectError(f"the bill of materials '{name}' is empty (it needs a header row)",
                           path=key_path)
    header = rows[0][1]
    used, fitted_at, dnp_sense = cols.map_header(header, name, key_path)
    _check_typos(header, used, fitted_at, name, key_path)
    table: dict[str, BomRow] = {}
    for line, cells in rows[1:]:
        if not any(c.strip() for c in cells):
            continue
        if len(cells) > len(header) and any(c.strip() for c in cells[len(header):]):
            raise ProjectError(f"'{name}' line {line}: more cells than columns", path=key_path)
        fields = {h: cells[i].strip() for i, h in used.items()
                  if i < len(cells) and cells[i].strip()}
        fitted = True
        if fitted_at is not None and fitted_at < len(cells):
            fitted = cols.is_fitted(cells[fitted_at], dnp_sense, f"'{name}' line {line}",
                                    header[fitted_at].strip(), key_path)
        refs = [r for r in re.split(r"[,;\s]+", fields.get("ref", "")) if r]
        if not refs:
            raise ProjectError(f"'{name}' line {line}: the 'ref' cell is empty", path=key_path)
        if "value" not in fields and fitted:      # an unfitted row may leave it blank
            raise ProjectError(f"'{name}' line {line}: the 'value' cell is empty",
                               path=key_path)
        for ref in refs:
            k = _key(ref)
            if k in table:
                raise ProjectError(f"'{name}' line {line}: {ref} is already listed on line "
                                   f"{table[k].line}", path=key_path)
            table[k] = BomRow(ref=ref, line=line, file=name, fitted=fitted,
                              fields={c: v for c, v in fields.items() if c != "ref"})
    return table


def _check_typos(header, used, fitted_at, name: str, key_path: str) -> None:
    """A header close to a known column's name, but not one, is taken as a typing mistake."""
    taken = set(used.values())
    for i, cell in enumerate(header):
        h = cell.strip().lower()
        if not h or i in used or i == fitted_at:
            continue
        close = difflib.get_close_matches(h, COLUMNS, n=1, cutoff=0.75)
        if close and close[0] not in taken:
            raise ProjectError(f"the bill of materials '{name}' has a column '{cell.strip()}'; "
                               f"did you mean '{close[0]}'?", path=key_path)


def _parse(key: str, kind: str, text, path: str):
    """The cell or key as a comparable value; ProjectError (at ``path``) if unreadable."""
    if key == "value":
        return parse_positive(text, _UNITS[kind], path)
    if key == "tolerance":
        return parse_tolerance(text, path)
    if key in ("voltage", "power"):
        return parse_positive(text, "V" if key == "voltage" else "W", path)
    if key == "dielectric":
        from rcdoc.input.parts import decode_dielectric
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
    if not row.fitted:
        raise ProjectError(f"{row.ref} is marked do-not-populate in the {row.where}, but this "
                           "stage uses it; fit it in the BOM or leave it out of the stage",
                           path=f"{path}.ref")
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
    """Fitted BOM rows whose designators no stage uses, in file order
    (an unfitted part is not on the board, so it is not missing from the analysis)."""
    used = {_key(r) for r in used_refs if r}
    return sorted((r for k, r in rows.items() if k not in used and r.fitted),
                  key=lambda r: (r.line, r.ref))
