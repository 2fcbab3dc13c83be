"""How bills of materials are spelled when EDA tools export them: the text
encoding, the separator, the header names of the columns rcdoc reads, and the
words a do-not-populate column uses.

bom.py reads the rows; this module only decodes the file and maps what an
export calls a column to rcdoc's own column names. What it must not do: know
about parts, stages or physics.
"""

from __future__ import annotations

import codecs
import csv
import io
import re

from rcdoc.errors import ProjectError

# rcdoc's column -> header names (letters and digits only, lower case) that mean it.
# `comment` holds the value in some exports; it is read as the value only where no
# value column is present (elsewhere it is a free-text column and ignored).
ALIASES = {
    "ref": ("ref", "refs", "reference", "references", "designator", "designators",
            "refdes", "referencedesignator", "referencedesignators"),
    "value": ("value", "val", "values"),
    "tolerance": ("tolerance", "tol"),
    "dielectric": ("dielectric",),
    "voltage": ("voltage", "voltagerating", "ratedvoltage"),
    "power": ("power", "powerrating", "ratedpower"),
    "model": ("model", "mpn", "partnumber", "manufacturerpartnumber"),
}
VALUE_FALLBACK = "comment"
# Do-not-populate columns. A "dnp" column says yes for an unfitted part; a
# "fitted" column says yes for a fitted one (the opposite sense).
DNP_HEADERS = ("dnp", "dni", "donotpopulate", "donotplace", "donotfit", "nopop", "notfitted")
FITTED_HEADERS = ("populate", "populated", "fitted", "fit", "mounted")
# Cell words, compared with letters and digits only, lower case ("Not fitted" -> "notfitted").
YES_WORDS = ("yes", "y", "true", "t", "1", "x")
NO_WORDS = ("no", "n", "false", "f", "0", "-")
UNFITTED_WORDS = ("dnp", "dni", "donotpopulate", "donotplace", "donotfit", "notfitted",
                  "nofit", "nf", "unfitted", "notpopulated", "unpopulated", "nopop", "np")
FITTED_WORDS = ("fitted", "fit", "populate", "populated", "place", "placed", "mounted", "pop")
WORDS_HELP = "yes/no, true/false, 1/0, x, DNP, fitted/not fitted"
SEPARATORS = (",", ";", "\t")


def normal(header: str) -> str:
    """A header as compared: letters and digits only, lower case ("Ref Des" -> "refdes")."""
    return re.sub(r"[^a-z0-9]", "", header.lower())


def decode(data: bytes, name: str, key_path: str) -> str:
    """UTF-8 (with or without a byte-order mark) or UTF-16 with its byte-order mark."""
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        encoding = "utf-16"          # the codec reads the mark and drops it
    else:
        encoding = "utf-8-sig"
    try:
        return data.decode(encoding)
    except UnicodeDecodeError:
        raise ProjectError(f"the bill of materials '{name}' is not UTF-8 text (or UTF-16 "
                           "with a byte-order mark); export it as UTF-8", path=key_path) from None


def _fields(line: str, sep: str) -> list[str]:
    try:
        return next(csv.reader([line], delimiter=sep), [])
    except csv.Error:
        return []


def sniff_separator(text: str) -> str:
    """Comma, semicolon or tab: the one under which the header row names a
    designator and a value column; among those (or if none does), the one
    that splits the header into the most cells. Ties go to the comma."""
    header = text.split("\n", 1)[0].rstrip("\r")
    best, best_key = ",", (-1, -1)
    for sep in SEPARATORS:
        names = {normal(h) for h in _fields(header, sep)}
        knows = int(bool(names & set(ALIASES["ref"]))) + int(
            bool(names & (set(ALIASES["value"]) | {VALUE_FALLBACK})))
        key = (knows, len(names))
        if key > best_key:
            best, best_key = sep, key
    return best


def map_header(header: list[str], name: str, key_path: str) -> tuple[dict[int, str], int | None, bool]:
    """Header cells -> ({cell index: rcdoc column}, index of the fitted column or None,
    whether that column has the do-not-populate sense). Two cells meaning one column
    is an error; so is a missing designator or value column."""
    columns: dict[int, str] = {}
    seen: dict[str, str] = {}
    fitted_at, dnp_sense, comment_at = None, False, None
    for i, cell in enumerate(header):
        key = normal(cell)
        col = next((c for c, names in ALIASES.items() if key in names), None)
        if key in DNP_HEADERS or key in FITTED_HEADERS:
            col = "fitted"
        if key == VALUE_FALLBACK and comment_at is None:
            comment_at = i
        if col is None:
            continue
        if col in seen:
            raise ProjectError(f"the bill of materials '{name}' has two {_what(col)} columns: "
                               f"'{seen[col]}' and '{cell.strip()}'", path=key_path)
        seen[col] = cell.strip()
        if col == "fitted":
            fitted_at, dnp_sense = i, key in DNP_HEADERS
        else:
            columns[i] = col
    if "value" not in seen and comment_at is not None:
        columns[comment_at] = "value"
        seen["value"] = header[comment_at].strip()
    for col, also in (("ref", "Reference, Designator, RefDes"), ("value", "Val, Comment")):
        if col not in seen:
            found = ", ".join(h.strip() for h in header if h.strip()) or "none"
            raise ProjectError(f"the bill of materials '{name}' has no '{col}' column "
                               f"(nor {also}; columns found: {found})", path=key_path)
    return columns, fitted_at, dnp_sense


def _what(col: str) -> str:
    return {"ref": "designator", "fitted": "do-not-populate"}.get(col, f"'{col}'")


def is_fitted(cell: str, dnp_sense: bool, where: str, header: str, key_path: str) -> bool:
    """Read one cell of the do-not-populate column; an empty cell is a fitted part."""
    word = normal(cell)
    if not word:
        return True
    if word in UNFITTED_WORDS:
        return False
    if word in FITTED_WORDS:
        return True
    if word in YES_WORDS:
        return not dnp_sense
    if word in NO_WORDS:
        return dnp_sense
    raise ProjectError(f"{where}: '{cell.strip()}' in the '{header}' column is not one of "
                       f"{WORDS_HELP}", path=key_path)


def rows_with_lines(text: str, sep: str, name: str, key_path: str):
    """CSV rows, each with the line it starts on (a quoted cell may span lines)."""
    reader = csv.reader(io.StringIO(text), delimiter=sep)
    out, line = [], 1
    try:
        for cells in reader:
            out.append((line, cells))
            line = reader.line_num + 1
    except csv.Error as exc:
        raise ProjectError(f"malformed CSV in '{name}' near line {reader.line_num}: {exc}",
                           path=key_path) from None
    return out
