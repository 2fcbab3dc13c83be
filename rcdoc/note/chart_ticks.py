"""Ticks of a chart drawn with less of matplotlib's machinery, to the same pixels.

matplotlib makes one Tick object (three lines, two texts) for every tick it
places, and that was most of the time a chart took to draw. rcdoc.note.charts
calls these once a chart is laid out: minor ticks of log axes become two
lines per axis, the major ticks' grid lines and marks one line each per axis
(their labels stay Ticks'), an axis works its ticks out once per drawing,
major locators stop placing ticks outside the view, and axes without a label
skip the measuring that places it. Every chart of the example board and of
the 40-stage bench board comes out byte for byte as before (bench/charts.py,
tests/test_chart_ticks.py).
"""

from __future__ import annotations

import numpy as np
from matplotlib import ticker
from matplotlib.figure import Figure
from matplotlib.lines import Line2D


def light_minor_ticks(fig: Figure) -> None:
    """Draw the minor ticks of log axes as two lines per axis, not one Tick each.

    matplotlib makes a Tick (three lines and two texts) per minor tick; the 7
    decades of a Bode chart have some 50 of them on each panel, and making them
    took half the chart's drawing time. The same marks and grid lines, with the
    properties of the axis's own minor tick, are drawn instead as one line of
    tick markers and one line of grid segments (NaN between them), where the
    Ticks would have been, and the axis is left with no minor locator.
    """
    jobs = []
    for ax in fig.axes:
        for axis, name in ((ax.xaxis, "x"), (ax.yaxis, "y")):
            if isinstance(axis.get_minor_locator(), ticker.LogLocator):
                # An axis not drawn (the shared x axis of a twin) has none to draw.
                jobs.append((ax, axis, name, _view_minor_locs(axis)))
    for ax, axis, name, locs in jobs:
        if not axis.get_visible():
            continue
        tick = axis.get_minor_ticks(1)[0]       # the template matplotlib would copy
        for line, template in _merged_lines(ax, name, tick, locs):
            line.set_zorder(axis.get_zorder())
            ax.add_artist(line)
            # As the Tick's: grid lines clipped to the axes, tick marks outside them not.
            line.set_clip_box(template.get_clip_box())
            line.set_clip_path(template.get_clip_path())
    for _, axis, _, _ in jobs:
        axis.set_minor_locator(ticker.NullLocator())


_PIECES = (("gridline", "grid"), ("tick1line", "tick1"), ("tick2line", "tick2"))


def _merged_lines(ax, name: str, tick, locs: np.ndarray) -> list:
    """The grid line and tick marks of ``tick`` at every location of ``locs``, as one line
    each (grid segments with NaN between them; one marker per location): (line, the
    Tick's line it copies) pairs."""
    if not locs.size:
        return []
    along = np.repeat(locs, 3)
    along[2::3] = np.nan
    across = np.tile([0.0, 1.0, np.nan], locs.size)
    transform = ax.get_xaxis_transform if name == "x" else ax.get_yaxis_transform
    data = {"grid": (along, across), "tick1": (locs, np.zeros(locs.size)),
            "tick2": (locs, np.ones(locs.size))}
    lines = []
    for attr, which in _PIECES:
        template = getattr(tick, attr)
        if not template.get_visible():
            continue
        u, v = data[which]
        line = Line2D([], [])
        line.update_from(template)
        line.set_data((u, v) if name == "x" else (v, u))
        line.set_transform(transform(which))
        lines.append((line, template))
    return lines


def light_major_ticks(fig: Figure) -> None:
    """Draw the grid lines and tick marks of the major ticks as one line each per axis.

    matplotlib draws every major Tick's grid line and tick mark as lines of their
    own, the bulk of drawing an axis. Each axis is given a stand-in for its
    ``_update_ticks`` that returns the same ticks, wrapped so that drawing them
    draws the labels as before but their lines (all alike) once for the axis, at
    the same places and with the same properties, at the place of the first
    tick's: the same pixels. Ticks whose lines differ are drawn as they are.
    """
    for ax in fig.axes:
        for axis, name in ((ax.xaxis, "x"), (ax.yaxis, "y")):
            if not isinstance(vars(axis).get("_update_ticks"), _LabelTicks):
                axis._update_ticks = _LabelTicks(ax, axis, name)
                axis._get_ticklabel_bboxes = _LabelBoxes(axis)


class _LabelBoxes:
    """An axis's ``_get_ticklabel_bboxes``, measured once for the same ticks and renderer
    (_LabelTicks returns the same list while nothing they depend on changed)."""

    def __init__(self, axis):
        self.axis = axis
        self.last = None

    def __call__(self, ticks, renderer=None):
        if self.last is not None and self.last[0] is ticks and self.last[1] is renderer:
            return self.last[2]
        out = type(self.axis)._get_ticklabel_bboxes(self.axis, ticks, renderer)
        self.last = (ticks, renderer, out)
        return out


class _LabelTicks:
    """An axis's ``_update_ticks``, its ticks drawn as labels plus merged lines."""

    def __init__(self, ax, axis, name: str):
        self.ax, self.axis, self.name = ax, axis, name
        self.last = None

    def __call__(self):
        # Drawing a chart asks an axis for its ticks several times (to draw them, to
        # place its label and the labels of the axes aligned with it); in between
        # nothing they depend on changes (the objects themselves are in the key).
        axis = self.axis
        key = (axis.major.locator, axis.major.formatter, axis.minor.locator, axis.minor.formatter,
               tuple(axis.get_view_interval()), tuple(self.ax.bbox.bounds))
        if self.last is not None and _same(self.last[0], key):
            return self.last[1]
        out = self._ticks()
        self.last = (key, out)
        return out

    def _ticks(self):
        ticks = type(self.axis)._update_ticks(self.axis)
        if not ticks:
            return ticks
        first = ticks[0]
        shown = [(t.get_visible(), *(getattr(t, attr).get_visible() for attr, _ in _PIECES))
                 for t in ticks]
        if not first.get_visible() or any(s != shown[0] for s in shown):
            return ticks
        locs = np.array([t.get_loc() for t in ticks], dtype=float)
        lines = (self.ax, self.name, first, locs)
        return [_Labels(t, lines if i == 0 else None) for i, t in enumerate(ticks)]


def _same(a: tuple, b: tuple) -> bool:
    return all(x is y for x, y in zip(a[:4], b[:4])) and a[4:] == b[4:]


class _Labels:
    """A Tick as Axis.draw sees it: its labels, and (for the first) all the axis's lines."""

    def __init__(self, tick, lines):
        self.tick, self.lines = tick, lines
        self.label1, self.label2 = tick.label1, tick.label2

    def __getattr__(self, name):
        return getattr(self.tick, name)

    def draw(self, renderer):
        renderer.open_group(self.tick.__name__, gid=self.tick.get_gid())     # as Tick.draw
        if self.lines is not None:
            ax, name, first, locs = self.lines
            for line, template in _merged_lines(ax, name, first, locs):
                line.set_figure(ax.get_figure(root=False))
                line.axes = ax
                line.set_clip_box(template.get_clip_box())
                line.set_clip_path(template.get_clip_path())
                line.draw(renderer)
        self.label1.draw(renderer)
        self.label2.draw(renderer)
        renderer.close_group(self.tick.__name__)
        self.tick.stale = False


def lean_axes(fig: Figure, free: tuple) -> None:
    """Spare matplotlib work that draws nothing, once the chart is laid out.

    Every tick matplotlib places costs a Tick (three lines, two texts) even when
    it falls outside the view and is not drawn: a locator returns a tick beyond
    each end, a fifth of a chart's ticks. The major locators are wrapped to
    return the ticks in the view only, and their formatters to still see every
    tick the locator made (a formatter picks its decimals and offset from them):
    the same labels. An axis without a label gets fixed label coordinates, so
    matplotlib does not measure the tick labels of it and its siblings to place
    an empty text. ``free``: the formatter classes whose labels do not depend on
    a tick's place in the list (the other formatters' axes keep all their ticks).
    """
    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            locator, formatter = axis.get_major_locator(), axis.get_major_formatter()
            if not isinstance(locator, _InView) and isinstance(formatter, free):
                wrapped = _InView(locator)
                axis.set_major_locator(wrapped)
                axis.set_major_formatter(_AllLocs(formatter, wrapped))
            if not axis.label.get_text():
                axis.set_label_coords(0.5, 0.5)


class _InView(ticker.Locator):
    """The ticks of another locator that lie in the view (as matplotlib would draw).

    It keeps the other locator's last answer for its view and axes box: the
    axis's formatter asks for the same ticks right after (_AllLocs)."""

    def __init__(self, inner: ticker.Locator):
        self.inner = inner
        self.last = None

    def set_axis(self, axis):
        super().set_axis(axis)
        self.inner.set_axis(axis)

    def every(self):
        """All the ticks of the other locator (in view or not)."""
        key = (tuple(self.axis.get_view_interval()), tuple(self.axis.axes.bbox.bounds))
        if self.last is None or self.last[0] != key:
            self.last = (key, self.inner())
        return self.last[1]

    def __call__(self):
        locs = np.asarray(self.every(), dtype=float)
        return locs[_in_view(self.axis, locs)]

    def tick_values(self, vmin, vmax):
        return self.inner.tick_values(vmin, vmax)


class _AllLocs(ticker.Formatter):
    """A formatter prepared with every tick of its locator, in view or not."""

    def __init__(self, inner: ticker.Formatter, locator: _InView):
        self.inner, self.locator = inner, locator

    def format_ticks(self, values):
        self.inner.set_locs(self.locator.every())
        return [self.inner(value) for value in values]

    def __call__(self, x, pos=None):
        return self.inner(x, pos)

    def get_offset(self):
        return self.inner.get_offset()


def _in_view(axis, locs: np.ndarray) -> np.ndarray:
    """Mask of the locations inside the view, with matplotlib's own tolerance
    (transforms._interval_contains_close, on the scale's coordinates)."""
    lo, hi = sorted(axis.get_view_interval())
    t_lo, t_hi = axis.get_transform().transform([lo, hi])
    t = axis.get_transform().transform(locs)
    eps = 1e-10 * abs(t_hi - t_lo)
    return (t >= t_lo - eps) & (t <= t_hi + eps)


def _view_minor_locs(axis) -> np.ndarray:
    """The minor tick locations matplotlib would draw: those in the view, none on a major tick."""
    locs = np.asarray(axis.get_minorticklocs(), dtype=float)
    return locs[_in_view(axis, locs)]
