"""IEC 60063 preferred series: tables against the `eseries` reference library and the standard."""

from __future__ import annotations

import math

import eseries
import numpy as np
import pytest

from rcdoc.errors import ProjectError
from rcdoc.input.preferred import (
    SERIES,
    is_preferred,
    nearest,
    neighbours,
    preferred_series,
    series_for_tolerance,
)

NAMES = ["E3", "E6", "E12", "E24", "E48", "E96", "E192"]


def _reference_mantissas(name: str) -> list[float]:
    """The series from the `eseries` package (PyPI), as mantissas in [1, 10)."""
    values = eseries.series(getattr(eseries, name))
    digits = len(str(values[0]))          # 10 -> two significant digits, 100 -> three
    return [v / 10 ** (digits - 1) for v in values]


@pytest.mark.parametrize("name", NAMES)
def test_tables_equal_eseries(name):
    # Source: the `eseries` package (general-purpose reference library for IEC 60063).
    ours = SERIES[name]
    ref = _reference_mantissas(name)
    assert len(ours) == len(ref) == int(name[1:])
    assert ours == pytest.approx(ref, rel=1e-12, abs=0)


@pytest.mark.parametrize("name", NAMES)
def test_tables_are_mantissas_in_one_decade_increasing(name):
    # IEC 60063: one decade per series, values rising.
    m = SERIES[name]
    assert all(1.0 <= x < 10.0 for x in m)
    assert all(a < b for a, b in zip(m, m[1:]))


def test_e24_matches_the_standard_listing():
    # IEC 60063 E24.
    listed = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
              33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91]
    assert [round(m * 10) for m in SERIES["E24"]] == listed


def test_e24_departures_from_rounding_formula():
    # IEC 60063: E24 is not round(10**(i/24), 1); it departs at these eight values.
    departures = {m for i, m in enumerate(SERIES["E24"]) if m != round(10 ** (i / 24), 1)}
    assert departures == {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}


def test_e192_single_departure_from_rounding_formula():
    # IEC 60063 / `eseries`: E192 departs from round(10**(i/192), 2) at one value only,
    # 9.20 where the formula gives 9.19 (found by comparing the eseries table with the formula).
    ref = _reference_mantissas("E192")
    ref_departures = [(i, m) for i, m in enumerate(ref) if round(m, 2) != round(10 ** (i / 192), 2)]
    assert ref_departures == [(185, 9.2)]
    ours = [(i, m) for i, m in enumerate(SERIES["E192"]) if m != round(10 ** (i / 192), 2)]
    assert ours == [(185, 9.20)]
    assert round(10 ** (185 / 192), 2) == 9.19


@pytest.mark.parametrize(
    "tol, name",
    [
        (0.40, "E3"), (0.25, "E3"),     # above 20 %: E3 (common practice)
        (0.20, "E6"),                   # common practice: ±20 % with E6
        (0.10, "E12"),
        (5 * 0.01, "E24"),             # as parsed from "5%"
        (0.05, "E24"),
        (0.03, "E48"),                  # between steps: the finer series (common practice)
        (0.02, "E48"),
        (0.01, "E96"),
        (0.005, "E192"),
        (0.001, "E192"),
    ],
)
def test_series_for_tolerance(tol, name):
    # Common practice pairing; see also test_series_for_tolerance_matches_eseries.
    assert series_for_tolerance(tol) == name


@pytest.mark.parametrize("name", NAMES)
def test_series_for_tolerance_matches_eseries(name):
    # Source: `eseries.tolerance` gives each series' nominal tolerance (E3 40 %, E6 20 %, ...).
    assert series_for_tolerance(eseries.tolerance(getattr(eseries, name))) == name


def test_series_for_tolerance_rejects_negative():
    with pytest.raises(ProjectError):
        series_for_tolerance(-0.05)


@pytest.mark.parametrize(
    "value, series, expected",
    [
        (4700.0, "E24", True),
        (4.7e-9, "E12", True),
        (1e6, "E3", True),
        (0.47, "E6", True),
        (4750.0, "E24", False),
        (4750.0, "E96", True),
        (2.7e3, "E192", False),         # 2.7 is E24 but not E192 (IEC 60063: 2.67, 2.71)
        (9.2e-12, "E192", True),
        (9.19e-12, "E192", False),
        (4702.0, "E24", True),          # within the default 1e-3
        (4710.0, "E24", False),
    ],
)
def test_is_preferred(value, series, expected):
    # IEC 60063 values in several decades.
    assert is_preferred(value, series) is expected


def test_neighbours_examples_across_decades():
    # IEC 60063 E24 / E12 / E96 values.
    assert neighbours(4800.0, "E24") == (4700.0, 5100.0)
    assert neighbours(4700.0, "E24") == (4700.0, 4700.0)
    assert neighbours(4.7e-9, "E12") == (4.7e-9, 4.7e-9)
    assert neighbours(9.5e-9, "E12") == (8.2e-9, 1e-8)       # across a decade boundary
    assert neighbours(0.95, "E24") == (0.91, 1.0)
    assert neighbours(1e3, "E6") == (1e3, 1e3)
    assert neighbours(1.001e3, "E6") == (1e3, 1.5e3)
    assert neighbours(0.999e3, "E6") == (680.0, 1e3)
    assert neighbours(12.3e6, "E96") == (12.1e6, 12.4e6)


def test_neighbours_agree_with_eseries_over_many_decades():
    # Source: eseries.find_less_than_or_equal / find_greater_than_or_equal (reference library).
    rng = np.random.default_rng(7)
    values = 10 ** rng.uniform(-12, 8, 300)
    for name in ("E6", "E24", "E96", "E192"):
        key = getattr(eseries, name)
        for v in values:
            lo, hi = neighbours(float(v), name)
            assert lo == pytest.approx(eseries.find_less_than_or_equal(key, v), rel=1e-9)
            assert hi == pytest.approx(eseries.find_greater_than_or_equal(key, v), rel=1e-9)


def test_nearest_is_logarithmic():
    # Preferred series are geometric (IEC 60063), so "nearest" is by ratio:
    # between 4.7 and 5.1 the switch-over is sqrt(4.7 * 5.1) = 4.8959..., not 4.9.
    assert nearest(4898.0, "E24") == 5100.0
    assert nearest(4894.0, "E24") == 4700.0
    assert nearest(9.6e-7, "E12") == 1e-6
    assert nearest(3.4e-3, "E6") == 3.3e-3
    assert nearest(1.22e5, "E24") == 1.2e5


def test_nearest_agrees_with_eseries_away_from_the_means():
    # Source: eseries.find_nearest (reference library; it measures linear distance, so
    # skip values between the geometric and arithmetic means of the two neighbours).
    rng = np.random.default_rng(11)
    checked = 0
    for v in 10 ** rng.uniform(-9, 6, 400):
        lo, hi = neighbours(float(v), "E24")
        if min(math.sqrt(lo * hi), (lo + hi) / 2) <= v <= max(math.sqrt(lo * hi), (lo + hi) / 2):
            continue
        checked += 1
        assert nearest(float(v), "E24") == pytest.approx(eseries.find_nearest(eseries.E24, v), rel=1e-9)
    assert checked > 350


@pytest.mark.parametrize(
    "value, tol, expected",
    [
        (4700.0, 0.01, "E96"),   # E24 value with a 1 % part: coarser series counts (project-format JSON example)
        (4750.0, 0.01, "E96"),
        (4750.0, 0.05, None),    # E96 value, but a 5 % part belongs to E24
        (2.2e-9, 0.20, "E6"),
        (1.5e3, 0.10, "E12"),
        (1.6e3, 0.10, None),     # E24 value, not in E12
        (9.2e3, 0.005, "E192"),
        (3.3e3, 0.005, "E192"),  # E24 value, not in E192
        (3.14e3, 0.01, None),
    ],
)
def test_preferred_series(value, tol, expected):
    # IEC 60063 membership with the common-practice tolerance pairing.
    assert preferred_series(value, tol) == expected


@pytest.mark.parametrize("bad", [0.0, -1.0, math.inf, math.nan])
def test_bad_values_raise_project_error(bad):
    with pytest.raises(ProjectError):
        neighbours(bad, "E24")


def test_unknown_series_raises_project_error():
    with pytest.raises(ProjectError):
        nearest(1.0, "E25")
