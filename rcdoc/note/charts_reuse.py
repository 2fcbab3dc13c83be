"""One figure per kind of chart and process, cleared and drawn again for the next chart.

A note draws the same kinds of chart again and again (a Bode chart, a phasor
diagram and a histogram or two per stage). Making a figure's axes, and the
Tick objects (three lines, two texts each) that every axis makes for its tick
marks, cost about a third of a chart's drawing. `reused_figure` keeps, per
kind of chart and size, the figure and axes that the first chart of that kind
made, and hands them to the next one cleared by matplotlib's own
`Axes.clear` (artists, limits, scales, locators, labels, grids back to their
defaults) but with the axes' Tick objects kept: `clear` treats the kept ticks
as it would fresh ones, and the chart then sets them up as it did before.
So a chart kind must set up its ticks the same way every time (any call that
changes ticks made unconditionally); every chart of the example board and the
40-stage bench board comes out byte for byte as from a new figure
(bench/charts.py, tests/test_charts_reuse.py).

Four more repetitions are spared on a kept figure: its axes' background
rectangle (that every line, patch and tick is clipped to) keeps its transform
instead of working it out for each of them (`_AxesPatch`), and `clear` keeps
that rectangle (set up as a new one) instead of making another and clipping
every kept tick to it again, and leaves the kept ticks' grid as the chart kind
sets it every time, instead of turning it off on every tick for the chart to
turn it on again; and the tick settings a chart makes again as the last chart
of its kind made them (its grid, hidden labels) are recorded for new ticks but
not applied once more to the kept ticks, which have them (`_SameParams`).

Figures are kept per process (a worker of a parallel build has its own); the
caller must finish a chart (draw or save it) before asking for the next figure
of its kind.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import matplotlib as mpl
from matplotlib import artist as martist
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle
from matplotlib.transforms import Bbox

_KEPT: dict[tuple, tuple[Figure, tuple, dict]] = {}
_PARS = ("left", "right", "bottom", "top", "wspace", "hspace")

#: Off switch (tests compare reused figures against new ones).
ENABLED = True


def reused_figure(kind: str, width_in: float, height_in: float,
                  make_axes: Callable[[Figure], Sequence]) -> tuple[Figure, tuple]:
    """A figure of ``width_in`` x ``height_in`` with the axes ``make_axes(fig)`` makes
    (a flat sequence), as new: the first time made, afterwards the kept one cleared."""
    key = (kind, float(width_in), float(height_in))
    kept = _KEPT.get(key) if ENABLED else None
    if kept is None:
        fig = Figure(figsize=(width_in, height_in))
        FigureCanvasSVG(fig)
        axes = tuple(make_axes(fig))
        if ENABLED:
            for ax in axes:
                ax._gen_axes_patch = _AxesPatch.unit
                ax.patch = _AxesPatch.like(ax.patch)
                for axis in (ax.xaxis, ax.yaxis):
                    axis.set_tick_params = _SameParams(axis)
            pars = {k: getattr(fig.subplotpars, k) for k in _PARS}
            _KEPT[key] = (fig, axes, pars)
        return fig, axes
    fig, axes, pars = kept
    _clear_figure(fig)
    # The axes back where a new figure has them: what a chart computes in data units from
    # sizes in points (an arrow head's extent, for the data limits) depends on it.
    fig.subplots_adjust(**pars)
    for ax in axes:
        _clear_axes(ax)
    return fig, axes


def _clear_figure(fig: Figure) -> None:
    """Back to a new figure's state: no legend, no title, the default resolution, the SVG
    canvas (a PNG's drawing left an Agg canvas, whose text measures differ)."""
    for legend in list(fig.legends):
        legend.remove()
    for text in list(fig.texts):
        text.remove()
    fig._suptitle = None
    fig.set_dpi(mpl.rcParams["figure.dpi"])
    FigureCanvasSVG(fig)
    fig.stale = True


def _clear_axes(ax) -> None:
    """`Axes.clear`, keeping each axis's Tick objects (clear would drop them)."""
    axes = (ax.xaxis, ax.yaxis)
    for axis in axes:
        if isinstance(vars(axis).get("set_tick_params"), _SameParams):
            axis.set_tick_params.new_chart()
        axis.reset_ticks = _keep_ticks           # clear calls it: the kept ticks stay
        axis.set_clip_path = _ClipTicks(axis)
    # clear turns the grid off on every kept tick (twice), for the chart to turn it on
    # again: a chart sets its grid the same way every time (see the module's docstring),
    # so the kept ticks keep the grid the last chart of the kind left them.
    ax.grid = _keep_grid
    # clear makes a new background rectangle and clips every kept tick to it; the kept
    # one, set up by clear as a new one is, clips them as before (see _ClipTicks).
    if isinstance(ax.patch, _AxesPatch):
        ax._gen_axes_patch = _Same(ax.patch)
    try:
        ax.clear()
        for spine in ax.spines.values():
            # A cleared spine places itself when first asked, and then resets its axis's
            # ticks: placed now, while the kept ticks are protected.
            spine._ensure_position_is_set()
    finally:
        for axis in axes:
            del axis.reset_ticks
            del axis.set_clip_path
        del ax.grid
        ax._gen_axes_patch = _AxesPatch.unit
    for axis in axes:
        axis._autolabelpos = True                # rcdoc.note.chart_ticks.lean_axes may fix it
    ax.dataLim.set(Bbox.null())                  # as new (clear only ignores the old limits)


def _keep_ticks() -> None:
    return None


class _SameParams:
    """Axis.set_tick_params of a kept axis: a call that repeats, in its place, the calls
    the last chart made on the axis (a chart kind sets its ticks up the same way every
    time) records the settings for new ticks and the offset text as matplotlib does, but
    leaves the kept ticks, which have them from the last chart already; from the first
    call that differs on, every call applies to the ticks too."""

    def __init__(self, axis):
        self.axis, self.last, self.now, self.same = axis, [], [], False

    def new_chart(self) -> None:
        self.last, self.now, self.same = self.now, [], True

    def __call__(self, which="major", reset=False, **kwargs):
        axis = self.axis
        call = (which, reset, kwargs)
        self.same = self.same and not reset and len(self.now) < len(self.last) and \
            _equal(self.last[len(self.now)], call)
        self.now.append(call)
        if not self.same:
            return type(axis).set_tick_params(axis, which, reset, **kwargs)
        kept = {name: vars(axis)[name] for name in ("majorTicks", "minorTicks") if name in vars(axis)}
        axis.majorTicks, axis.minorTicks = [], []
        try:
            return type(axis).set_tick_params(axis, which, reset, **kwargs)
        finally:
            for name in ("majorTicks", "minorTicks"):
                if name in kept:
                    setattr(axis, name, kept[name])
                else:
                    delattr(axis, name)


def _equal(a: tuple, b: tuple) -> bool:
    """The same set_tick_params call (values compared by type and value)."""
    try:
        return a[:2] == b[:2] and a[2].keys() == b[2].keys() and all(
            type(a[2][k]) is type(b[2][k]) and bool(a[2][k] == b[2][k]) for k in a[2])
    except (TypeError, ValueError):             # values without a plain equality
        return False


class _Same:
    """Axes._gen_axes_patch handing back the kept background rectangle."""

    def __init__(self, patch):
        self.patch = patch

    def __call__(self):
        return self.patch


class _ClipTicks:
    """Axis.set_clip_path that clips only the ticks not yet clipped to that rectangle: a
    kept tick clipped to the kept background rectangle keeps the clip box made from it
    (the rectangle's kept transform: the same box)."""

    def __init__(self, axis):
        self.axis = axis

    def __call__(self, path, transform=None):
        axis = self.axis
        martist.Artist.set_clip_path(axis, path, transform)
        for tick in axis.majorTicks + axis.minorTicks:
            if transform is not None or vars(tick).get("_rcdoc_clip") is not path:
                tick.set_clip_path(path, transform)
                tick._rcdoc_clip = path if transform is None else None
        axis.stale = True


def _keep_grid(*args, **kwargs) -> None:
    return None


class _AxesPatch(Rectangle):
    """The axes' background rectangle, with its transform worked out once.

    Every line, patch and tick added to the axes is clipped to this rectangle,
    and matplotlib works the rectangle's transform out anew for each (some
    thirty times a chart, as long as drawing a few lines). The transform is
    kept while the rectangle's geometry and its transform to the figure (the
    axes' own, which follows the axes when they move) stay the ones it was made
    from: the same transform, the same pixels."""

    _kept: tuple = ((), None, None)      # (geometry, transform to the figure, the transform)

    @classmethod
    def unit(cls) -> "_AxesPatch":
        """What Axes._gen_axes_patch makes: the unit square in axes coordinates."""
        return cls((0.0, 0.0), 1.0, 1.0)

    @classmethod
    def like(cls, patch: Rectangle) -> "_AxesPatch":
        """The background rectangle of a new axes, as this class (colours, transform, clip)."""
        new = cls.unit()
        new.update_from(patch)
        new.set_figure(patch.get_figure(root=False))
        return new

    def get_transform(self):
        geometry = (self._x0, self._y0, self._width, self._height, self.angle,
                    self.rotation_point, self._aspect_ratio_correction)
        geometry_was, outer, kept = self._kept
        if kept is None or geometry != geometry_was or outer is not self._transform:
            kept = super().get_transform()
            self._kept = (geometry, self._transform, kept)
        return kept
