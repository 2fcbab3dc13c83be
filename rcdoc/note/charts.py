"""Charts of a design note, drawn from plain arrays into deterministic SVG text.

Each public function takes arrays the engine has already computed (gains,
phases, phasors, waveforms, Monte Carlo samples) and returns one SVG document
as a string. The functions compute no physics: no transfer functions, no
statistics beyond binning a histogram and counting samples outside a limit.

Every chart is drawn on a bare `matplotlib.figure.Figure` with the SVG canvas
(no pyplot, no global figure state), inside a style context that resets
matplotlib's defaults, so a user's matplotlibrc cannot change the output.
The same inputs give the same bytes: the SVG hash salt is derived from the
chart's `fig_id`, the date is left out, and every element id is prefixed with
the `fig_id` so that several charts inlined into one HTML page never share an
id (a shared clip-path id would let one chart clip another).
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import math
import re
from collections.abc import Iterator, Mapping, Sequence

import matplotlib
import matplotlib.style
import numpy as np
from cycler import cycler
from matplotlib import ticker
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Arc, FancyArrowPatch, Patch, Rectangle

from rcdoc.input.quantities import format_eng
from rcdoc.note import palette as pal

__all__ = ["bode", "phasor", "time_response", "histogram", "corner_overview", "sweep"]

WIDTH_IN = 16.0 / 2.54  # the note's text width, 16 cm

# Units whose values are not scaled with SI prefixes on an axis.
_UNSCALED_UNITS = frozenset({"", "dB", "%", "°", "deg", "1"})

_PREFIXES = {
    -15: "f", -12: "p", -9: "n", -6: "µ", -3: "m",
    0: "", 3: "k", 6: "M", 9: "G", 12: "T",
}

_MINUS = "\N{MINUS SIGN}"
_THIN = "\N{THIN SPACE}"


def _base_style(salt: str) -> dict:
    return {
        "svg.fonttype": "path",
        "svg.hashsalt": salt,
        "font.family": "DejaVu Sans",
        "font.size": 8.5,
        "axes.titlesize": 9,
        "axes.labelsize": 9,
        "xtick.labelsize": 8,
        "ytick.labelsize": 8,
        "legend.fontsize": 8,
        "legend.title_fontsize": 8,
        "figure.titlesize": 9.5,
        "text.color": pal.INK,
        "axes.labelcolor": pal.INK,
        "axes.edgecolor": pal.MUTED,
        "axes.linewidth": 0.7,
        "axes.spines.top": False,
        "axes.spines.right": False,
        "axes.axisbelow": True,
        "axes.unicode_minus": True,
        "axes.formatter.use_mathtext": False,
        "axes.prop_cycle": cycler(color=list(pal.SERIES_CYCLE)),
        "xtick.color": pal.MUTED,
        "ytick.color": pal.MUTED,
        "xtick.labelcolor": pal.INK,
        "ytick.labelcolor": pal.INK,
        "xtick.major.width": 0.7,
        "ytick.major.width": 0.7,
        "grid.color": pal.GRID,
        "grid.linewidth": 0.6,
        "lines.linewidth": 1.4,
        "legend.frameon": False,
        "legend.handlelength": 1.8,
        "legend.columnspacing": 1.6,
        "hatch.color": pal.LIMIT_EDGE,
    }


# ---------------------------------------------------------------------------
# Figure life cycle and SVG post-processing


def _check_fig_id(fig_id: str) -> None:
    if not isinstance(fig_id, str) or not fig_id:
        raise ValueError(f"fig_id must be a non-empty string, got {fig_id!r}")


def _salt(fig_id: str) -> str:
    return hashlib.sha256(("rcdoc-svg:" + fig_id).encode("utf-8")).hexdigest()[:16]


def _id_prefix(fig_id: str) -> str:
    """An XML-name-safe prefix that differs for every distinct fig_id.

    Stage-style ids (``[a-z][a-z0-9-]*``) are used as they are; anything else
    is sanitised and tagged with a hash of the original so that two ids that
    sanitise alike still differ. The ``__`` separator cannot occur inside a
    stage-style id, so prefixed ids of two figures can never coincide.
    """
    if re.fullmatch(r"[a-z][a-z0-9-]*", fig_id):
        return fig_id + "__"
    safe = re.sub(r"[^a-z0-9-]", "-", fig_id.lower())
    digest = hashlib.sha256(fig_id.encode("utf-8")).hexdigest()[:8]
    return f"f{safe}-{digest}__"


@contextlib.contextmanager
def _styled(fig_id: str) -> Iterator[None]:
    # "default" resets to matplotlib's shipped defaults, ignoring matplotlibrc.
    with matplotlib.style.context("default"), matplotlib.rc_context(_base_style(_salt(fig_id))):
        yield


def _new_figure(height_in: float) -> Figure:
    fig = Figure(figsize=(WIDTH_IN, height_in), layout="constrained")
    FigureCanvasSVG(fig)
    return fig


#: Resolution of raster charts: sharp in print at the note's 16 cm width.
PNG_DPI = 200


def _finish(fig: Figure, fig_id: str, title: str, fmt: str = "svg") -> str | bytes:
    """SVG text (ids prefixed with fig_id), or PNG bytes when ``fmt == "png"``."""
    if title:
        fig.suptitle(title)
    if fmt == "png":
        raw = io.BytesIO()
        # No "Software" entry and no dates: the same chart gives the same bytes.
        fig.savefig(raw, format="png", dpi=PNG_DPI, metadata={"Software": None})
        return raw.getvalue()
    if fmt != "svg":
        raise ValueError(f"fmt must be 'svg' or 'png', not {fmt!r}")
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None})
    return _prefix_ids(buf.getvalue(), _id_prefix(fig_id))


def _prefix_ids(svg: str, prefix: str) -> str:
    """Drop the XML prolog and prefix every id and every reference to one."""
    svg = svg[svg.index("<svg"):]
    ids = set(re.findall(r'\sid="([^"]+)"', svg))

    def ref(match: re.Match) -> str:
        name = match.group(2)
        return match.group(1) + (prefix + name if name in ids else name) + match.group(3)

    svg = re.sub(r'(\sid=")([^"]+)(")', lambda m: m.group(1) + prefix + m.group(2) + m.group(3), svg)
    svg = re.sub(r'(\s(?:xlink:)?href="#)([^"]+)(")', ref, svg)
    svg = re.sub(r"(url\(#)([^)]+)(\))", ref, svg)
    return svg


# ---------------------------------------------------------------------------
# Number and axis formatting


def _eng(value: float, unit: str = "") -> str:
    """An SI-prefixed label, 1591.5 -> '1.59 k'+unit: the one formatter, note minus."""
    return format_eng(value, unit).replace("-", _MINUS)


def _num(value: float, fmt: str = ".1f") -> str:
    return format(float(value), fmt).replace("-", _MINUS)


class _AxisEngFormatter(ticker.Formatter):
    """Linear-axis tick labels with one SI prefix for the whole axis.

    Reads "0, 0.5, 1, 1.5" rather than matplotlib's per-tick "0, 500 m, 1,
    1.5", and shows only as many decimals as the tick step needs. Axes
    reaching 0.1 to 1000 get plain numbers; others a prefix (200 µ, 1.5 k).
    """

    _exp3 = 0
    _decimals = 0

    def set_locs(self, locs):
        vmin, vmax = self.axis.get_view_interval()
        big = max(abs(vmin), abs(vmax))
        exp3 = 0
        if math.isfinite(big) and big > 0 and not 0.1 <= big < 1000.0:
            exp3 = max(min(int(math.floor(math.log10(big) / 3.0) * 3), 12), -15)
        scaled = [v / 10.0**exp3 for v in locs]
        self._exp3 = exp3
        self._decimals = next((d for d in range(7) if all(
            abs(round(v, d) - v) < 1e-6 * max(1.0, abs(v)) for v in scaled)), 6)

    def __call__(self, x, pos=None):
        if x == 0:
            return "0"
        prefix = _PREFIXES[self._exp3]
        text = f"{x / 10.0**self._exp3:.{self._decimals}f}" + (_THIN + prefix if prefix else "")
        return text.replace("-", _MINUS)


def _tick_formatter(unit: str) -> ticker.Formatter:
    if unit in _UNSCALED_UNITS:
        return ticker.ScalarFormatter()
    return _AxisEngFormatter()


def _eng_range(lo: float, hi: float, unit: str) -> str:
    """'1.32–1.96 kHz' when both ends share a prefix, else '820 Hz–1.20 kHz'."""
    a, b = _eng(lo, unit), _eng(hi, unit)
    a_num, _, a_unit = a.partition(" ")
    b_num, _, b_unit = b.partition(" ")
    return f"{a_num}–{b}" if a_unit == b_unit else f"{a}–{b}"


def _log_axis(axis, lo: float, hi: float) -> None:
    """Log scale on `axis` (an XAxis/YAxis) with engineering tick labels."""
    decades = math.log10(hi / lo)
    subs = (1.0,) if decades > 2.2 else (1.0, 2.0, 5.0)
    axis.set_major_locator(ticker.LogLocator(base=10.0, subs=subs))
    axis.set_major_formatter(ticker.EngFormatter(sep=_THIN))
    axis.set_minor_locator(ticker.LogLocator(base=10.0, subs=tuple(np.arange(2.0, 10.0))))
    axis.set_minor_formatter(ticker.NullFormatter())


def _grid(ax) -> None:
    ax.grid(True, which="major", color=pal.GRID, linewidth=0.6)
    ax.grid(True, which="minor", color=pal.GRID, linewidth=0.3)


def _log_fraction(ax, x: float) -> float:
    lo, hi = ax.get_xlim()
    return (math.log10(x) - math.log10(lo)) / (math.log10(hi) - math.log10(lo))


def _legend(fig: Figure, handles: list) -> None:
    """One legend below the plot area, in as many columns as fit the width."""
    if not handles:
        return
    longest = max(len(h.get_label()) for h in handles)
    fit = max(1, int(100 // (longest + 8)))
    fig.legend(handles=handles, loc="outside lower center", ncols=min(len(handles), fit, 4))


def _arr(values, name: str) -> np.ndarray:
    try:
        out = np.asarray(values, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name}: expected an array of numbers") from exc
    if out.ndim != 1:
        raise ValueError(f"{name}: expected a 1-D array, got shape {out.shape}")
    return out


def _same_shape(ref: np.ndarray, arr: np.ndarray, name: str) -> np.ndarray:
    if arr.shape != ref.shape:
        raise ValueError(f"{name}: shape {arr.shape} differs from {ref.shape}")
    return arr


def _finite(*arrays: np.ndarray) -> np.ndarray:
    joined = np.concatenate([a.ravel() for a in arrays]) if arrays else np.empty(0)
    return joined[np.isfinite(joined)]


_BBOX = {"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}


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

    with _styled(fig_id):
        fig = _new_figure(4.9)
        ax_g, ax_p = fig.subplots(2, 1, sharex=True, height_ratios=[3, 2])
        f_lo, f_hi = float(fpos.min()), float(fpos.max())
        ax_g.set_xscale("log")
        ax_g.set_xlim(f_lo, f_hi)
        _log_axis(ax_g.xaxis, f_lo, f_hi)
        for ax in (ax_g, ax_p):
            _grid(ax)

        # y ranges first: forbidden regions are filled up to the axis edges.
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

        handles: list = []
        if bands:
            outer = band.get("outer_label", "Monte Carlo min–max")
            inner = band.get("inner_label", "Monte Carlo 5–95 %")
            ax_g.fill_between(f, bands["gain_min"], bands["gain_max"], color=pal.BAND_OUTER, linewidth=0, zorder=1)
            ax_g.fill_between(f, bands["gain_lo"], bands["gain_hi"], color=pal.BAND_INNER, linewidth=0, zorder=1.1)
            ax_p.fill_between(f, bands["phase_min"], bands["phase_max"], color=pal.BAND_OUTER, linewidth=0, zorder=1)
            ax_p.fill_between(f, bands["phase_lo"], bands["phase_hi"], color=pal.BAND_INNER, linewidth=0, zorder=1.1)
            handles += [Patch(color=pal.BAND_OUTER, label=outer), Patch(color=pal.BAND_INNER, label=inner)]
        ax_g.plot(f, g, color=pal.NOMINAL, linewidth=1.5, zorder=3)
        ax_p.plot(f, p, color=pal.NOMINAL, linewidth=1.5, zorder=3)
        handles.insert(0, Line2D([], [], color=pal.NOMINAL, linewidth=1.5, label="nominal"))

        if corner_hz is not None:
            corner = float(corner_hz)
            text = f"corner {_eng(corner, 'Hz')}"
            for ax in (ax_g, ax_p):
                ax.axvline(corner, color=pal.MUTED, linewidth=0.9, linestyle=(0, (4, 2)), zorder=2)
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
            handles.append(Line2D([], [], color=pal.MUTED, linewidth=0.9, linestyle=(0, (4, 2)), label=text))
        if corner_spread is not None:
            lo, hi = (float(v) for v in corner_spread)
            for ax in (ax_g, ax_p):
                ax.axvspan(lo, hi, color=pal.BAND_INNER, alpha=0.35, linewidth=0, zorder=0.5)
            handles.append(Patch(color=pal.BAND_INNER, alpha=0.35, linewidth=0,
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
            handles.append(Line2D([], [], marker="o", markersize=4, markerfacecolor="white",
                                  markeredgecolor=pal.INK, linestyle="none", label="tabulated frequency"))

        ax_g.set_ylabel("Gain [dB]")
        ax_p.set_ylabel("Phase [°]")
        ax_p.set_xlabel("Frequency [Hz]")
        ax_g.tick_params(labelbottom=False)
        fig.align_ylabels([ax_g, ax_p])
        _legend(fig, handles)
        return _finish(fig, fig_id, title, fmt)


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
        fig = _new_figure(3.9)
        ax = fig.add_subplot()
        _grid(ax)
        mags = [abs(v) for _, v, _, _ in items]
        scale = max(max(mags), max(abs(t + v) for _, v, _, t in items), 1e-300)

        ref_len = 1.15 * max(scale, max((t + v).real for _, v, _, t in items))
        points = [0j, complex(ref_len, 0.0)]
        ax.add_patch(FancyArrowPatch((0.0, 0.0), (ref_len, 0.0), arrowstyle="-|>", mutation_scale=8,
                                     color=pal.MUTED, linewidth=0.8, shrinkA=0, shrinkB=0, zorder=2))
        ax.annotate(reference_label, xy=(ref_len, 0.0), xytext=(0, 4), textcoords="offset points",
                    ha="right", va="bottom", color=pal.INK, zorder=6)
        handles = [Line2D([], [], color=pal.MUTED, linewidth=0.8, label=f"reference: {reference_label}")]

        for label, value, kind, tail in items:
            color, width, style = _PHASOR_STYLE[kind]
            head = tail + value
            points += [tail, head]
            if abs(value) > 1e-9 * scale:
                ax.add_patch(FancyArrowPatch((tail.real, tail.imag), (head.real, head.imag),
                                             arrowstyle="-|>", mutation_scale=12, color=color,
                                             linewidth=width, linestyle=style, shrinkA=0, shrinkB=0,
                                             zorder=4 if kind != "sum" else 4.5))
            handles.append(Line2D([], [], color=color, linewidth=width, linestyle=style, label=label))

        if angle_deg is not None:
            angle = float(angle_deg)
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
        fig.legend(handles=handles, loc="outside right upper", title=f"phasors at {_eng(freq_hz, 'Hz')}",
                   alignment="left")
        return _finish(fig, fig_id, title, fmt)


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
        fig = _new_figure(3.3)
        ax = fig.add_subplot()
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
            handles.append(Patch(color=pal.BAND_OUTER, label="Monte Carlo min–max"))
        for st, sy, label, role in curves:
            color, width, style = _ROLE_STYLE[role]
            ax.plot(st, sy, color=color, linewidth=width, linestyle=style, zorder=2.5)
            if label:           # an unlabelled curve continues the one before it in the legend
                handles.append(Line2D([], [], color=color, linewidth=width, linestyle=style, label=label))
        ax.plot(t, y, color=pal.NOMINAL, linewidth=1.5, zorder=3)
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


# ---------------------------------------------------------------------------
# Histogram of Monte Carlo samples


def histogram(fig_id: str, samples, *, nominal: float, lo: float | None = None, hi: float | None = None,
              label: str, unit: str, title: str = "", fmt: str = "svg") -> str | bytes:
    """Histogram of Monte Carlo samples with the nominal and the limits [lo, hi]."""
    _check_fig_id(fig_id)
    x = _arr(samples, "samples")
    x = x[np.isfinite(x)]
    if x.size == 0:
        raise ValueError("samples: no finite values")
    nominal = float(nominal)

    with _styled(fig_id):
        fig = _new_figure(2.9)
        ax = fig.add_subplot()
        ax.grid(True, axis="y", color=pal.GRID, linewidth=0.6)
        x_min, x_max = float(x.min()), float(x.max())
        if x_max > x_min:
            edges = np.histogram_bin_edges(x, bins="auto")
            if edges.size > 61:
                edges = np.linspace(x_min, x_max, 61)
        else:
            half = abs(x_min) * 1e-3 or 1e-12
            edges = np.array([x_min - half, x_min + half])
        counts, edges = np.histogram(x, bins=edges)
        ax.stairs(counts, edges, fill=True, color=pal.BAND_INNER, zorder=2)
        ax.stairs(counts, edges, color=pal.NOMINAL, linewidth=0.7, zorder=2.1)
        handles = [Patch(facecolor=pal.BAND_INNER, edgecolor=pal.NOMINAL, linewidth=0.7,
                         label=f"Monte Carlo, {x.size} samples")]
        ax.axvline(nominal, color=pal.INK, linewidth=1.4, zorder=3)
        handles.append(Line2D([], [], color=pal.INK, linewidth=1.4, label=f"nominal {_eng(nominal, unit)}"))

        bounds = [x_min, x_max, nominal] + [v for v in (lo, hi) if v is not None]
        span = max(bounds) - min(bounds) or abs(nominal) or 1.0
        left, right = min(bounds) - 0.08 * span, max(bounds) + 0.08 * span
        ax.set_xlim(left, right)
        ax.set_ylim(0, max(int(counts.max()), 1) * 1.12)
        outside = 0
        if lo is not None:
            ax.axvspan(left, float(lo), facecolor=pal.LIMIT, edgecolor="none", zorder=0.5)
            ax.axvline(float(lo), color=pal.LIMIT_EDGE, linewidth=1.2, zorder=2.5)
            outside += int(np.count_nonzero(x < float(lo)))
        if hi is not None:
            ax.axvspan(float(hi), right, facecolor=pal.LIMIT, edgecolor="none", zorder=0.5)
            ax.axvline(float(hi), color=pal.LIMIT_EDGE, linewidth=1.2, zorder=2.5)
            outside += int(np.count_nonzero(x > float(hi)))
        if lo is not None or hi is not None:
            handles.append(Patch(facecolor=pal.LIMIT, edgecolor=pal.LIMIT_EDGE, linewidth=0.8,
                                 label=f"outside requirement ({outside} of {x.size})"))

        ax.xaxis.set_major_formatter(_tick_formatter(unit))
        ax.set_xlabel(f"{label} [{unit}]" if unit else label)
        ax.set_ylabel("Samples per bin")
        _legend(fig, handles)
        return _finish(fig, fig_id, title, fmt)


# ---------------------------------------------------------------------------
# Corner frequencies of all stages


def corner_overview(fig_id: str, rows: Sequence[Mapping], title: str = "", *, fmt: str = "svg") -> str | bytes:
    """One row per stage on a shared log-frequency axis: nominal and min-max, by status."""
    _check_fig_id(fig_id)
    parsed = []
    for i, row in enumerate(rows):
        status = row.get("status")
        if status not in ("pass", "fail"):
            raise ValueError(f"rows[{i}].status must be 'pass' or 'fail', got {status!r}")
        nom = float(row["nominal"])
        f_min = float(row["min"]) if row.get("min") is not None else nom
        f_max = float(row["max"]) if row.get("max") is not None else nom
        if min(nom, f_min, f_max) <= 0 or not all(map(math.isfinite, (nom, f_min, f_max))):
            raise ValueError(f"rows[{i}]: frequencies must be positive and finite")
        parsed.append((str(row["label"]), nom, f_min, f_max, status))
    if not parsed:
        raise ValueError("rows: need at least one stage")

    with _styled(fig_id):
        fig = _new_figure(1.2 + 0.3 * len(parsed))
        ax = fig.add_subplot()
        _grid(ax)
        for i, (label, nom, f_min, f_max, status) in enumerate(parsed):
            color = pal.PASS if status == "pass" else pal.FAIL
            ax.plot([f_min, f_max], [i, i], color=color, linewidth=3.0, alpha=0.45,
                    solid_capstyle="butt", zorder=2)
            ax.plot([nom], [i], marker="o", markersize=5, color=color, linestyle="none", zorder=3)
            ax.annotate(_eng(nom, "Hz"), xy=(f_max, i), xytext=(6, 0), textcoords="offset points",
                        ha="left", va="center", color=pal.INK, zorder=4)
        lo = min(p[2] for p in parsed)
        hi = max(p[3] for p in parsed)
        # At least a decade on each side keeps single stages readable and leaves room for values.
        x_lo = 10.0 ** math.floor(math.log10(lo) - 0.3)
        x_hi = 10.0 ** math.ceil(math.log10(hi) + 0.5)
        ax.set_xscale("log")
        ax.set_xlim(x_lo, x_hi)
        _log_axis(ax.xaxis, x_lo, x_hi)
        ax.grid(False, which="minor")
        ax.set_ylim(len(parsed) - 0.4, -0.6)
        ax.set_yticks(range(len(parsed)), [p[0] for p in parsed])
        ax.tick_params(axis="y", length=0)
        ax.grid(False, axis="y", which="both")
        ax.set_xlabel("Corner frequency [Hz]")
        handles = []
        for status, color in (("pass", pal.PASS), ("fail", pal.FAIL)):
            if any(p[4] == status for p in parsed):
                handles.append(Line2D([], [], color=color, marker="o", markersize=5, linewidth=3.0,
                                      alpha=1.0, label=f"{status}: nominal and min–max"))
        _legend(fig, handles)
        return _finish(fig, fig_id, title, fmt)


# ---------------------------------------------------------------------------
# General x-y sweep


def _axis_label(curves: list) -> str:
    units = {c[2] for c in curves}
    if len(units) == 1:
        unit = units.pop()
        names = " / ".join(dict.fromkeys(c[1] for c in curves))
        return f"{names} [{unit}]" if unit else names
    return ", ".join(f"{c[1]} [{c[2]}]" if c[2] else c[1] for c in curves)


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
