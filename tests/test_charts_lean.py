"""Lean drawing paths of the note's charts against the matplotlib calls they replace.

- Vertical spans and lines on axes whose ranges the chart sets itself
  (charts._vspan, charts._vline) against matplotlib's Axes.axvspan and
  Axes.axvline, the Bode chart's Monte Carlo bands (charts._fill) against
  Axes.fill_between, and the histogram's bars (charts_time._bars) against
  Axes.stairs: Bode charts with a corner and its spread, with bands broken by
  values that are not finite, histograms with limits inside the axis and off
  scale, the same PNG bytes.
- The corner overview's ranges and markers, one line per status, against one
  line per row (the drawing they replace, kept below): the same bytes for
  passing and failing rows, band-pass rows with two frequencies, values decades
  apart.

The curves are textbook formulas (first-order low-pass H = 1/(1 + j f/fc)); the
samples are seeded normal draws.
"""

from __future__ import annotations

import numpy as np

from rcdoc.note import charts_freq, charts_time
from rcdoc.note import palette as pal
from rcdoc.note.charts import _eng


def _lowpass(fc: float):
    f = np.logspace(np.log10(fc) - 3, np.log10(fc) + 3, 301)
    h = 1.0 / (1.0 + 1j * f / fc)
    return f, 20.0 * np.log10(np.abs(h)), np.degrees(np.angle(h))


def _charts() -> list:
    out = []
    for fc, spread in ((1591.5, (1400.0, 1800.0)), (3.1e6, (2.0e6, 4.4e6))):
        f, g, p = _lowpass(fc)
        band = {f"{k}_{s}": (g if k == "gain" else p) + d for k in ("gain", "phase")
                for s, d in (("min", -2), ("max", 2), ("lo", -1), ("hi", 1))}
        out.append(charts_freq.bode("l-bode", f, g, p, band=band, corner_hz=fc,
                                    corner_spread=spread, fmt="png"))
        # Bands with gaps (no finite percentile where samples were unstable): the
        # polygons split there, as fill_between splits them.
        gappy = {k: v.copy() for k, v in band.items()}
        for k in gappy:
            gappy[k][120:135] = np.nan
        gappy["gain_max"][200] = np.inf
        out.append(charts_freq.bode("l-bode", f, g, p, band=gappy, corner_hz=fc, fmt="png"))
    rng = np.random.default_rng(5)
    x = 1e3 + 3.0 * rng.standard_normal(800)
    for lo, hi in ((995.0, 1004.0), (None, 2e3), (1e2, None), (900.0, 1100.0)):
        out.append(charts_time.histogram("l-hist", x, nominal=1e3, lo=lo, hi=hi, label="R",
                                         unit="ohm", fmt="png"))
    return out


def _axvspan(ax, lo, hi, **style):
    return ax.axvspan(lo, hi, **style)


def _axvline(ax, x, **style):
    return ax.axvline(x, **style)


def _fill_between(ax, x, lo, hi, **style):
    return ax.fill_between(x, lo, hi, **style)


def _stairs(ax, counts, edges, *, fill, linewidth, zorder, facecolor=None, edgecolor=None):
    # As the histogram called it before: the colour as `color`, stairs' own defaults.
    return ax.stairs(counts, edges, fill=fill, color=facecolor if fill else edgecolor,
                     linewidth=linewidth, zorder=zorder)


def test_spans_lines_and_bars_equal_matplotlibs_calls(monkeypatch):
    lean = _charts()
    for module in (charts_freq, charts_time):
        monkeypatch.setattr(module, "_vspan", _axvspan)
        monkeypatch.setattr(module, "_vline", _axvline)
    monkeypatch.setattr(charts_time, "_bars", _stairs)
    monkeypatch.setattr(charts_freq, "_fill", _fill_between)
    plain = _charts()
    assert len(lean) == len(plain) == 8
    for i, (a, b) in enumerate(zip(lean, plain)):
        assert a == b, f"chart {i} differs from matplotlib's spans, lines and stairs"


def _overview_axis_per_row(ax, group, xlabel, limits):
    """The drawing replaced: a line and a marker per frequency of each row."""
    charts_time._grid(ax)
    for i, (_, status, _, freqs) in enumerate(group):
        color = pal.PASS if status == "pass" else pal.FAIL
        for k, (word, nom, f_min, f_max) in enumerate(freqs):
            ax.plot([f_min, f_max], [i, i], color=color, linewidth=3.0, alpha=0.45,
                    solid_capstyle="butt", zorder=2)
            ax.plot([nom], [i], marker=charts_time._STATUS_MARKER[status], markersize=5.5,
                    color=color, markeredgewidth=1.8, linestyle="none", zorder=3)
            left = k == 0 and len(freqs) > 1
            ax.annotate(word + _eng(nom, "Hz"), xy=(f_min if left else f_max, i),
                        xytext=(-6 if left else 6, 0), textcoords="offset points",
                        ha="right" if left else "left", va="center", color=pal.INK, zorder=4)
    x_lo, x_hi = limits
    ax.set_xscale("log")
    ax.set_xlim(x_lo, x_hi)
    charts_time._log_axis(ax.xaxis, x_lo, x_hi)
    ax.grid(False, which="minor")
    ax.set_ylim(len(group) - 0.4, -0.6)
    ax.set_yticks(range(len(group)), [p[0] for p in group])
    ax.tick_params(axis="y", length=0)
    ax.grid(False, axis="y", which="both")
    ax.set_xlabel(xlabel)


def _rows() -> list:
    rows = [{"label": f"S{i}", "status": "fail" if i % 3 == 0 else "pass",
             "nominal": 10.0 ** (i / 2), "min": 0.8 * 10.0 ** (i / 2), "max": 1.3 * 10.0 ** (i / 2)}
            for i in range(12)]
    rows.append({"label": "BP", "status": "pass", "frequencies": [
        {"nominal": 300.0, "min": 250.0, "max": 340.0, "word": "low "},
        {"nominal": 3e3, "min": 2.6e3, "max": 3.5e3, "word": "high "}]})
    rows.append({"label": "Snub", "status": "fail", "kind": "ring", "nominal": 2e7, "min": 1.5e7,
                 "max": 2.2e7})
    return rows


def test_overview_lines_per_status_equal_a_line_per_row(monkeypatch):
    lean = charts_time.corner_overview("l-over", _rows(), fmt="png")
    monkeypatch.setattr(charts_time, "_overview_axis", _overview_axis_per_row)
    assert charts_time.corner_overview("l-over", _rows(), fmt="png") == lean
