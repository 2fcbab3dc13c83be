"""Charts over time and samples: time response, histogram, corner overview, sweep.

Drawn from arrays the engine computed, with the shared figure life cycle and
formatting of rcdoc.note.charts (deterministic SVG or PNG).
"""

from __future__ import annotations

import math
import re
from collections import Counter
from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib import ticker
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, StepPatch

from rcdoc.kinds.recipes_base import shortened
from rcdoc.note import palette as pal
from rcdoc.note.charts import (_UNSCALED_UNITS, HALF_WIDTH_IN, _arr, _AxisEngFormatter, _check_fig_id,
                               _eng, _finish, _finite, _grid, _legend, _log_axis, _new_figure,
                               _OffsetFormatter, _OffsetLocator, _same_shape, _styled,
                               _tick_formatter, _unit_symbol, _vline, _vspan, WIDTH_IN)
from rcdoc.note.charts_reuse import reused_figure
from rcdoc.note.overview import OVERVIEW_ROWS, overview_slices


# ---------------------------------------------------------------------------
# Time response

_ROLE_STYLE = {
    "without": (pal.WITHOUT, 1.1, "-"),
    "with": (pal.WITH, 1.4, "-"),
    "input": (pal.INPUT, 0.9, (0, (3, 1.5))),
}


def time_response(fig_id: str, t_s, nominal, *, band=None, window: Mapping | None = None,
                  series: Sequence[Mapping] = (), ylabel: str = "Output [V]", title: str = "",
                  nominal_label: str = "nominal", fmt: str = "svg") -> str | bytes:
    """A waveform against time with its min-max band, settling window and extra curves.

    `band` = (lo, hi) arrays on `t_s`; `window` = {"t", "lo", "hi", "label"}:
    the tolerance strip [lo, hi] and a line at the settling time t; `series` =
    [{"t", "y", "label", "role": "without"|"with"|"input"}].
    """
    _check_fig_id(fig_id)
    t = _arr(t_s, "t_s")
    y = _same_shape(t, _arr(nominal, "nominal"), "nominal")
    curves = []
    for i, s in enumerate(series):
        role = s.get("role")
        if role not in _ROLE_STYLE:
            raise ValueError(f"series[{i}].role must be one of {sorted(_ROLE_STYLE)}, got {role!r}")
        st = _arr(s["t"], f"series[{i}].t")
        curves.append((st, _same_shape(st, _arr(s["y"], f"series[{i}].y"), f"series[{i}].y"),
                       str(s["label"]), role))

    with _styled(fig_id):
        fig, (ax,) = reused_figure("time_response", WIDTH_IN, 3.3, lambda fig: [fig.add_subplot()])
        _grid(ax)
        handles = []
        if window is not None:
            w_t, w_lo, w_hi = float(window["t"]), float(window["lo"]), float(window["hi"])
            ax.axhspan(w_lo, w_hi, color=pal.ALLOWED, linewidth=0, zorder=0.5)
            ax.axvline(w_t, color=pal.PASS, linewidth=0.9, linestyle=(0, (4, 2)), zorder=2)
            handles.append(Patch(color=pal.ALLOWED, label=str(window.get("label", "tolerance"))))
            handles.append(Line2D([], [], color=pal.PASS, linewidth=0.9, linestyle=(0, (4, 2)),
                                  label=f"settled at {_eng(w_t, 's')}"))
        if band is not None:
            lo = _same_shape(t, _arr(band[0], "band[0]"), "band[0]")
            hi = _same_shape(t, _arr(band[1], "band[1]"), "band[1]")
            ax.fill_between(t, lo, hi, color=pal.BAND_OUTER, linewidth=0, zorder=1)
            band_at = len(handles)
        for st, sy, label, role in curves:
            color, width, style = _ROLE_STYLE[role]
            ax.plot(st, sy, color=color, linewidth=width, linestyle=style, zorder=2.5)
            if label:           # an unlabelled curve continues the one before it in the legend
                handles.append(Line2D([], [], color=color, linewidth=width, linestyle=style, label=label))
        ax.plot(t, y, color=pal.NOMINAL, linewidth=1.5, zorder=3)
        if band is not None and _visible(ax, lo, hi):
            handles.insert(band_at, Patch(color=pal.BAND_OUTER, label="Monte Carlo min–max"))
        handles.insert(0, Line2D([], [], color=pal.NOMINAL, linewidth=1.5, label=nominal_label))

        t_all = _finite(t, *(c[0] for c in curves))
        if t_all.size and t_all.max() > t_all.min():
            ax.set_xlim(float(t_all.min()), float(t_all.max()))
        ax.xaxis.set_major_formatter(_AxisEngFormatter())
        unit = re.search(r"\[([^\]]*)\]\s*$", ylabel)
        ax.yaxis.set_major_formatter(_tick_formatter(unit.group(1) if unit else ""))
        ax.set_xlabel("Time [s]")
        ax.set_ylabel(ylabel)
        _legend(fig, handles)
        return _finish(fig, fig_id, title, fmt)


def _visible(ax, lo: np.ndarray, hi: np.ndarray) -> bool:
    """True when a band is at least 1 % of the axis' height somewhere: a thinner one cannot
    be seen and gets no legend entry."""
    width = _finite(hi - lo)
    y_lo, y_hi = ax.get_ylim()
    return bool(width.size and width.max() >= 0.01 * (y_hi - y_lo))


# ---------------------------------------------------------------------------
# Histogram of Monte Carlo samples


def histogram(fig_id: str, samples, *, nominal: float, lo: float | None = None, hi: float | None = None,
              label: str, unit: str, title: str = "", fmt: str = "svg") -> str | bytes:
    """Histogram of Monte Carlo samples with the nominal and the limits [lo, hi].

    Drawn at half the text width (two histograms share a row of the note), so
    its text prints at its nominal size. The axis is fitted to the samples and
    the nominal; a limit far off that range is not drawn to scale but shown as
    an arrow at the axis edge with its value. All samples in one value: one bar.
    """
    _check_fig_id(fig_id)
    x = _arr(samples, "samples")
    x = x[np.isfinite(x)]
    if x.size == 0:
        raise ValueError("samples: no finite values")
    nominal = float(nominal)

    with _styled(fig_id):
        fig, (ax,) = reused_figure("histogram", HALF_WIDTH_IN, 2.5, lambda fig: [fig.add_subplot()])
        ax.grid(True, axis="y", color=pal.GRID, linewidth=0.6)
        x_min, x_max = float(x.min()), float(x.max())
        data_lo, data_hi = min(x_min, nominal), max(x_max, nominal)
        # A degenerate spread (every sample within a part per million) is one bar.
        scale = max(abs(data_lo), abs(data_hi), 1e-300)
        single = data_hi - data_lo <= 1e-6 * scale
        if single:
            half = 0.02 * scale or 1e-12
            data_lo, data_hi = data_lo - 10 * half, data_hi + 10 * half
            edges = np.array([x_min - half, x_min + half])
        else:
            edges = np.histogram_bin_edges(x, bins="auto")
            if edges.size > 41:
                edges = np.linspace(x_min, x_max, 41)
        counts, edges = np.histogram(x, bins=edges)
        _bars(ax, counts, edges, fill=True, facecolor=pal.BAND_INNER, linewidth=0, zorder=2)
        _bars(ax, counts, edges, fill=False, edgecolor=pal.NOMINAL, linewidth=0.7, zorder=2.1)
        handles = [Patch(facecolor=pal.BAND_INNER, edgecolor=pal.NOMINAL, linewidth=0.7,
                         label=f"{x.size} samples" + (", all one value" if single else ""))]
        _vline(ax, nominal, color=pal.INK, linewidth=1.4, zorder=3)
        handles.append(Line2D([], [], color=pal.INK, linewidth=1.4, label=f"nominal {_eng(nominal, unit)}"))
        left, right = _hist_range(data_lo, data_hi, lo, hi)
        ax.set_xlim(left, right)
        given = [(float(v), below) for v, below in ((lo, True), (hi, False)) if v is not None]
        arrows = sum(not left <= v <= right for v, _ in given)
        # Two off-scale limits: their arrows on two levels above the bars, not on one line.
        top = max(int(counts.max()), 1) * (1.5 if arrows > 1 else 1.25)
        ax.set_ylim(0, top)
        outside = 0
        level = 0.92
        for limit, below in given:
            outside += int(np.count_nonzero(x < limit if below else x > limit))
            if _hist_limit(ax, limit, below, left, right, level * top, unit):
                level -= 0.14
        if lo is not None or hi is not None:
            handles.append(Patch(facecolor=pal.LIMIT, edgecolor=pal.LIMIT_EDGE, linewidth=0.8,
                                 label=f"outside limit: {outside} of {x.size}"))

        _hist_xaxis(ax, label, unit, nominal, single)
        ax.set_ylabel("Samples per bin")
        _legend(fig, handles, max_cols=2)
        return _finish(fig, fig_id, title, fmt)


def _bars(ax, counts, edges, **style) -> None:
    """The patch ``ax.stairs`` adds (baseline 0, the colour given as face or edge colour),
    without its data limits: the histogram sets both ranges itself, and the limits of a
    step outline cost a curve per bin to work out."""
    ax.add_artist(StepPatch(counts, edges, baseline=0, orientation="vertical", **style))


def _hist_xaxis(ax, label: str, unit: str, nominal: float, single: bool) -> None:
    """Few ticks with short labels (the chart is half the text width), and the axis label.

    A spread that is a tiny fraction of the values (55.9966 nA ± 0.1 pA) would need
    six digits per tick: its ticks are offsets from the nominal instead.
    """
    ax.xaxis.set_major_locator(ticker.MaxNLocator(4))
    left, right = ax.get_xlim()
    symbol = _unit_symbol(unit)
    if not single and unit not in _UNSCALED_UNITS and \
            (right - left) < 1e-3 * max(abs(left), abs(right)):
        ax.xaxis.set_major_locator(_OffsetLocator(nominal))
        ax.xaxis.set_major_formatter(_OffsetFormatter(nominal))
        label = f"{label} − nominal"
    else:
        ax.xaxis.set_major_formatter(_tick_formatter(unit))
    ax.set_xlabel(f"{label} [{symbol}]" if symbol else label)


def _hist_range(data_lo: float, data_hi: float, lo, hi) -> tuple[float, float]:
    """X range: the data and nominal, stretched to a limit only if it is near (within one
    span); a farther limit stays off scale and is drawn as an arrow at the edge."""
    span = data_hi - data_lo
    left, right = data_lo - 0.15 * span, data_hi + 0.15 * span
    for limit in (lo, hi):
        if limit is None:
            continue
        limit = float(limit)
        if data_lo - span <= limit <= data_hi + span:
            left, right = min(left, limit - 0.1 * span), max(right, limit + 0.1 * span)
    return left, right


def _hist_limit(ax, limit: float, below: bool, left: float, right: float, y: float, unit: str) -> bool:
    """Shade the forbidden side of one limit, or point at it at height `y` when it is off
    scale; True when an arrow was drawn."""
    if left <= limit <= right:
        a, b = (left, limit) if below else (limit, right)
        _vspan(ax, a, b, facecolor=pal.LIMIT, edgecolor="none", zorder=0.5)
        _vline(ax, limit, color=pal.LIMIT_EDGE, linewidth=1.2, zorder=2.5)
        return False
    off_left = limit < left
    if off_left != below:
        # The whole visible axis is on the forbidden side: shade it.
        _vspan(ax, left, right, facecolor=pal.LIMIT, edgecolor="none", zorder=0.5)
    edge = left if off_left else right
    ax.annotate(f"limit {_eng(limit, unit)}", xy=(edge, y),
                xytext=(20 if off_left else -20, 0), textcoords="offset points",
                ha="left" if off_left else "right", va="center", color=pal.INK, zorder=6,
                arrowprops={"arrowstyle": "-|>", "color": pal.LIMIT_EDGE, "linewidth": 1.2,
                            "shrinkA": 0, "shrinkB": 0})
    return True


# ---------------------------------------------------------------------------
# Characteristic frequencies of all stages: corners, notches, ring frequencies


_STATUS_MARKER = {"pass": "o", "fail": "X"}

# Kinds of frequency: which axis a row goes on, and the word before its value.
_FREQ_KINDS = {"corner": ("filter", ""), "natural": ("filter", "f0 "),
               "notch": ("filter", "notch "), "ring": ("ring", "")}
_AXIS_LABEL = {"filter": "Corner and notch frequency [Hz]",
               "ring": "Snubber ring frequency [Hz]"}


def _overview_rows(rows: Sequence[Mapping]) -> list[tuple]:
    """Checked rows: (label, status, axis, [(word, nominal, min, max), ...])."""
    parsed = []
    for i, row in enumerate(rows):
        status = row.get("status")
        if status not in ("pass", "fail"):
            raise ValueError(f"rows[{i}].status must be 'pass' or 'fail', got {status!r}")
        kind = row.get("kind", "corner")
        if kind not in _FREQ_KINDS:
            raise ValueError(f"rows[{i}].kind must be one of {sorted(_FREQ_KINDS)}, got {kind!r}")
        axis, word = _FREQ_KINDS[kind]
        freqs = []
        for fr in row.get("frequencies", [row]):
            nom = float(fr["nominal"])
            f_min = float(fr["min"]) if fr.get("min") is not None else nom
            f_max = float(fr["max"]) if fr.get("max") is not None else nom
            if min(nom, f_min, f_max) <= 0 or not all(map(math.isfinite, (nom, f_min, f_max))):
                raise ValueError(f"rows[{i}]: frequencies must be positive and finite")
            freqs.append((str(fr.get("word", word)), nom, f_min, f_max))
        if not freqs:
            raise ValueError(f"rows[{i}]: no frequency")
        parsed.append((str(row["label"]), status, axis, sorted(freqs, key=lambda q: q[1])))
    if not parsed:
        raise ValueError("rows: need at least one stage")
    return parsed


def corner_overview(fig_id: str, rows: Sequence[Mapping], title: str = "", *, fmt: str = "svg") -> str | bytes:
    """One row per stage, nominal and min-max of its characteristic frequencies, by status.

    A row is {"label", "status": "pass"|"fail", "kind": "corner"|"natural"|"notch"|"ring",
    "nominal", "min", "max"}, or with "frequencies": [{"nominal", "min", "max",
    "word"?}, ...] in place of the one frequency (both corners of a band-pass).
    Corners, natural and notch frequencies share one log axis; snubber ring
    frequencies get their own, below it. Pass and fail differ in marker shape
    (circle, cross) as well as colour.
    """
    _check_fig_id(fig_id)
    parsed = _overview_rows(rows)

    with _styled(fig_id):
        return _finish(_overview_figure(parsed), fig_id, title, fmt)


def corner_overview_pages(fig_id: str, rows: Sequence[Mapping], *, per_chart: int = OVERVIEW_ROWS,
                          fmt: str = "png", skip=()) -> list:
    """corner_overview in charts of at most ``per_chart`` rows each (the rows in
    order, the charts as even as can be), so that each fits a page: a board of 40
    stages gives two charts of 20. Every chart of an axis spans the frequencies of
    all the rows on that axis, so the charts read as one. The charts numbered in
    ``skip`` are not drawn (None in their place: the caller has them already)."""
    _check_fig_id(fig_id)
    parsed = _overview_rows(rows)
    pieces = overview_slices(len(parsed), per_chart)
    limits = {axis: _overview_limits([p for p in parsed if p[2] == axis])
              for axis in _AXIS_LABEL if any(p[2] == axis for p in parsed)}
    charts = []
    for k, piece in enumerate(pieces):
        if k in skip:
            charts.append(None)
            continue
        piece_id = fig_id if len(pieces) == 1 else f"{fig_id}-{k + 1}"
        with _styled(piece_id):
            charts.append(_finish(_overview_figure(parsed[piece], limits), piece_id, "", fmt))
    return charts


def _overview_limits(group: list) -> tuple[float, float]:
    """The log axis of a group of rows: from half a decade below its lowest to half
    a decade above its highest frequency, rounded out to whole decades (single
    stages stay readable, values have room)."""
    lo = min(q[2] for p in group for q in p[3])
    hi = max(q[3] for p in group for q in p[3])
    return 10.0 ** math.floor(math.log10(lo) - 0.5), 10.0 ** math.ceil(math.log10(hi) + 0.5)


def _overview_figure(parsed: list, limits: Mapping | None = None):
    """The figure of corner_overview from its checked rows (inside the chart style);
    ``limits``: each axis's (low, high) frequency, else the rows' own."""
    groups = [(axis, [p for p in parsed if p[2] == axis]) for axis in _AXIS_LABEL]
    groups = [(axis, g) for axis, g in groups if g]
    fig = _new_figure(0.75 + 0.45 * len(groups) + 0.3 * len(parsed))
    axes = fig.subplots(len(groups), 1, squeeze=False,
                        height_ratios=[len(g) + 1.5 for _, g in groups])[:, 0]
    for ax, (axis, group) in zip(axes, groups):
        _overview_axis(ax, group, _AXIS_LABEL[axis],
                       (limits or {}).get(axis) or _overview_limits(group))
    handles = []
    for status, color in (("pass", pal.PASS), ("fail", pal.FAIL)):
        if any(p[1] == status for p in parsed):
            handles.append(Line2D([], [], color=color, marker=_STATUS_MARKER[status], markersize=5.5,
                                  markeredgewidth=1.8, linewidth=3.0,
                                  alpha=1.0, label=f"{status}: nominal and min–max"))
    _legend(fig, handles)
    return fig


#: The longest row label of the summary chart, in characters: its left margin grows
#: with the longest label, and a 64-character stage id left the plot a sliver.
_LABEL_CHARS = 24


def _row_labels(labels: Sequence[str], limit: int = _LABEL_CHARS) -> list[str]:
    """The summary chart's row labels, each at most ``limit`` characters: a longer
    one keeps its start and its end around an ellipsis (stage ids differ at
    either end: ``sensor-input-…-channel-2``); where two would then read the
    same, both stay whole."""
    short = [shortened(s, limit) for s in labels]
    seen = Counter(short)
    return [s if seen[s] == 1 else full for s, full in zip(short, labels)]


def _overview_axis(ax, group: list, xlabel: str, limits: tuple[float, float]) -> None:
    """The rows of one kind of frequency on a log axis of their own, from
    ``limits[0]`` to ``limits[1]`` Hz."""
    _grid(ax)
    # The ranges and the nominal markers of a status are one line each (the pieces apart,
    # NaN between them), not one per row: rows do not overlap, so the pixels are those of
    # a line per row, for a fraction of the drawing time on a board of many stages.
    ranges: dict = {"pass": ([], []), "fail": ([], [])}
    nominals: dict = {"pass": ([], []), "fail": ([], [])}
    for i, (_, status, _, freqs) in enumerate(group):
        for k, (word, nom, f_min, f_max) in enumerate(freqs):
            ranges[status][0].extend((f_min, f_max, np.nan))
            ranges[status][1].extend((i, i, np.nan))
            nominals[status][0].append(nom)
            nominals[status][1].append(i)
            # The lower of two frequencies is labelled on its left, the others on their right.
            left = k == 0 and len(freqs) > 1
            ax.annotate(word + _eng(nom, "Hz"), xy=(f_min if left else f_max, i),
                        xytext=(-6 if left else 6, 0), textcoords="offset points",
                        ha="right" if left else "left", va="center", color=pal.INK, zorder=4)
    for status in ("pass", "fail"):
        if not nominals[status][0]:
            continue
        color = pal.PASS if status == "pass" else pal.FAIL
        ax.plot(*ranges[status], color=color, linewidth=3.0, alpha=0.45, solid_capstyle="butt",
                zorder=2)
        # Shape as well as colour: a circle passes, a cross fails (readable in grey print).
        ax.plot(*nominals[status], marker=_STATUS_MARKER[status], markersize=5.5, color=color,
                markeredgewidth=1.8, linestyle="none", zorder=3)
    x_lo, x_hi = limits
    ax.set_xscale("log")
    ax.set_xlim(x_lo, x_hi)
    _log_axis(ax.xaxis, x_lo, x_hi)
    ax.grid(False, which="minor")
    ax.set_ylim(len(group) - 0.4, -0.6)
    ax.set_yticks(range(len(group)), _row_labels([p[0] for p in group]))
    ax.tick_params(axis="y", length=0)
    ax.grid(False, axis="y", which="both")
    ax.set_xlabel(xlabel)


# ---------------------------------------------------------------------------
# General x-y sweep


def _axis_label(curves: list) -> str:
    units = {c[2] for c in curves}
    if len(units) == 1:
        unit = units.pop()
        names = " / ".join(dict.fromkeys(c[1] for c in curves))
        return f"{names} [{unit}]" if unit else names
    return ", ".join(f"{c[1]} [{c[2]}]" if c[2] else c[1] for c in curves)


def _clip_to_band(ax, ys: list, lo: float, hi: float) -> None:
    """Clip the left axis to 4 band widths around the allowed band when the curves run far
    beyond it (a ±½ LSB band is read on a ±4 LSB axis, not a ±400 LSB one)."""
    width = hi - lo
    data = _finite(*ys)
    if not (width > 0 and data.size):
        return
    y_lo, y_hi = lo - 3.5 * width, hi + 3.5 * width
    if data.min() < y_lo or data.max() > y_hi:
        ax.set_ylim(y_lo, y_hi)
        ax.annotate("axis clipped: curves continue off scale", xy=(0.99, 0.98),
                    xycoords="axes fraction", ha="right", va="top", color=pal.MUTED, zorder=6)


def sweep(fig_id: str, x, curves: Sequence[Mapping], *, xlabel: str, x_unit: str, logx: bool = True,
          marker_x: float | None = None, title: str = "", fmt: str = "svg",
          markers: Sequence[Mapping] = (), allowed: Mapping | None = None) -> str | bytes:
    """Curves against one swept quantity, on a left and optionally a right y axis.

    `curves` = [{"y", "label", "unit", "axis": "left"|"right"}]; `marker_x`
    draws a vertical line at the chosen value, `markers` = [{"x", "label"}]
    further ones; `allowed` = {"lo", "hi", "label"} shades a band on the left axis.
    """
    _check_fig_id(fig_id)
    xs = _arr(x, "x")
    parsed = []
    for i, c in enumerate(curves):
        side = c.get("axis", "left")
        if side not in ("left", "right"):
            raise ValueError(f"curves[{i}].axis must be 'left' or 'right', got {side!r}")
        parsed.append((_same_shape(xs, _arr(c["y"], f"curves[{i}].y"), f"curves[{i}].y"),
                       str(c["label"]), str(c.get("unit", "")), side))
    if not parsed:
        raise ValueError("curves: need at least one curve")
    xpos = xs[np.isfinite(xs) & (xs > 0)] if logx else xs[np.isfinite(xs)]
    if xpos.size < 2:
        raise ValueError("x: need at least two usable values")

    with _styled(fig_id):
        fig = _new_figure(3.2)
        ax = fig.add_subplot()
        _grid(ax)
        left = [c for c in parsed if c[3] == "left"]
        right = [c for c in parsed if c[3] == "right"]
        ax_r = None
        if right:
            ax_r = ax.twinx()
            ax_r.spines["right"].set_visible(True)
            ax_r.grid(False)
        x_lo, x_hi = float(xpos.min()), float(xpos.max())
        if logx:
            ax.set_xscale("log")
            ax.set_xlim(x_lo, x_hi)
            _log_axis(ax.xaxis, x_lo, x_hi)
        else:
            ax.set_xlim(x_lo, x_hi)
            ax.xaxis.set_major_formatter(_tick_formatter(x_unit))
        handles = []
        colors = iter(pal.SERIES_CYCLE * (1 + len(parsed) // len(pal.SERIES_CYCLE)))
        for y, label, unit, side in parsed:
            color = next(colors)
            target, style = (ax, "-") if side == "left" else (ax_r, (0, (5, 2)))
            target.plot(xs, y, color=color, linewidth=1.5, linestyle=style, zorder=3)
            axis_note = "" if ax_r is None else (" (left axis)" if side == "left" else " (right axis)")
            handles.append(Line2D([], [], color=color, linewidth=1.5, linestyle=style,
                                  label=f"{label}{axis_note}"))
        if left:
            ax.set_ylabel(_axis_label(left))
            ax.yaxis.set_major_formatter(_tick_formatter(left[0][2] if len({c[2] for c in left}) == 1 else ""))
        if ax_r is not None:
            ax_r.set_ylabel(_axis_label(right))
            ax_r.yaxis.set_major_formatter(_tick_formatter(right[0][2] if len({c[2] for c in right}) == 1 else ""))
        if allowed is not None:
            ax.axhspan(float(allowed["lo"]), float(allowed["hi"]), color=pal.ALLOWED, linewidth=0,
                       zorder=0.5)
            handles.append(Patch(color=pal.ALLOWED, label=str(allowed["label"])))
            _clip_to_band(ax, [c[0] for c in left], float(allowed["lo"]), float(allowed["hi"]))
        for mk in markers:
            if np.isfinite(mk["x"]):
                ax.axvline(float(mk["x"]), color=pal.PASS, linewidth=0.9, linestyle=(0, (4, 2)),
                           zorder=4)
                handles.append(Line2D([], [], color=pal.PASS, linewidth=0.9,
                                      linestyle=(0, (4, 2)), label=str(mk["label"])))
        if marker_x is not None:
            ax.axvline(float(marker_x), color=pal.INK, linewidth=0.9, linestyle=(0, (1.5, 1.5)), zorder=4)
            handles.append(Line2D([], [], color=pal.INK, linewidth=0.9, linestyle=(0, (1.5, 1.5)),
                                  label=f"chosen {_eng(marker_x, x_unit)}"))
        ax.set_xlabel(f"{xlabel} [{x_unit}]" if x_unit else xlabel)
        _legend(fig, handles)
        return _finish(fig, fig_id, title, fmt)
