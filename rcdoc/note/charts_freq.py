"""Frequency-domain charts of a design note: the Bode chart and the phasor diagram.

Drawn from arrays the engine computed, with the shared figure life cycle and
formatting of rcdoc.note.charts (deterministic SVG or PNG).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib import ticker
from matplotlib.lines import Line2D
from matplotlib.patches import Arc, FancyArrowPatch, Patch, Rectangle

from rcdoc.note import palette as pal
from rcdoc.note.charts import (_BBOX, _arr, _AxisEngFormatter, _check_fig_id, _eng, _eng_range,
                               _fill, _finish, _finite, _grid, _legend, _log_axis, _log_fraction,
                               _num, _same_shape, _styled, _vline, _vspan, WIDTH_IN)
from rcdoc.note.charts_reuse import reused_figure


# ---------------------------------------------------------------------------
# Bode chart


def _phase_step(span: float) -> float:
    for step in (5.0, 10.0, 15.0, 45.0, 90.0, 180.0):
        if span / step <= 6.0:
            return step
    return 360.0


def bode(fig_id: str, freqs_hz, gain_db, phase_deg, *, band: Mapping | None = None,
         corner_hz: float | None = None, corner_spread: Sequence[float] | None = None,
         marks: Sequence = (), limits: Sequence[Mapping] = (), title: str = "", fmt: str = "svg") -> str | bytes:
    """Magnitude (top) and phase (bottom) against a shared log-frequency axis.

    `band` holds arrays "gain_min", "gain_max", "gain_lo", "gain_hi",
    "phase_min", "phase_max", "phase_lo", "phase_hi" (min-max and a central
    percentile band), optionally "outer_label" and "inner_label" for the
    legend. `marks` are (freq_hz, gain_db, phase_deg) points to annotate.
    `limits` are forbidden regions: {"panel": "gain"|"phase"|"corner",
    "f_lo", "f_hi", "min", "max", "label"}; `_draw_limit` says how each is
    drawn.
    """
    f, g, p, fpos, bands, limits = _bode_inputs(fig_id, freqs_hz, gain_db, phase_deg, band, limits)
    with _styled(fig_id):
        fig, (ax_g, ax_p) = reused_figure(
            "bode", WIDTH_IN, 4.9, lambda fig: fig.subplots(2, 1, sharex=True, height_ratios=[3, 2]))
        f_lo, f_hi = float(fpos.min()), float(fpos.max())
        ax_g.set_xscale("log")
        ax_g.set_xlim(f_lo, f_hi)
        _log_axis(ax_g.xaxis, f_lo, f_hi)
        for ax in (ax_g, ax_p):
            _grid(ax)
        g_peak = _bode_ranges(ax_g, ax_p, g, p, bands, limits)

        handles: list = []
        if bands:
            outer = band.get("outer_label", "Monte Carlo min–max")
            inner = band.get("inner_label", "Monte Carlo 5–95 %")
            _fill(ax_g, f, bands["gain_min"], bands["gain_max"], color=pal.BAND_OUTER, linewidth=0, zorder=1)
            _fill(ax_g, f, bands["gain_lo"], bands["gain_hi"], color=pal.BAND_INNER, linewidth=0, zorder=1.1)
            _fill(ax_p, f, bands["phase_min"], bands["phase_max"], color=pal.BAND_OUTER, linewidth=0, zorder=1)
            _fill(ax_p, f, bands["phase_lo"], bands["phase_hi"], color=pal.BAND_INNER, linewidth=0, zorder=1.1)
            # A band thinner than about a point on both panels cannot be seen: no legend entry.
            for key, color, text in (("min", pal.BAND_OUTER, outer), ("lo", pal.BAND_INNER, inner)):
                if _visible_band(ax_g, bands, "gain", key) or _visible_band(ax_p, bands, "phase", key):
                    handles.append(Patch(color=color, label=text))
        ax_g.plot(f, g, color=pal.NOMINAL, linewidth=1.5, zorder=3)
        ax_p.plot(f, p, color=pal.NOMINAL, linewidth=1.5, zorder=3)
        handles.insert(0, Line2D([], [], color=pal.NOMINAL, linewidth=1.5, label="nominal"))

        if corner_hz is not None:
            handles.append(_bode_corner(ax_g, ax_p, float(corner_hz), f, g, fpos))
        if corner_spread is not None:
            lo, hi = (float(v) for v in corner_spread)
            for ax in (ax_g, ax_p):
                _vspan(ax, lo, hi, color=pal.SPREAD, linewidth=0, zorder=0.5)
            handles.append(Patch(color=pal.SPREAD, linewidth=0,
                                 label=f"corner spread {_eng_range(lo, hi, 'Hz')}"))

        drew_limit = False
        finite_g = g[np.isfinite(g)]
        passband_left = bool(finite_g.size == 0 or finite_g[0] >= finite_g[-1])
        for lim in limits:
            drew_limit |= _draw_limit(ax_g, ax_p, lim, g_peak, passband_left)
        if drew_limit:
            handles.append(Patch(facecolor=pal.LIMIT, edgecolor=pal.LIMIT_EDGE, linewidth=0.8,
                                 label="forbidden region"))
        if len(marks):
            handles.append(_bode_marks(ax_g, ax_p, marks, f, g, p))

        ax_g.set_ylabel("Gain [dB]")
        ax_p.set_ylabel("Phase [°]")
        ax_p.set_xlabel("Frequency [Hz]")
        ax_g.tick_params(labelbottom=False)
        fig.align_ylabels([ax_g, ax_p])
        _legend(fig, handles)
        return _finish(fig, fig_id, title, fmt)


def _visible_band(ax, bands, panel: str, key: str) -> bool:
    """True when the band (min-max or lo-hi) is at least 1 % of the panel's height somewhere."""
    upper = {"min": "max", "lo": "hi"}[key]
    width = _finite(bands[f"{panel}_{upper}"] - bands[f"{panel}_{key}"])
    y_lo, y_hi = ax.get_ylim()
    return bool(width.size and width.max() >= 0.01 * (y_hi - y_lo))


def _bode_inputs(fig_id, freqs_hz, gain_db, phase_deg, band, limits):
    """Checked arrays of a Bode chart: f, gain, phase, positive f, bands, limits."""
    _check_fig_id(fig_id)
    f = _arr(freqs_hz, "freqs_hz")
    g = _same_shape(f, _arr(gain_db, "gain_db"), "gain_db")
    p = _same_shape(f, _arr(phase_deg, "phase_deg"), "phase_deg")
    fpos = f[np.isfinite(f) & (f > 0)]
    if fpos.size < 2:
        raise ValueError("freqs_hz: need at least two positive frequencies")
    if not np.isfinite(g).any():
        raise ValueError("gain_db: no finite values")
    bands = {}
    if band is not None:
        for key in ("gain_min", "gain_max", "gain_lo", "gain_hi",
                    "phase_min", "phase_max", "phase_lo", "phase_hi"):
            bands[key] = _same_shape(f, _arr(band[key], f"band[{key!r}]"), f"band[{key!r}]")
    limits = [dict(lim) for lim in limits]
    for lim in limits:
        if lim.get("panel") not in ("gain", "phase", "corner"):
            raise ValueError(f"limit panel must be 'gain', 'phase' or 'corner', got {lim.get('panel')!r}")
    return f, g, p, fpos, bands, limits


def _bode_ranges(ax_g, ax_p, g, p, bands, limits) -> float:
    """Set both y ranges (forbidden regions are filled up to the axis edges);
    returns the gain's peak."""
    g_vals = _finite(g, *(bands[k] for k in bands if k.startswith("gain")))
    g_peak = float(np.max(_finite(g)))
    g_lims = [v for lim in limits if lim["panel"] == "gain"
              for v in (lim.get("min"), lim.get("max")) if v is not None]
    # Headroom above the passband is a lane for labels of flat curves and the corner.
    g_top = math.ceil((max([g_peak, *g_lims]) + 6.0) / 5.0) * 5.0
    g_floor = max(float(np.min(g_vals)) - 3.0, g_peak - 100.0)
    g_bottom = math.floor((min([g_floor, *[v - 5.0 for v in g_lims]])) / 10.0) * 10.0
    if g_top - g_bottom < 10.0:
        g_bottom = g_top - 10.0
    ax_g.set_ylim(g_bottom, g_top)

    p_vals = _finite(p, *(bands[k] for k in bands if k.startswith("phase")))
    p_lims = [v for lim in limits if lim["panel"] == "phase"
              for v in (lim.get("min"), lim.get("max")) if v is not None]
    p_min = min([float(np.min(p_vals)) if p_vals.size else -90.0, *p_lims])
    p_max = max([float(np.max(p_vals)) if p_vals.size else 0.0, *p_lims])
    pad = max(0.04 * (p_max - p_min), 2.0)
    p_bottom = math.floor((p_min - pad) / 15.0) * 15.0
    p_top = math.ceil((p_max + pad) / 15.0) * 15.0
    ax_p.set_ylim(p_bottom, p_top)
    ax_p.yaxis.set_major_locator(ticker.MultipleLocator(_phase_step(p_top - p_bottom)))
    return g_peak


def _bode_corner(ax_g, ax_p, corner: float, f, g, fpos) -> Line2D:
    """The corner line on both panels and its label; returns its legend handle."""
    text = f"corner {_eng(corner, 'Hz')}"
    for ax in (ax_g, ax_p):
        _vline(ax, corner, color=pal.MUTED, linewidth=0.9, linestyle=(0, (4, 2)), zorder=2)
    # Put the label on the side where the curve is lower, away from it.
    right = np.interp(math.log10(corner) + 0.3, np.log10(fpos), g[np.isfinite(f) & (f > 0)])
    left = np.interp(math.log10(corner) - 0.3, np.log10(fpos), g[np.isfinite(f) & (f > 0)])
    on_right = right <= left
    if _log_fraction(ax_g, corner) > 0.85:
        on_right = False
    elif _log_fraction(ax_g, corner) < 0.15:
        on_right = True
    ax_g.annotate(text, xy=(corner, 1.0), xycoords=("data", "axes fraction"),
                  xytext=(4 if on_right else -4, -3), textcoords="offset points",
                  ha="left" if on_right else "right", va="top", bbox=_BBOX, zorder=6)
    return Line2D([], [], color=pal.MUTED, linewidth=0.9, linestyle=(0, (4, 2)), label=text)


def _bode_marks(ax_g, ax_p, marks, f, g, p) -> Line2D:
    """Annotated points at the tabulated frequencies; returns their legend handle."""
    ok = np.isfinite(f) & (f > 0)
    for freq, gain, phase in marks:
        freq, gain, phase = float(freq), float(gain), float(phase)
        for ax, y, curve, text in ((ax_g, gain, g, f"{_num(gain)} dB at {_eng(freq, 'Hz')}"),
                                   (ax_p, phase, p, f"{_num(phase)}°")):
            ax.plot([freq], [y], marker="o", markersize=4, markerfacecolor="white",
                    markeredgecolor=pal.INK, markeredgewidth=1.0, linestyle="none", zorder=5)
            dx, dy, ha, va = _free_side(ax, np.log10(f[ok]), curve[ok], freq, y)
            ax.annotate(text, xy=(freq, y), xytext=(dx, dy), textcoords="offset points",
                        ha=ha, va=va, bbox=_BBOX, zorder=6)
    return Line2D([], [], marker="o", markersize=4, markerfacecolor="white",
                  markeredgecolor=pal.INK, linestyle="none", label="tabulated frequency")


def _free_side(ax, log_f: np.ndarray, curve: np.ndarray, freq: float, y: float):
    """Offset and alignment that put a point's label off the curve through it.

    Beside a falling curve the free quadrants are lower-left and upper-right,
    beside a rising one lower-right and upper-left; below is preferred so the
    label stays clear of "max" limits, unless the point is near the bottom.
    Beside a flat curve the label goes above, unless the curve runs along the top.
    """
    x_lo, x_hi = (math.log10(v) for v in ax.get_xlim())
    y_lo, y_hi = ax.get_ylim()
    fx = (math.log10(freq) - x_lo) / (x_hi - x_lo)
    fy = (y - y_lo) / (y_hi - y_lo)
    step = 0.05 * (x_hi - x_lo)
    ya, yb = np.interp([math.log10(freq) - step, math.log10(freq) + step], log_f, curve)
    slope = ((yb - ya) / (y_hi - y_lo)) / 0.1
    below = fy > 0.25
    if abs(slope) < 0.15:
        right = fx < 0.8
        below = fy > 0.9    # a flat curve: label above it unless it runs along the top
    else:
        right = (slope > 0) == below
        if fx > 0.8 or fx < 0.2:
            right = fx < 0.2
            below = (slope > 0) == right if fy > 0.25 else below
    return (5 if right else -5, -5 if below else 5, "left" if right else "right",
            "top" if below else "bottom")


def _draw_limit(ax_g, ax_p, lim: Mapping, g_peak: float, passband_left: bool) -> bool:
    """Shade one forbidden region; returns True when something was drawn.

    "gain"/"phase": the region above `max` and/or below `min` over
    [f_lo, f_hi] (None: that end of the axis). A single frequency
    (f_lo == f_hi) becomes a strip of +-3 % of the axis' log width, so it
    stays visible on a many-decade axis, with a short line at the level.
    "corner": `min`/`max` are frequencies; the forbidden corner positions
    (outside [min, max]) are shaded as strips around the -3 dB level below
    the passband maximum, on the gain panel.
    """
    x_lo, x_hi = ax_g.get_xlim()
    label = str(lim.get("label", ""))
    fill = {"facecolor": pal.LIMIT, "edgecolor": "none", "zorder": 0.8}
    edge = {"color": pal.LIMIT_EDGE, "linewidth": 1.2, "zorder": 2.5, "solid_capstyle": "butt"}
    if lim["panel"] == "corner":
        level = g_peak - 3.0
        y0, y1 = level - 4.0, level + 4.0
        f_min, f_max = lim.get("min"), lim.get("max")
        f_min = None if f_min is None else float(f_min)
        f_max = None if f_max is None else float(f_max)
        # Half a decade beyond each allowed end: enough to read, local to the corner.
        reach = 10.0**0.5
        spans = []
        if f_min is not None:
            spans.append((max(x_lo, f_min / reach), f_min, f_min))
        if f_max is not None:
            spans.append((f_max, min(x_hi, f_max * reach), f_max))
        for a, b, at in spans:
            if b <= a:
                continue
            ax_g.add_patch(Rectangle((a, y0), b - a, y1 - y0, **fill))
            ax_g.plot([at, at], [y0, y1], **edge)
        if label and (f_min is not None or f_max is not None):
            # Label under the strip on the passband side (where the curve is high).
            at = (f_min if f_min is not None else f_max) if passband_left else \
                (f_max if f_max is not None else f_min)
            ax_g.annotate(label, xy=(at, y0), xytext=(-3 if passband_left else 3, -2),
                          textcoords="offset points", ha="right" if passband_left else "left",
                          va="top", color=pal.INK, bbox=_BBOX, zorder=6)
        return True

    ax = ax_g if lim["panel"] == "gain" else ax_p
    y_lo, y_hi = ax.get_ylim()
    f_lo = lim.get("f_lo")
    f_hi = lim.get("f_hi")
    a = x_lo if f_lo is None else float(f_lo)
    b = x_hi if f_hi is None else float(f_hi)
    if f_lo is not None and f_hi is not None and a == b:
        k = 10.0 ** (0.03 * math.log10(x_hi / x_lo))
        a, b = a / k, b * k
    drew = False
    for level, top in ((lim.get("max"), True), (lim.get("min"), False)):
        if level is None:
            continue
        level = float(level)
        y0, y1 = (level, y_hi) if top else (y_lo, level)
        ax.add_patch(Rectangle((a, y0), b - a, y1 - y0, **fill))
        ax.plot([a, b], [level, level], **edge)
        drew = True
        if label:
            frac_a = (math.log10(a) - math.log10(x_lo)) / math.log10(x_hi / x_lo)
            frac_b = (math.log10(b) - math.log10(x_lo)) / math.log10(x_hi / x_lo)
            # At the region's far edge, away from the curve that runs near the level:
            # inside a wide region, beside a narrow strip.
            if frac_b - frac_a > 0.3:
                x, dx, ha = a, 3, "left"
            else:
                x, dx, ha = (b, 3, "left") if frac_b < 0.75 else (a, -3, "right")
            ax.annotate(label, xy=(x, y_hi if top else y_lo), xytext=(dx, -2 if top else 2),
                        textcoords="offset points", ha=ha, va="top" if top else "bottom",
                        color=pal.INK, bbox=_BBOX, zorder=6)
    return drew


# ---------------------------------------------------------------------------
# Phasor diagram

_PHASOR_STYLE = {
    "R": (pal.RESISTOR, 1.6, "-"),
    "C": (pal.CAPACITOR, 1.6, "-"),
    "L": (pal.INDUCTOR, 1.6, "-"),
    "source": (pal.SOURCE, 1.8, "-"),
    "sum": (pal.SUM, 1.3, (0, (4, 2))),
    "current": (pal.CURRENT, 1.4, "-"),
}


def phasor(fig_id: str, vectors: Sequence[Mapping], *, reference_label: str, freq_hz: float,
           angle_deg: float | None = None, title: str = "", fmt: str = "svg") -> str | bytes:
    """Phasors drawn tail to head in the complex plane, with the reference along +x.

    `vectors`: {"label", "value" (complex), "kind" ("R", "C", "L", "source",
    "sum", "current"), "tail" (complex, default 0)}. `angle_deg`, when given,
    is marked with an arc between +x and the source phasor.
    """
    _check_fig_id(fig_id)
    items = []
    for i, vec in enumerate(vectors):
        kind = vec.get("kind")
        if kind not in _PHASOR_STYLE:
            raise ValueError(f"vectors[{i}].kind must be one of {sorted(_PHASOR_STYLE)}, got {kind!r}")
        items.append((str(vec["label"]), complex(vec["value"]), kind, complex(vec.get("tail", 0j))))
    if not items:
        raise ValueError("vectors: need at least one phasor")

    with _styled(fig_id):
        fig, (ax,) = reused_figure("phasor", WIDTH_IN, 3.9, lambda fig: [fig.add_subplot()])
        _grid(ax)
        mags = [abs(v) for _, v, _, _ in items]
        scale = max(max(mags), max(abs(t + v) for _, v, _, t in items), 1e-300)

        ref_len = 1.15 * max(scale, max((t + v).real for _, v, _, t in items))
        points = [0j, complex(ref_len, 0.0)]
        ax.add_patch(FancyArrowPatch((0.0, 0.0), (ref_len, 0.0), arrowstyle="-|>", mutation_scale=8,
                                     color=pal.MUTED, linewidth=0.8, shrinkA=0, shrinkB=0, zorder=2))
        # The reference is named once, in the legend: a label on its arrow ran over the phasors.
        handles = [Line2D([], [], color=pal.MUTED, linewidth=0.8, label=f"reference: {reference_label}")]
        seen: dict[str, int] = {}

        for label, value, kind, tail in items:
            color, width, style = _PHASOR_STYLE[kind]
            if kind in pal.PART_COLORS:
                # Each part of a kind in a colour of its own (two resistors are not two blues).
                shades = pal.PART_COLORS[kind]
                color = shades[seen.get(kind, 0) % len(shades)]
                seen[kind] = seen.get(kind, 0) + 1
            head = tail + value
            points += [tail, head]
            if abs(value) > 1e-9 * scale:
                ax.add_patch(FancyArrowPatch((tail.real, tail.imag), (head.real, head.imag),
                                             arrowstyle="-|>", mutation_scale=12, color=color,
                                             linewidth=width, linestyle=style, shrinkA=0, shrinkB=0,
                                             zorder=4 if kind != "sum" else 4.5))
            handles.append(Line2D([], [], color=color, linewidth=width, linestyle=style, label=label))

        if angle_deg is not None:
            _angle_arc(ax, items, float(angle_deg), scale)

        pad = 0.12 * scale
        ax.update_datalim([(z.real + dx, z.imag + dy) for z in points
                           for dx, dy in ((-pad, -pad), (pad, pad))])
        ax.margins(0.0)
        ax.autoscale_view()
        ax.set_aspect("equal", adjustable="datalim")
        ax.axhline(0.0, color=pal.MUTED, linewidth=0.5, zorder=1)
        ax.axvline(0.0, color=pal.MUTED, linewidth=0.5, zorder=1)
        ax.xaxis.set_major_formatter(_AxisEngFormatter())
        ax.yaxis.set_major_formatter(_AxisEngFormatter())
        ax.set_xlabel("Real [V]")
        ax.set_ylabel("Imaginary [V]")
        _legend(fig, handles, max_cols=3, title=f"phasors at {_eng(freq_hz, 'Hz')}")
        return _finish(fig, fig_id, title, fmt)


def _angle_arc(ax, items: list, angle: float, scale: float) -> None:
    """The angle between +x and the source phasor: an arc and its value, off the phasors."""
    source = next(((v, t) for _, v, k, t in items if k == "source"), None)
    centre, radius = (source[1], 0.3 * abs(source[0])) if source else (0j, 0.3 * scale)
    radius = radius or 0.3 * scale
    ax.add_patch(Arc((centre.real, centre.imag), 2 * radius, 2 * radius,
                     theta1=min(0.0, angle), theta2=max(0.0, angle),
                     color=pal.SOURCE, linewidth=0.9, zorder=3))
    # Along the arc, as far as possible from the phasors that start at its centre.
    starts = [math.degrees(math.atan2(v.imag, v.real)) for _, v, _, t in items
              if abs(t - centre) <= 1e-9 * scale and abs(v) > 0] + [0.0]
    mid = math.radians(max((angle * k for k in (0.5, 0.35, 0.65, 0.2, 0.8)),
                           key=lambda a: min(abs((a - d + 180.0) % 360.0 - 180.0) for d in starts)))
    c, s = math.cos(mid), math.sin(mid)
    ax.annotate(f"{_num(angle)}°", xy=(centre.real + radius * c, centre.imag + radius * s),
                xytext=(5 * c, 5 * s), textcoords="offset points",
                ha="left" if c > 0.3 else "right" if c < -0.3 else "center",
                va="bottom" if s > 0.3 else "top" if s < -0.3 else "center",
                color=pal.INK, bbox=_BBOX, zorder=6)
