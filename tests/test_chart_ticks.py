"""rcdoc.note.chart_ticks against the method it replaces: matplotlib's own Ticks.

Each chart is drawn twice, once as the note draws it and once with the tick
shortcuts (minor ticks as lines, major grid lines and tick marks merged per
axis, ticks in the view only) switched off (matplotlib places and draws every tick itself, the
reference); the PNGs must decode to the same pixels. The inputs reach the
extremes a board can produce: a Bode chart over twelve decades and one over
less than a decade (minor ticks 2..9 between major 1, 2, 5), a curve with a
NaN, a sweep on a twin axis, a histogram whose ticks are offsets from a
nominal of 55.9966 nA (a spread of a millionth of its value), values decades
apart on one overview axis.
"""

from __future__ import annotations

import io

import numpy as np
import pytest
from matplotlib.figure import Figure
from PIL import Image

from rcdoc.note import chart_ticks, charts, charts_freq, charts_reuse, charts_time

# Draws every chart twice (shortcuts on and off) to compare pixels.
pytestmark = pytest.mark.slow


def _pixels(png: bytes) -> np.ndarray:
    return np.asarray(Image.open(io.BytesIO(png)).convert("RGB"))


def _both(monkeypatch, draw) -> tuple[np.ndarray, np.ndarray]:
    """(pixels with the shortcuts, pixels with matplotlib's own ticks)."""
    # New figures for both (a kept figure's axes keep the shortcut of an earlier chart).
    monkeypatch.setattr(charts_reuse, "ENABLED", False)
    lean = _pixels(draw())
    with monkeypatch.context() as m:
        m.setattr(charts, "light_minor_ticks", lambda fig: None)
        m.setattr(charts, "light_major_ticks", lambda fig: None)
        m.setattr(charts, "lean_axes", lambda fig, free: None)
        plain = _pixels(draw())
    return lean, plain


def _lowpass(f_lo: float, f_hi: float, corner: float, n: int = 301):
    # First-order low-pass, H = 1 / (1 + j f/fc) (textbook formula).
    f = np.logspace(np.log10(f_lo), np.log10(f_hi), n)
    h = 1.0 / (1.0 + 1j * f / corner)
    return f, 20.0 * np.log10(np.abs(h)), np.degrees(np.angle(h))


@pytest.mark.parametrize("f_lo, f_hi, corner", [
    (1e-2, 1e10, 1e3),        # twelve decades: major ticks thinned by the locator
    (300.0, 2000.0, 900.0),   # under a decade: major 1, 2, 5 and minor in between
    (3.0, 3.0029e6, 2.5e3),   # the view ends just past a minor tick (3 MHz)
])
def test_bode_pixels_equal_matplotlibs_own_ticks(monkeypatch, f_lo, f_hi, corner):
    f, g, p = _lowpass(f_lo, f_hi, corner)
    g[len(g) // 3] = np.nan                 # an unstable sample's missing value
    band = {f"{k}_{s}": (g if k == "gain" else p) + d
            for k in ("gain", "phase") for s, d in (("min", -2), ("max", 2), ("lo", -1), ("hi", 1))}
    lean, plain = _both(monkeypatch, lambda: charts_freq.bode(
        "t-bode", f, g, p, band=band, corner_hz=corner, corner_spread=(0.9 * corner, 1.1 * corner),
        marks=[(corner, -3.0, -45.0)], limits=[{"panel": "gain", "f_lo": None, "f_hi": None,
                                                "min": -1.0, "max": None, "label": "gain"}],
        fmt="png"))
    assert lean.shape == plain.shape
    assert np.array_equal(lean, plain)


def test_sweep_on_twin_axes_and_histogram_offsets_equal_matplotlibs(monkeypatch):
    x = np.logspace(-9, -5, 61)
    curves = [{"y": 1.0 / x * 1e-6, "label": "peak", "unit": "V"},
              {"y": x * 1e4, "label": "power", "unit": "W", "axis": "right"}]
    lean, plain = _both(monkeypatch, lambda: charts_time.sweep(
        "t-sweep", x, curves, xlabel="C", x_unit="F", marker_x=2.2e-7, fmt="png"))
    assert np.array_equal(lean, plain)
    rng = np.random.default_rng(3)
    samples = 55.9966e-9 + 1e-13 * rng.standard_normal(2000)
    lean, plain = _both(monkeypatch, lambda: charts_time.histogram(
        "t-hist", samples, nominal=55.9966e-9, lo=55.9e-9, hi=None, label="Input current",
        unit="A", fmt="png"))
    assert np.array_equal(lean, plain)


def test_overview_with_values_decades_apart_equals_matplotlibs(monkeypatch):
    rows = [{"label": f"s{i}", "status": "pass" if i % 2 else "fail", "kind": "corner",
             "nominal": 10.0 ** i, "min": 0.9 * 10.0 ** i, "max": 1.1 * 10.0 ** i} for i in range(-1, 8)]
    rows.append({"label": "ring", "status": "pass", "kind": "ring", "nominal": 2e6, "min": 1.5e6,
                 "max": 2.5e6})
    lean, plain = _both(monkeypatch, lambda: charts_time.corner_overview("t-over", rows, fmt="png"))
    assert np.array_equal(lean, plain)


def test_phasor_and_time_response_equal_matplotlibs(monkeypatch):
    # Linear axes whose limits are settled only when drawn (equal aspect, data limits).
    # Series RC at its corner, V_R = V_C / j... = 1/sqrt(2) at -45 deg (textbook phasors).
    vr = complex(0.5, 0.5)
    vc = complex(0.5, -0.5)
    lean, plain = _both(monkeypatch, lambda: charts_freq.phasor(
        "t-ph", [{"label": "V_R", "value": vr, "kind": "R"},
                 {"label": "V_C", "value": vc, "kind": "C", "tail": vr},
                 {"label": "V_in", "value": vr + vc, "kind": "source"}],
        reference_label="I", freq_hz=1591.5, angle_deg=-45.0, fmt="png"))
    assert np.array_equal(lean, plain)
    t = np.linspace(0.0, 5e-3, 400)
    y = 1.0 - np.exp(-t / 1e-3)             # a first-order step response (textbook)
    lean, plain = _both(monkeypatch, lambda: charts_time.time_response(
        "t-tr", t, y, band=(0.95 * y, 1.05 * y), window={"t": 3e-3, "lo": 0.95, "hi": 1.05},
        fmt="png"))
    assert np.array_equal(lean, plain)


def test_minor_locations_are_matplotlibs_in_view():
    # The locations drawn are those matplotlib would draw: its minor locator's, minus
    # those on a major tick, inside the view (matplotlib's Axis._update_ticks).
    fig = Figure()
    ax = fig.add_subplot()
    ax.set_xscale("log")
    ax.set_xlim(3.0, 3.0029e6)
    charts._log_axis(ax.xaxis, 3.0, 3.0029e6)
    axis = ax.xaxis
    expected = [t.get_loc() for t in axis._update_ticks() if t in axis.minorTicks]
    got = chart_ticks._view_minor_locs(axis)
    assert np.allclose(got, expected, rtol=1e-12)
    assert got.size == 6 * 8 + 1       # 2..9 in the six decades from 10, and 3 to 9 below
