"""IEC 60063 preferred number series (E3 ... E192) and nearest preferred values.

What it is for: telling whether a part value is a preferred value, finding the
preferred values around a computed one (for proposed snubber values and for
the parts table), and pairing a tolerance with its usual series.

What it must not do: parse quantities, know about stages or parts, or round
anything it reports; values returned are exact decimal multiples of the
series' mantissas (4.7 kΩ comes back as 4700.0, 4.7 nF as 4.7e-09).
"""

from __future__ import annotations

import math

from rcdoc.errors import ProjectError

# Provenance of the typed tables:
# - E24: typed from IEC 60063 (the 24 two-digit values 10 ... 91). E12, E6 and
#   E3 are every 2nd, 4th and 8th value of E24, as the standard builds them.
# - E192: typed from IEC 60063 (the 192 three-digit values 100 ... 988). E96
#   and E48 are every 2nd and 4th value of E192.
# Both tables are checked value by value against the `eseries` package in
# tests/test_preferred.py. Neither is round(10**(i/N)): E24 departs from that
# formula at 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2, and E192 at 9.20.
_E24 = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)

_E192 = (
    1.00, 1.01, 1.02, 1.04, 1.05, 1.06, 1.07, 1.09, 1.10, 1.11, 1.13, 1.14,
    1.15, 1.17, 1.18, 1.20, 1.21, 1.23, 1.24, 1.26, 1.27, 1.29, 1.30, 1.32,
    1.33, 1.35, 1.37, 1.38, 1.40, 1.42, 1.43, 1.45, 1.47, 1.49, 1.50, 1.52,
    1.54, 1.56, 1.58, 1.60, 1.62, 1.64, 1.65, 1.67, 1.69, 1.72, 1.74, 1.76,
    1.78, 1.80, 1.82, 1.84, 1.87, 1.89, 1.91, 1.93, 1.96, 1.98, 2.00, 2.03,
    2.05, 2.08, 2.10, 2.13, 2.15, 2.18, 2.21, 2.23, 2.26, 2.29, 2.32, 2.34,
    2.37, 2.40, 2.43, 2.46, 2.49, 2.52, 2.55, 2.58, 2.61, 2.64, 2.67, 2.71,
    2.74, 2.77, 2.80, 2.84, 2.87, 2.91, 2.94, 2.98, 3.01, 3.05, 3.09, 3.12,
    3.16, 3.20, 3.24, 3.28, 3.32, 3.36, 3.40, 3.44, 3.48, 3.52, 3.57, 3.61,
    3.65, 3.70, 3.74, 3.79, 3.83, 3.88, 3.92, 3.97, 4.02, 4.07, 4.12, 4.17,
    4.22, 4.27, 4.32, 4.37, 4.42, 4.48, 4.53, 4.59, 4.64, 4.70, 4.75, 4.81,
    4.87, 4.93, 4.99, 5.05, 5.11, 5.17, 5.23, 5.30, 5.36, 5.42, 5.49, 5.56,
    5.62, 5.69, 5.76, 5.83, 5.90, 5.97, 6.04, 6.12, 6.19, 6.26, 6.34, 6.42,
    6.49, 6.57, 6.65, 6.73, 6.81, 6.90, 6.98, 7.06, 7.15, 7.23, 7.32, 7.41,
    7.50, 7.59, 7.68, 7.77, 7.87, 7.96, 8.06, 8.16, 8.25, 8.35, 8.45, 8.56,
    8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65, 9.76, 9.88,
)

SERIES: dict[str, tuple[float, ...]] = {
    "E3": _E24[::8],
    "E6": _E24[::4],
    "E12": _E24[::2],
    "E24": _E24,
    "E48": _E192[::4],
    "E96": _E192[::2],
    "E192": _E192,
}

# Every mantissa as an integer count of hundredths, so that values can be
# built as exact decimals: 47 * 10**2 or 47 / 10**10 are correctly rounded,
# whereas 4.7 * 1e3 is not always.
_CENTS: dict[str, tuple[int, ...]] = {
    name: tuple(round(m * 100) for m in mantissas) for name, mantissas in SERIES.items()
}

# Nominal tolerance of each series, finest last (common practice; the same
# pairing is printed beside the series in IEC 60063, from memory).
_SERIES_TOLERANCE = (
    ("E3", 0.40),
    ("E6", 0.20),
    ("E12", 0.10),
    ("E24", 0.05),
    ("E48", 0.02),
    ("E96", 0.01),
    ("E192", 0.005),
)

# Slack for comparing a tolerance parsed from text ("5%" -> 0.05 may carry a
# last-bit error) and for deciding that a value *is* a preferred value.
_TOL_SLACK = 1e-9
_EXACT_REL = 1e-9


def _check_series(series: str) -> tuple[int, ...]:
    try:
        return _CENTS[series]
    except (KeyError, TypeError):
        raise ProjectError(
            f"unknown preferred series {series!r}; expected one of {', '.join(SERIES)}"
        ) from None


def _check_value(value: float) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ProjectError(f"a preferred value needs a number, got {value!r}") from None
    if not (math.isfinite(v) and v > 0.0):
        raise ProjectError(f"a preferred value must be positive and finite, got {value!r}")
    return v


def _scaled(cents: int, exponent: int) -> float:
    """cents/100 * 10**exponent as the correctly rounded float."""
    shift = exponent - 2
    return float(cents * 10**shift) if shift >= 0 else cents / 10**-shift


def series_for_tolerance(tol: float) -> str:
    """The series usually paired with a part tolerance (a fraction, 0.05 = 5 %).

    The coarsest series whose nominal tolerance is not above ``tol``:
    above 20 % E3, 20 % E6, 10 % E12, 5 % E24, 2 % E48, 1 % E96, 0.5 % and
    finer E192 (common practice). A tolerance between two steps takes the
    finer series (3 % -> E48), since the coarser one would leave gaps.
    """
    try:
        t = float(tol)
    except (TypeError, ValueError):
        raise ProjectError(f"a tolerance needs a number, got {tol!r}") from None
    if not (math.isfinite(t) and t >= 0.0):
        raise ProjectError(f"a tolerance must be zero or positive, got {tol!r}")
    if t > 0.20 * (1 + _TOL_SLACK):
        return "E3"
    for name, nominal in _SERIES_TOLERANCE[1:]:
        if t >= nominal * (1 - _TOL_SLACK):
            return name
    return "E192"


def neighbours(value: float, series: str) -> tuple[float, float]:
    """The nearest preferred values at or below and at or above ``value``.

    Both are the same number when ``value`` is itself preferred (to within a
    relative 1e-9, so 4.7e-9 F counts as 4.7 nF).
    """
    cents = _check_series(series)
    v = _check_value(value)
    exponent = math.floor(math.log10(v))
    # log10 can land one decade off near exact powers of ten; looking at the
    # decades either side as well makes the search independent of that.
    candidates = [_scaled(c, e) for e in (exponent - 1, exponent, exponent + 1) for c in cents]
    for c in candidates:
        if abs(c - v) <= _EXACT_REL * v:
            return c, c
    lower = max(c for c in candidates if c < v)
    upper = min(c for c in candidates if c > v)
    return lower, upper


def nearest(value: float, series: str) -> float:
    """The preferred value nearest to ``value`` by ratio (logarithmic distance).

    Between 4.7 and 5.1 the switch-over is at √(4.7·5.1) ≈ 4.896, not at the
    arithmetic mean 4.9: a preferred series is evenly spaced in ratio. A tie
    goes to the higher value.
    """
    lower, upper = neighbours(value, series)
    v = float(value)
    return lower if math.log(v / lower) < math.log(upper / v) else upper


def is_preferred(value: float, series: str, rel: float = 1e-3) -> bool:
    """Whether ``value`` (in any decade) is in ``series`` to within ``rel``."""
    p = nearest(value, series)
    return abs(float(value) / p - 1.0) <= rel


def _coarser_or_equal(series: str) -> list[str]:
    """``series`` and every series with fewer values per decade."""
    count = len(SERIES[series])
    return [name for name, m in SERIES.items() if len(m) <= count]


def preferred_series(value: float, tol: float) -> str | None:
    """The series for ``tol`` if ``value`` is in it or in a coarser series, else None.

    A 1 % part of 4.7 kΩ is reported as E96: 4.7 is not an E96 value but is
    an E24 one, which a 1 % range also stocks (common practice).
    """
    name = series_for_tolerance(tol)
    if any(is_preferred(value, s) for s in _coarser_or_equal(name)):
        return name
    return None
