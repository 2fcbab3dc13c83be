"""Engineering quantities at the edge of rcdoc: text in, SI floats out, and back.

Parses what a user writes in a project file or a bill of materials ("4.7 kΩ",
"4k7", "100n", "-20 °C", "+80%/-20%") into plain floats in SI base units, and
formats floats with the one formatter every output uses ("4.7 kΩ", "-3.01 dB";
rules above ``format_quantity``). Every mistake in the text is a ProjectError
that names the key path.

This module must not know about stages or metrics (beyond the unit of a part
letter, ``PART_UNITS``), hold state, or
decide whether a value is sensible for its purpose (zero, negative, out of
range): the caller does that (``parse_positive`` is the one shortcut).
"""

from __future__ import annotations

import math
import numbers
import re

from rcdoc.errors import ProjectError
from rcdoc.input.limits import check_size

__all__ = [
    "format_yield",
    "UNITS",
    "UNIT_NAMES",
    "NOTE_MINUS",
    "PART_UNITS",
    "distinct_digits",
    "format_eng",
    "format_quantity",
    "format_rkm",
    "parse_percent",
    "parse_positive",
    "parse_quantity",
    "parse_tolerance",
]

#: unit code -> display symbol (axis labels, tables). "1" is dimensionless.
UNITS: dict[str, str] = {
    "ohm": "Ω",
    "F": "F",
    "H": "H",
    "Hz": "Hz",
    "V": "V",
    "A": "A",
    "W": "W",
    "J": "J",
    "s": "s",
    "V/s": "V/s",
    "degC": "°C",
    "ppm/K": "ppm/K",
    "dB": "dB",
    "%": "%",
    "1": "",
    "deg": "°",
    "LSB": "LSB",
}

#: unit code -> what a quantity in that unit is, for messages.
UNIT_NAMES: dict[str, str] = {
    "ohm": "resistance",
    "F": "capacitance",
    "H": "inductance",
    "Hz": "frequency",
    "V": "voltage",
    "A": "current",
    "W": "power",
    "J": "energy",
    "s": "time",
    "V/s": "slew rate",
    "degC": "temperature",
    "ppm/K": "temperature coefficient",
    "dB": "level",
    "%": "percentage",
    "1": "plain number",
    "deg": "angle",
    "LSB": "converter error in LSB",
}

_EXAMPLES: dict[str, str] = {
    "ohm": "4.7 kΩ",
    "F": "10 nF",
    "H": "10 µH",
    "Hz": "250 kHz",
    "V": "48 V",
    "A": "2 A",
    "W": "0.25 W",
    "J": "2 mJ",
    "s": "20 µs",
    "V/s": "1 kV/s",
    "degC": "-20 °C",
    "ppm/K": "100 ppm/K",
    "dB": "-30 dB",
    "%": "5%",
    "1": "0.707",
    "deg": "-45°",
    "LSB": "0.5 LSB",
}

# Only these units take SI prefixes; a "k°C" or "mdB" is a mistake.
_PREFIXED = frozenset({"ohm", "F", "H", "Hz", "V", "A", "W", "J", "s", "V/s", "1"})

# SI prefixes as powers of ten. Upper-case K for kilo is not SI but is the
# IEC 60062 RKM letter and common practice on resistor values ("4K7", "10K").
_PREFIX_EXP: dict[str, int] = {
    "f": -15, "p": -12, "n": -9, "u": -6, "µ": -6, "m": -3,
    "k": 3, "K": 3, "M": 6, "G": 9, "T": 12,
}
_PREFIX_SHOW: dict[int, str] = {
    -15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T",
}

# Slew rates per a prefixed second: "V/µs" is 10^6 V/s.
_PER_TIME: dict[str, int] = {"V/ms": 3, "V/µs": 6, "V/us": 6, "V/ns": 9}

# Unit symbols accepted after the number, per unit code: (symbol, case-insensitive).
# "R" is deliberately absent: it means ohm only as the RKM decimal marker.
_SYMBOLS: dict[str, tuple[tuple[str, bool], ...]] = {
    "ohm": (("Ω", False), ("ohms", True), ("ohm", True)),
    "F": (("F", False),),
    "H": (("H", False),),
    "Hz": (("Hz", True),),
    "V": (("V", False),),
    "A": (("A", False),),
    "W": (("W", False),),
    "J": (("J", False),),
    "s": (("s", False),),
    "V/s": (("V/s", False),),
    "degC": (("°C", False), ("degC", False), ("deg C", False), ("C", False)),
    "ppm/K": (("ppm/K", False), ("ppm/°C", False), ("ppm/degC", False), ("ppm/C", False),
              ("ppm", False)),
    "dB": (("dB", True),),
    "%": (("%", False),),
    "1": (),
    "deg": (("degrees", False), ("deg", False), ("°", False)),
    "LSB": (("LSB", True),),
}

# Look-alike characters people paste from datasheets and word processors.
_NORMALISE = str.maketrans({
    "\u2126": "Ω",   # OHM SIGN -> GREEK CAPITAL OMEGA
    "\u03bc": "µ",   # GREEK SMALL MU -> MICRO SIGN
    "\u2212": "-",   # MINUS SIGN
    "\u00ba": "°",   # MASCULINE ORDINAL, often typed for the degree sign
    "\u2103": "°C",  # DEGREE CELSIUS as one character
})

_NUM = r"(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
_PLAIN = re.compile(rf"(?P<sign>±|\+/-|\+-|[+-])?\s*(?P<num>{_NUM})\s*(?P<rest>.*)", re.S)
# IEC 60062 "RKM" code: the multiplier letter stands where the decimal point goes.
_RKM = re.compile(r"(?P<sign>[+-])?(?P<int>[0-9]*)(?P<letter>[fpnuµmkKMGTR])(?P<frac>[0-9]*)"
                  r"\s*(?P<rest>.*)", re.S)

# IEC 60062 tolerance letters: (plus, minus) as fractions.
_TOLERANCE_LETTERS: dict[str, tuple[float, float]] = {
    "B": (0.001, 0.001),
    "C": (0.0025, 0.0025),
    "D": (0.005, 0.005),
    "F": (0.01, 0.01),
    "G": (0.02, 0.02),
    "J": (0.05, 0.05),
    "K": (0.10, 0.10),
    "M": (0.20, 0.20),
    "Z": (0.80, 0.20),
}


# --------------------------------------------------------------------------- parsing


def _show(value: object) -> str:
    """The user's text for a message, quoted, shortened if very long."""
    try:
        text = str(value)
    except ValueError:  # e.g. an int too long for str() (Python's digit limit)
        text = f"<{type(value).__name__}>"
    if len(text) > 60:
        text = text[:57] + "…"
    return f'"{text}"'


def _unit_phrase(unit: str) -> str:
    if unit == "1":
        return 'a plain number (no unit), e.g. "0.707"'
    symbol = UNITS[unit]
    code = f" ({unit})" if symbol != unit else ""
    return f'a {UNIT_NAMES[unit]} in {symbol}{code}, e.g. "{_EXAMPLES[unit]}"'


def _describe(value: object) -> str:
    if isinstance(value, bool):
        return f"the boolean {str(value).lower()}"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "a table"
    if value is None:
        return "nothing"
    return f"a {type(value).__name__}"


def _match_rest(rest: str, unit: str) -> tuple[int | None, bool]:
    """Power of ten of the prefix in ``rest`` (what follows the number), for ``unit``.

    Returns (exponent, named) where ``named`` says a unit symbol was written;
    exponent is None when ``rest`` does not fit ``unit``.
    """
    if rest == "":
        return 0, False
    if unit in ("ppm/K", "V/s"):
        rest = re.sub(r"\s*/\s*", "/", rest)
    if unit == "V/s" and rest in _PER_TIME:      # "1 V/µs" = 1 MV/s
        return _PER_TIME[rest], True
    for symbol, fold in _SYMBOLS[unit]:
        tail = rest[-len(symbol):] if len(rest) >= len(symbol) else ""
        if (tail.lower() == symbol.lower()) if fold else (tail == symbol):
            head = rest[: len(rest) - len(symbol)]
            if head == "":
                return 0, True
            if unit in _PREFIXED and head in _PREFIX_EXP:
                return _PREFIX_EXP[head], True
    if unit in _PREFIXED and rest in _PREFIX_EXP:
        return _PREFIX_EXP[rest], False  # bare prefix: the key fixes the unit
    return None, False


def _wrong_unit(original: str, rest: str, unit: str, path: str) -> ProjectError:
    for other in UNITS:
        if other in (unit, "1"):
            continue
        exp, named = _match_rest(rest, other)
        if exp is not None and named:
            return ProjectError(
                f"{_show(original)} is a {UNIT_NAMES[other]} ({UNITS[other]}), "
                f"but {_unit_phrase(unit)} is expected here",
                path=path,
            )
    if unit == "degC" and rest == "K":
        return ProjectError(
            f"{_show(original)}: write temperatures in °C (kelvin is not accepted here); "
            f"expected {_unit_phrase(unit)}",
            path=path,
        )
    if rest in _PREFIX_EXP and unit not in _PREFIXED:
        return ProjectError(
            f"{_show(original)}: a {UNIT_NAMES[unit]} takes no SI prefix; "
            f"expected {_unit_phrase(unit)}",
            path=path,
        )
    hint = ""
    if unit == "ohm" and rest.endswith("R"):
        hint = ' ("R" stands for ohm only as the decimal marker, as in "4R7")'
    return ProjectError(
        f"{_show(original)}: unit {_show(rest)} does not fit; "
        f"expected {_unit_phrase(unit)}{hint}",
        path=path,
    )


def _to_float(mantissa: str, exp: int, negative: bool, original: str, unit: str,
              path: str) -> float:
    # Scale in the decimal text, not by multiplying floats: "4.7k" must give
    # exactly 4700.0, and 4.7 * 1e3 does not.
    mantissa = mantissa.lower()
    if "e" in mantissa:
        mantissa, own = mantissa.split("e")
        try:
            exp += int(own)
        except ValueError:  # an exponent too long for int(); no real value has one
            raise ProjectError(f"{_show(original)} is out of range", path=path) from None
    result = float(f"{'-' if negative else ''}{mantissa}e{exp}")
    if not math.isfinite(result):
        raise ProjectError(f"{_show(original)} is out of range for {_unit_phrase(unit)}",
                           path=path)
    return result


def _parse_text(original: str, unit: str, path: str) -> float:
    text = original.translate(_NORMALISE).strip()
    if not text:
        raise ProjectError(f"empty value: expected {_unit_phrase(unit)}", path=path)
    rkm = _RKM.fullmatch(text)
    if rkm and (rkm["int"] or rkm["frac"]) and (rkm["frac"] or rkm["letter"] == "R"):
        letter = rkm["letter"]
        if letter == "R":
            if unit != "ohm":
                raise ProjectError(
                    f'{_show(original)}: "R" as a decimal marker is for resistances only; '
                    f"expected {_unit_phrase(unit)}",
                    path=path,
                )
            exp = 0
        elif unit not in _PREFIXED:
            raise ProjectError(
                f"{_show(original)}: a {UNIT_NAMES[unit]} takes no SI prefix; "
                f"expected {_unit_phrase(unit)}",
                path=path,
            )
        else:
            exp = _PREFIX_EXP[letter]
        rest = rkm["rest"].strip()
        named_exp, _ = _match_rest(rest, unit)
        if named_exp != 0:  # after an RKM code only the bare unit may follow
            raise _wrong_unit(original, rest, unit, path)
        mantissa = f"{rkm['int'] or '0'}.{rkm['frac'] or '0'}"
        return _to_float(mantissa, exp, rkm["sign"] == "-", original, unit, path)

    plain = _PLAIN.fullmatch(text)
    if plain is None:
        raise ProjectError(f"cannot read {_show(original)}: expected {_unit_phrase(unit)}",
                           path=path)
    sign = plain["sign"] or ""
    if sign in ("±", "+/-", "+-") and unit != "%":
        raise ProjectError(
            f"{_show(original)}: ± belongs to tolerances and percentages only; "
            f"expected {_unit_phrase(unit)}",
            path=path,
        )
    rest = plain["rest"].strip()
    exp, named = _match_rest(rest, unit)
    if exp is None:
        raise _wrong_unit(original, rest, unit, path)
    if unit == "%" and named:
        exp -= 2  # percent is stored as a fraction; a bare "0.05" already is one
    return _to_float(plain["num"], exp, sign == "-", original, unit, path)


def parse_quantity(value: object, unit: str, path: str = "") -> float:
    """Read a quantity written in a project file as a float in ``unit``'s base.

    ``value`` is a TOML string ("4.7 kΩ", "4k7", "10k", "-20 °C", "5%") or a
    bare number, taken as already in the base unit. Percentages come back as
    fractions ("5%" -> 0.05), coefficients in ppm/K, levels in dB, angles in
    degrees, temperatures in °C. Zero and negative values are allowed; the
    caller decides. Raises ProjectError (with ``path``) for anything else.
    """
    if unit not in UNITS:
        raise ValueError(f"unknown unit code {unit!r}")  # a bug in rcdoc, not user input
    if isinstance(value, bool) or not isinstance(value, (str, numbers.Real)):
        raise ProjectError(f"expected {_unit_phrase(unit)}, got {_describe(value)}", path=path)
    if isinstance(value, str):
        return check_size(_parse_text(value, unit, path), _show(value), _unit_phrase(unit), path)
    try:
        result = float(value)
    except (OverflowError, ValueError):
        result = math.nan
    if not math.isfinite(result):
        raise ProjectError(f"{_show(value)} is not a finite number; expected {_unit_phrase(unit)}",
                           path=path)
    return check_size(result, _show(value), _unit_phrase(unit), path)


def parse_positive(value: object, unit: str, path: str = "") -> float:
    """As ``parse_quantity``, and the value must be greater than zero."""
    result = parse_quantity(value, unit, path)
    if result <= 0:
        raise ProjectError(
            f"{_show(value)} must be greater than zero ({UNIT_NAMES[unit]})", path=path
        )
    return result


def parse_percent(value: object, path: str = "") -> float:
    """A percentage as a fraction: "99.7%" -> 0.997; a bare number is a fraction already."""
    return parse_quantity(value, "%", path)


def _tolerance_error(value: object, path: str, why: str = "") -> ProjectError:
    letters = " ".join(_TOLERANCE_LETTERS)
    reason = f" ({why})" if why else ""
    return ProjectError(
        f"cannot read {_show(value)} as a tolerance{reason}: write e.g. \"5%\", \"±1%\", "
        f"\"+80%/-20%\", a fraction such as 0.05, or an IEC 60062 letter ({letters})",
        path=path,
    )


def _signed_part(part: str, path: str, value: object) -> float:
    if not part.startswith(("+", "-")):
        raise _tolerance_error(value, path, "each side of an asymmetric tolerance needs its sign")
    try:
        return parse_quantity(part, "%", path)
    except ProjectError:
        raise _tolerance_error(value, path) from None


def parse_tolerance(value: object, path: str = "") -> tuple[float, float]:
    """A part tolerance as (plus, minus) fractions, both >= 0.

    "5%", "±5%", "5 %" and 0.05 give (0.05, 0.05); "+80%/-20%" gives
    (0.8, 0.2); the IEC 60062 letters (F = ±1 %, Z = +80/−20 %, ...) are
    accepted. A lone "+5%" is refused as ambiguous (one-sided or symmetric?).
    """
    if isinstance(value, bool) or not isinstance(value, (str, numbers.Real)):
        raise _tolerance_error(value, path, f"got {_describe(value)}")
    if isinstance(value, str):
        text = value.translate(_NORMALISE).strip()
        if text in _TOLERANCE_LETTERS:
            return _TOLERANCE_LETTERS[text]
        text = re.sub(r"^\+\s*/\s*-|^\+-", "±", text)
        if "/" in text:
            parts = [p.strip() for p in text.split("/")]
            if len(parts) != 2 or not all(parts):
                raise _tolerance_error(value, path)
            # "+80/-20%": one percent sign covers both sides.
            if parts[1].endswith("%") and not parts[0].endswith("%"):
                parts[0] += "%"
            elif parts[0].endswith("%") and not parts[1].endswith("%"):
                parts[1] += "%"
            first, second = (_signed_part(p, path, value) for p in parts)
            signs = {parts[0][0], parts[1][0]}
            if signs != {"+", "-"}:
                raise _tolerance_error(value, path, "one side must be + and the other -")
            plus, minus = (first, -second) if parts[0][0] == "+" else (second, -first)
        else:
            if text.startswith("+"):
                raise _tolerance_error(value, path, 'a lone "+" is ambiguous; write ±x% or +x%/-y%')
            if text.startswith("-"):
                raise _tolerance_error(value, path, "a tolerance cannot be negative")
            try:
                plus = minus = parse_quantity(text, "%", path)
            except ProjectError:
                raise _tolerance_error(value, path) from None
    else:
        try:
            plus = minus = parse_quantity(value, "%", path)
        except ProjectError:
            raise _tolerance_error(value, path, "not a finite number") from None
    if plus < 0 or minus < 0:
        raise _tolerance_error(value, path, "a tolerance cannot be negative")
    if minus >= 1:
        raise _tolerance_error(
            value, path,
            "the minus side must be below 100%; a bare number is a fraction, 0.05 = 5%",
        )
    if plus > 10:
        raise _tolerance_error(value, path, "above 1000%")
    return float(plus), float(minus)


# --------------------------------------------------------------------------- formatting
#
# One formatter for every unit (the note, the terminal, the JSON's text, the
# charts all call it). Rules, for every unit:
# - engineering prefixes f to T on the physical units; never an exponent form
#   (a value beyond the prefixes keeps the last prefix: "0.001 fF");
# - ``digits`` significant figures, trailing zeros stripped (angles keep them);
# - a space between number and unit ("10.2 kHz", "−39.5 dB", "5 %") except
#   before the degree sign of an angle ("−86.8°"): SI Brochure, 9th ed., 5.4.3;
# - the minus sign is ``minus``: U+2212 in the note, ASCII "-" (the default)
#   on terminals and in JSON and JUnit text;
# - |value| below ``resolution`` is rounding noise: shown as 0, or as
#   "< resolution" for a stress, where 0 would claim too much.

#: The unit of a part, by its letter (R, C, L): one copy, imported everywhere.
PART_UNITS: dict[str, str] = {"R": "ohm", "C": "F", "L": "H"}

NOTE_MINUS = "\u2212"
_MAX_DIGITS = 6


def _digits(value: float, digits: int) -> tuple[str, int]:
    """Significant digits of |value| rounded to ``digits``, and the decimal exponent.

    |value| = d0.d1d2... x 10**exp. Python's own %e rounding does the carry
    (999.6 -> 1.00e+03), so no log10 edge cases.
    """
    mantissa, exp = f"{abs(value):.{max(digits, 1) - 1}e}".split("e")
    return mantissa.replace(".", ""), int(exp)


def _place(ds: str, point: int, keep_zeros: bool = False, min_decimals: int = 0) -> str:
    """Digit string ``ds`` with the decimal point after ``point`` digits (may be <= 0)."""
    if point <= 0:
        whole, frac = "0", "0" * (-point) + ds
    else:
        whole, frac = ds[:point].ljust(point, "0"), ds[point:]
    if not keep_zeros:
        frac = frac.rstrip("0")
    frac = frac.ljust(min_decimals, "0")
    return f"{whole}.{frac}" if frac else whole


def _plain(value: float, digits: int, keep_zeros: bool = False, min_decimals: int = 0) -> str:
    """``digits`` significant figures without a prefix, in positional notation."""
    if not math.isfinite(value):  # a finite fraction can overflow as a percentage
        return str(value)
    sign = "-" if value < 0 else ""
    ds, exp = _digits(value, digits)
    return sign + _place(ds, exp + 1, keep_zeros, min_decimals)


def format_eng(value: float, symbol: str, digits: int = 3) -> str:
    """``value`` with an engineering prefix before ``symbol`` (any text, may be "").

    The prefix is the one for the value's power of ten, kept within f to T.
    ASCII minus; ``format_quantity`` applies the minus and resolution rules.
    """
    value = float(value)
    if not math.isfinite(value):
        return f"{value} {symbol}".rstrip()
    if value == 0:
        return f"0 {symbol}".rstrip()
    sign = "-" if value < 0 else ""
    ds, exp = _digits(value, digits)
    group = min(max((exp // 3) * 3, -15), 12)
    return f"{sign}{_place(ds, exp - group + 1)} {_PREFIX_SHOW[group]}{symbol}".rstrip()


def _format(value: float, unit: str, digits: int) -> str:
    symbol = UNITS[unit]
    if unit == "%":
        return f"{_plain(value * 100, digits)} %"
    if unit == "deg":
        return f"{_plain(value, digits, keep_zeros=True, min_decimals=1)}°"
    if unit == "1":
        return _plain(value, digits)
    if unit not in _PREFIXED:
        return f"{_plain(value, digits)} {symbol}"
    return format_eng(value, symbol, digits)


def format_quantity(value: float, unit: str, digits: int = 3, *, resolution: float = 0.0,
                    stress: bool = False, minus: str = "-") -> str:
    """Format an SI float: 4700, "ohm" -> "4.7 kΩ"; 1e-8, "F" -> "10 nF".

    The rules are above this function. dB, °C, ppm/K, "%" (``value`` is a
    fraction: 0.05 -> "5 %") and "1" take no prefix; angles keep their zeros
    and at least one decimal ("-45.0°"), as phase tables are usually written.
    """
    if unit not in UNITS:
        raise ValueError(f"unknown unit code {unit!r}")
    value = float(value)
    if not math.isfinite(value):
        return f"{value} {UNITS[unit]}".rstrip()
    if resolution > 0 and abs(value) < resolution:
        if stress and value != 0:
            return "< " + _format(resolution, unit, digits)
        value = 0.0
    return _format(value, unit, digits).replace("-", minus)


def distinct_digits(values, unit: str, digits: int = 3, *, resolution: float = 0.0) -> int:
    """Fewest significant figures, from ``digits`` up to 6, at which values that
    differ are printed differently (a worst value beside its limit, the two ends
    of a tight part's range)."""
    vals = [float(v) for v in values if v is not None and math.isfinite(float(v))]
    vals = [0.0 if abs(v) < resolution else v for v in vals]
    for d in range(digits, _MAX_DIGITS + 1):
        seen: dict[str, float] = {}
        if all(seen.setdefault(_format(v, unit, d), v) == v for v in vals):
            return d
    return _MAX_DIGITS
def format_yield(x: float, min_decimals: int = 1) -> str:
    """A yield (a fraction) in percent: "100 %" only when every sample passed.

    Decimals are added (from ``min_decimals`` up to six) until the text falls
    below 100: a 99.996 % yield never rounds to a clean pass.
    """
    if x >= 1:
        return "100 %"
    for decimals in range(min_decimals, 7):
        text = f"{x * 100:.{decimals}f}"
        if float(text) < 100:
            return f"{text} %"
    return f"{x * 100:.6f} %"


def format_rkm(value: float, unit_letter_for_ohm: bool = True, digits: int = 3) -> str:
    """The IEC 60062 "RKM" code of a value: 4700 -> "4k7", 0.47 -> "R47", 2.2e-6 -> "2u2".

    With ``unit_letter_for_ohm`` the units decade uses "R" (4.7 -> "4R7") and
    values from 1 mΩ to 1 Ω are written "R047"; otherwise the units decade is a
    plain decimal ("4.7"). A lone integer digit gets a trailing zero
    ("1k0"), common practice on marked parts. Beyond f to T: the last prefix.
    """
    value = float(value)
    if not math.isfinite(value):
        return str(value)
    if value == 0:
        return "0R" if unit_letter_for_ohm else "0"
    sign = "-" if value < 0 else ""
    ds, exp = _digits(value, digits)
    if unit_letter_for_ohm and -3 <= exp < 0:
        return sign + "R" + _place(ds, exp + 1).split(".")[1]
    group = min(max((exp // 3) * 3, -15), 12)   # beyond f to T: keep the last prefix
    if group == 0:
        letter = "R" if unit_letter_for_ohm else "."
    else:
        letter = "u" if group == -6 else _PREFIX_SHOW[group]
    whole, _, frac = _place(ds, exp - group + 1).partition(".")
    if not frac:
        if letter == ".":
            return sign + whole
        frac = "0" if len(whole) == 1 else ""
    return f"{sign}{whole}{letter}{frac}"
