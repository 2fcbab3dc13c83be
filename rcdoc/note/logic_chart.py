"""The chart of a logic input's edges: press and release side by side.

Each panel shows the input voltage after the contact closes (press) or opens
(release): the nominal curve, the Monte Carlo min-max band, the input's
threshold range that the edge must cross (a horizontal band), the other
threshold range for orientation, and the nominal crossing time with the
range of crossing times over the samples. Arrays arrive computed; nothing
here knows the circuit.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from rcdoc.note import palette as pal
from rcdoc.note.charts import (_AxisEngFormatter, _arr, _check_fig_id, _eng, _finish, _grid, _legend,
                     _new_figure, _same_shape, _styled, _tick_formatter)


def edges(fig_id: str, panels: Sequence[Mapping], *, ylabel: str = "Input [V]",
          fmt: str = "svg") -> str | bytes:
    """``panels``: [{"title", "t", "nominal", "lo", "hi", "band": (lo, hi) the
    threshold range crossed, "other": (lo, hi) the other range, "cross": nominal
    crossing time (NaN if none), "cross_range": (min, max) over the samples}]."""
    _check_fig_id(fig_id)
    with _styled(fig_id):
        fig = _new_figure(3.0)
        axes = fig.subplots(1, len(panels), sharey=True, squeeze=False)[0]
        for ax, p in zip(axes, panels):
            t = _arr(p["t"], "t")
            y = _same_shape(t, _arr(p["nominal"], "nominal"), "nominal")
            _grid(ax)
            ax.axhspan(*p["other"], color=pal.GRID, linewidth=0, zorder=0.4)
            ax.axhspan(*p["band"], color=pal.ALLOWED, linewidth=0, zorder=0.5)
            ax.fill_between(t, _same_shape(t, _arr(p["lo"], "lo"), "lo"),
                            _same_shape(t, _arr(p["hi"], "hi"), "hi"),
                            color=pal.BAND_OUTER, linewidth=0, zorder=1)
            c0, c1 = p["cross_range"]
            if np.isfinite(c0) and np.isfinite(c1):
                ax.axvspan(c0, c1, color=pal.SPREAD, linewidth=0, zorder=0.6)
            if np.isfinite(p["cross"]):
                ax.axvline(p["cross"], color=pal.PASS, linewidth=0.9, linestyle=(0, (4, 2)),
                           zorder=2)
                ax.annotate(_eng(float(p["cross"]), "s"), (p["cross"], 1.0),
                            xycoords=("data", "axes fraction"), xytext=(3, -10),
                            textcoords="offset points", fontsize=7.5, color=pal.PASS)
            ax.plot(t, y, color=pal.NOMINAL, linewidth=1.5, zorder=3)
            ax.set_xlim(float(t[0]), float(t[-1]))
            ax.set_title(str(p["title"]))
            ax.xaxis.set_major_formatter(_AxisEngFormatter())
            ax.set_xlabel("Time [s]")
        axes[0].yaxis.set_major_formatter(_tick_formatter("V"))
        axes[0].set_ylabel(ylabel)
        handles = [Line2D([], [], color=pal.NOMINAL, linewidth=1.5, label="nominal"),
                   Patch(color=pal.BAND_OUTER, label="Monte Carlo min–max"),
                   Patch(color=pal.ALLOWED, label="threshold range crossed"),
                   Patch(color=pal.GRID, label="other threshold range"),
                   Line2D([], [], color=pal.PASS, linewidth=0.9, linestyle=(0, (4, 2)),
                          label="crossing (nominal)"),
                   Patch(color=pal.SPREAD, label="crossing, sample range")]
        _legend(fig, handles)
        return _finish(fig, fig_id, "", fmt)
