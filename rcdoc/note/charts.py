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

This module holds what every chart shares (figure life cycle, SVG
post-processing, number and axis formatting); the charts themselves are in
rcdoc.note.charts_freq (Bode, phasor) and rcdoc.note.charts_time (time
response, histogram, corner overview, sweep).
"""

from __future__ import annotations

import contextlib
import gc
import hashlib
import io
import math
import re
from collections.abc import Iterator

import matplotlib
import matplotlib.axis
import numpy as np
from cycler import cycler
from matplotlib import ticker
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.collections import FillBetweenPolyCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle

from rcdoc.input.quantities import format_eng
from rcdoc.note import charts_raster
from rcdoc.note import palette as pal
from rcdoc.note.chart_ticks import lean_axes, light_major_ticks, light_minor_ticks

WIDTH_IN = 16.0 / 2.54  # the note's text width, 16 cm
HALF_WIDTH_IN = 0.49 * WIDTH_IN  # one of two charts side by side (the note's ".fig.half")

# Units whose values are not scaled with SI prefixes on an axis or in a label: a
# milli-decibel or a milli-LSB reads as an error to a reviewer ("0.012 LSB", not "12 mLSB").
_UNSCALED_UNITS = frozenset({"", "dB", "%", "°", "deg", "1", "LSB"})

# Unit codes of the metric registry (rcdoc.input.quantities) shown by their symbol.
_SYMBOLS = {"ohm": "Ω", "deg": "°", "degC": "°C", "1": ""}

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


_STYLE: dict = {}     # the rcParams _styled sets (all but the salt), as validated once

#: Off switch of _styled's pause of the garbage collector (for measuring it).
PAUSE_GC = True


#: The rcParams a style leaves alone: matplotlib 3.11's list (matplotlib.style
#: _STYLE_BLACKLIST; tests/test_charts.py compares the two).
STYLE_BLACKLIST = frozenset({
    "interactive", "backend", "webagg.port", "webagg.address", "webagg.port_retries",
    "webagg.open_in_browser", "backend_fallback", "toolbar", "timezone",
    "figure.max_open_warning", "figure.raise_window", "savefig.directory",
    "tk.window_focus", "docstring.hardcopy", "date.epoch"})


def _default_style() -> None:
    """What matplotlib.style.use("default") sets: matplotlib's shipped defaults but
    the parameters a style leaves alone. Here without importing matplotlib.style,
    which reads every style sheet matplotlib ships as it loads (7 ms of each
    drawing process's start, on a one-value rebuild's path to its drawing)."""
    from matplotlib import _api
    with _api.suppress_matplotlib_deprecation_warning():
        style = {k: matplotlib.rcParamsDefault[k] for k in matplotlib.rcParamsDefault
                 if k not in STYLE_BLACKLIST}
    matplotlib.rcParams.update(style)


@contextlib.contextmanager
def _styled(fig_id: str) -> Iterator[None]:
    """matplotlib's shipped defaults (ignoring matplotlibrc) with the note's style on top.

    The values are those of matplotlib.style.context("default") (_default_style)
    and rc_context(_base_style(...)), taken once and then set without validating
    them again for every chart (that cost as much as drawing a few lines)."""
    if not _STYLE:
        with matplotlib.rc_context():
            _default_style()
            with matplotlib.rc_context(_base_style("")):
                keys = set(matplotlib.rcParamsDefault) - STYLE_BLACKLIST
                keys |= set(_base_style(""))
                _STYLE.update({k: matplotlib.rcParams._get(k) for k in sorted(keys)})
    rc = matplotlib.rcParams
    saved = {k: rc._get(k) for k in _STYLE}
    # No cyclic garbage collection while a chart is drawn: matplotlib's artists and
    # transforms make thousands of objects that refer to each other, and the collector
    # kept scanning them (and the text caches) mid-chart; it runs again once the chart is
    # done, on all of its garbage at once (about 5 % of a chart's CPU, bench/charts.py).
    pause = PAUSE_GC and gc.isenabled()
    if pause:
        gc.disable()
    try:
        rc._update_raw(_STYLE)
        rc["svg.hashsalt"] = _salt(fig_id)
        yield
    finally:
        rc._update_raw(saved)
        if pause:
            gc.enable()


def _new_figure(height_in: float, width_in: float = WIDTH_IN) -> Figure:
    # No layout engine: _finish places the axes with fixed margins (_fixed_margins);
    # matplotlib's constrained layout took about 40 % of a chart's drawing time.
    fig = Figure(figsize=(width_in, height_in))
    FigureCanvasSVG(fig)
    return fig


#: zlib level of a chart's PNG. Its compressed rows go into the PDF as they are
#: (rcdoc.note.pdf_images.IndexedPNG), so the level sizes the note: on the 137
#: charts of the 40-stage bench board level 3 wrote 21 % more bytes than 6
#: (2.58 against 2.13 MB) in 41 % of the time (0.35 against 0.86 s CPU), about
#: 4 % of a chart's drawing; levels 1 and 2 were no faster and larger still.
#: The 40-stage note stays well under its 6 MB aim (README, Performance).
_PNG_LEVEL = 3

#: Resolution of raster charts, chosen by measurement (README, Performance): at
#: 150 dpi the note's PNGs are about 28 % smaller than at 200 dpi and still sharp
#: at the note's 16 cm width (a 0.7 pt grid line is 1.5 pixels wide).
PNG_DPI = 150


def _finish(fig: Figure, fig_id: str, title: str, fmt: str = "svg") -> str | bytes:
    """SVG text (ids prefixed with fig_id), or PNG bytes when ``fmt == "png"``."""
    if title:
        fig.suptitle(title)
    _fixed_margins(fig)
    _keep_labels_apart(fig)
    light_minor_ticks(fig)
    light_major_ticks(fig)
    # Formatters whose labels do not depend on a tick's place in the list (a
    # FixedFormatter's do: its axis keeps all its ticks).
    lean_axes(fig, (ticker.ScalarFormatter, ticker.LogFormatter, _AxisEngFormatter))
    if fmt == "png":
        return _png(fig)
    if fmt != "svg":
        raise ValueError(f"fmt must be 'svg' or 'png', not {fmt!r}")
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None})
    return _prefix_ids(buf.getvalue(), _id_prefix(fig_id))


# Fixed margins, in inches, for the note's font sizes (8 pt ticks, 9 pt labels):
# a rule, not a layout solver, so a chart costs one drawing. Tick label widths
# are estimated from their characters (DejaVu Sans averages about 0.6 em).
_CHAR_IN = 0.62 * 8 / 72         # one tick-label character
_TICKS_IN = 0.11                 # tick length and pad
_LABEL_IN = 0.22                 # an axis label (9 pt) with its pad
_EDGE_IN = 0.08                  # the figure's own border
_LEGEND_ROW_IN = 0.17            # one legend row (8 pt and its spacing)
_GAP_IN = 0.14                   # between panels that share an axis


def _tick_chars(axis) -> int:
    """Characters of the longest major tick label of ``axis`` in its view."""
    lo, hi = sorted(axis.get_view_interval())
    locs = [v for v in axis.get_majorticklocs() if lo - 1e-9 * abs(hi - lo) <= v <= hi + 1e-9 * abs(hi - lo)]
    labels = axis.get_major_formatter().format_ticks(locs) if locs else []
    return max((len(t) for t in labels), default=0)


def _side_in(ax, axis) -> float:
    """Room an axis needs beside its axes: tick labels and the axis label."""
    label = _LABEL_IN if axis.get_label_text() else 0.0
    return _TICKS_IN + _tick_chars(axis) * _CHAR_IN + label


def _legend_in(fig: Figure) -> float:
    """Height of the figure legend below the plot (rcdoc.note.charts._legend), if any."""
    if not fig.legends:
        return 0.0
    leg = fig.legends[0]
    n = len(leg.legend_handles)
    rows = -(-n // max(1, leg._ncols)) + (1 if leg.get_title().get_text() else 0)
    return rows * _LEGEND_ROW_IN + 0.12


def _fixed_margins(fig: Figure) -> None:
    """Place the axes with margins sized for their labels (see the constants above).

    Left and right hold the tick labels and axis labels of the outer axes (a
    twin axis on the right), the top the title or panel titles, the bottom the
    x tick labels, the x label and the legend below it."""
    width, height = fig.get_size_inches()
    axes = [ax for ax in fig.axes if ax.get_subplotspec() is not None]
    if not axes:
        return
    left = right = _EDGE_IN + 0.04
    top = _EDGE_IN + 0.06                          # half a tick label above the top axes
    bottom = _EDGE_IN
    for ax in axes:
        spec = ax.get_subplotspec()
        if ax.yaxis.get_label_position() == "right":
            right = max(right, _EDGE_IN + _side_in(ax, ax.yaxis))
        elif spec.is_first_col():
            left = max(left, _EDGE_IN + _side_in(ax, ax.yaxis))
        if spec.is_last_row():
            label = _LABEL_IN if ax.get_xlabel() else 0.0
            bottom = max(bottom, _EDGE_IN + _TICKS_IN + 0.12 + label)
            if spec.is_last_col():     # the last x tick label may stand half out
                right = max(right, _EDGE_IN + 0.5 * _tick_chars(ax.xaxis) * _CHAR_IN)
        if spec.is_first_row() and ax.get_title():
            top = max(top, _EDGE_IN + 0.26)
    if fig._suptitle is not None and fig._suptitle.get_text():
        top += 0.26
    bottom += _legend_in(fig)
    rows, cols = axes[0].get_subplotspec().get_gridspec().get_geometry()
    # Between rows: a panel above another that has x tick labels of its own (not
    # shared with the panel below) needs their room and its x label's, too.
    gap_h = _GAP_IN
    for ax in axes:
        if not ax.get_subplotspec().is_last_row() and len(ax.get_shared_x_axes().get_siblings(ax)) == 1:
            gap_h = max(gap_h, _GAP_IN + _TICKS_IN + 0.12 + (_LABEL_IN if ax.get_xlabel() else 0.0))
    inner_h = max(height - top - bottom, 0.3 * height)
    inner_w = max(width - left - right, 0.3 * width)
    fig.subplots_adjust(left=left / width, right=1 - right / width,
                        bottom=bottom / height, top=1 - top / height,
                        hspace=gap_h * rows / max(inner_h - (rows - 1) * gap_h, 1e-3),
                        wspace=_GAP_IN * cols / max(inner_w - (cols - 1) * _GAP_IN, 1e-3))
    if fig.legends:           # just above the bottom edge, under the x label
        fig.legends[0].set_bbox_to_anchor((0.5, _EDGE_IN / height), transform=fig.transFigure)
        fig.legends[0].set_loc("lower center")


def _png(fig: Figure) -> bytes:
    """The chart as an indexed-colour PNG of at most 256 colours.

    A chart has a few colours and their anti-aliased blends: the palette
    (charts_raster.indexed_png: white and an octree of the rest, no dithering:
    deterministic) looks the same as full colour and made the example note's
    PNGs 3.2 times smaller (README, Performance). The file holds no text chunks
    and no dates: the same chart, the same bytes."""
    size, buffer = charts_raster.rgba(fig, PNG_DPI)
    return charts_raster.indexed_png(size, buffer, PNG_DPI, _PNG_LEVEL)


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
# Label placement


def _keep_labels_apart(fig: Figure) -> None:
    """Move annotation labels that overlap one placed before them.

    Labels are taken in drawing order (the earlier one keeps its place); a
    label that overlaps is tried at growing vertical then horizontal offsets
    and kept at the first position that overlaps no placed label and stays
    inside its axes. Only labels positioned in offset points are moved, so
    a label keeps pointing at its mark.
    """
    crowded = [ax for ax in fig.axes
               if sum(1 for t in ax.texts if t.get_visible() and t.get_text()) > 1]
    if not crowded:
        return                            # nothing can overlap: no need to measure
    # The axes sit where _fixed_margins put them (no layout engine), so the
    # boxes are final once the view limits and aspect are: no drawing needed
    # (a drawing cost as much as writing the PNG).
    for ax in fig.axes:
        ax.apply_aspect()
        ax.get_xlim(), ax.get_ylim()      # settles pending autoscaling
    renderer = fig._get_renderer()
    pt = fig.dpi / 72.0
    for ax in crowded:
        frame = ax.get_window_extent(renderer).expanded(1.02, 1.05)
        placed = []
        for text in ax.texts:
            if not text.get_visible() or not text.get_text():
                continue
            box = text.get_window_extent(renderer)
            movable = getattr(text, "anncoords", None) == "offset points"
            if movable and any(box.overlaps(other) for other in placed):
                box = _free_place(text, box, placed, frame, renderer, pt)
            placed.append(box)


def _free_place(text, box, placed, frame, renderer, pt):
    """Shift `text` (an offset-points annotation) to the nearest free place; its box."""
    x0, y0 = text.xyann
    h = box.height / pt + 2.0
    w = box.width / pt + 4.0
    tries = [(0.0, k * s * h) for k in (1, 2, 3) for s in (-1, 1)]
    tries += [(s * w, dy) for s in (1, -1) for dy in (0.0, -h, h)]
    for dx, dy in tries:
        text.xyann = (x0 + dx, y0 + dy)
        moved = text.get_window_extent(renderer)
        if frame.contains(moved.x0, moved.y0) and frame.contains(moved.x1, moved.y1) and \
                not any(moved.overlaps(other) for other in placed):
            return moved
    text.xyann = (x0, y0)     # no free place: keep the first choice
    return box


# ---------------------------------------------------------------------------
# Number and axis formatting


def _eng(value: float, unit: str = "") -> str:
    """A value with its unit, 1591.5 Hz -> '1.59 kHz': the one formatter, note minus.

    SI prefixes for SI units; units in _UNSCALED_UNITS get a plain number with
    three significant figures instead ('−0.347 LSB', '−39.6 dB', '0.5').
    """
    symbol = _SYMBOLS.get(unit, unit)
    if unit not in _UNSCALED_UNITS:
        return format_eng(value, symbol).replace("-", _MINUS)
    text = _plain(float(value))
    if symbol == "°":
        return text + symbol
    return f"{text} {symbol}" if symbol else text


def _plain(value: float, digits: int = 3) -> str:
    """``digits`` significant figures without prefix or exponent, trailing zeros dropped."""
    if value == 0 or not math.isfinite(value):
        return "0" if value == 0 else str(value)
    decimals = max(0, digits - 1 - math.floor(math.log10(abs(value))))
    text = f"{value:.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return text.replace("-", _MINUS)


def _unit_symbol(unit: str) -> str:
    """The symbol shown in an axis label for a registry unit code ('ohm' -> 'Ω')."""
    return _SYMBOLS.get(unit, unit)


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
        self._prepare(*self.axis.get_view_interval(), locs)

    def _prepare(self, vmin: float, vmax: float, locs) -> None:
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


class _OffsetFormatter(_AxisEngFormatter):
    """Tick labels as offsets from a reference value ('−20 f', '0', '+20 f').

    For an axis whose span is a tiny fraction of its values (an input current
    of 55.9966 nA ± 0.1 pA): full values would need six digits per tick.
    """

    def __init__(self, ref: float):
        self.ref = ref

    def set_locs(self, locs):
        vmin, vmax = self.axis.get_view_interval()
        self._prepare(vmin - self.ref, vmax - self.ref, [v - self.ref for v in locs])

    def __call__(self, x, pos=None):
        d = x - self.ref
        if abs(d) < 1e-9 * max(abs(self.ref), 1e-300):
            return "0"
        text = super().__call__(d, pos)
        return text if text.startswith(_MINUS) else "+" + text


class _OffsetLocator(ticker.MaxNLocator):
    """At most `nbins` + 1 ticks at round offsets from a reference value (0 among them)."""

    def __init__(self, ref: float, nbins: int = 4):
        super().__init__(nbins)
        self.ref = ref

    def tick_values(self, vmin, vmax):
        return self.ref + super().tick_values(vmin - self.ref, vmax - self.ref)


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


def _vspan(ax, lo: float, hi: float, **style) -> Rectangle:
    """``ax.axvspan(lo, hi, **style)`` on axes whose x and y ranges the chart sets itself:
    the same patch, without the data limits axvspan works out through the axis
    transforms (a tenth of a Bode chart's drawing, for limits nobody reads)."""
    patch = Rectangle((lo, 0), hi - lo, 1, **style)
    patch.set_transform(ax.get_xaxis_transform(which="grid"))
    ax.add_artist(patch)
    patch.get_path()._interpolation_steps = matplotlib.axis.GRIDLINE_INTERPOLATION_STEPS
    return patch


def _vline(ax, x: float, **style) -> Line2D:
    """``ax.axvline(x, **style)`` on axes whose ranges the chart sets itself (see _vspan)."""
    line = Line2D([x, x], [0, 1], transform=ax.get_xaxis_transform(which="grid"), **style)
    ax.add_artist(line)
    line.get_path()._interpolation_steps = matplotlib.axis.GRIDLINE_INTERPOLATION_STEPS
    return line


def _fill(ax, x, lo, hi, **style) -> FillBetweenPolyCollection:
    """``ax.fill_between(x, lo, hi, **style)`` on axes whose ranges the chart sets itself (see
    _vspan): the same polygons (split where a value is not finite), without the data limits."""
    t, a, b = (np.ma.masked_invalid(np.asarray(v, dtype=float)) for v in (x, lo, hi))
    collection = FillBetweenPolyCollection("x", t, a, b, **style)
    ax.add_collection(collection, autolim=False)
    return collection


def _log_fraction(ax, x: float) -> float:
    lo, hi = ax.get_xlim()
    return (math.log10(x) - math.log10(lo)) / (math.log10(hi) - math.log10(lo))


def _legend(fig: Figure, handles: list, max_cols: int = 4, **kwargs) -> None:
    """One legend below the plot area, in as many columns as fit the width."""
    if not handles:
        return
    longest = max(len(h.get_label()) for h in handles)
    fit = max(1, int(100 * fig.get_figwidth() / WIDTH_IN // (longest + 8)))
    legend = fig.legend(handles=handles, loc="outside lower center",
                        ncols=min(len(handles), fit, max_cols), **kwargs)
    charts_raster.layout_once(legend._legend_box)


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
