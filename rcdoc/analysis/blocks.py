"""Block specs: what a kind's own page shows, as frozen data (tables, texts, charts).

A kind with its own analysis (snubber, debounce, sampled input) describes the
figures and tables of its page with these specs; the note (rcdoc.note.blocks)
draws them, one drawer per spec type. Nothing here draws or imports a
drawing library, so ``rcdoc check`` and ``rcdoc diff`` never pay for charts.

Arrays are stored read-only (``_frozen``): a spec is a snapshot of the
analysis, shared between the JSON, the note and the build cache.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Union

import numpy as np

__all__ = ["Curve", "LevelBand", "Marker", "SettleWindow", "TableBlock", "TextBlock",
           "WaveformChart", "SweepChart", "EdgePanel", "EdgeChart", "Block", "LEAD", "BODY"]

# Where a block goes on the stage's page: LEAD before the metrics table
# (cautions), BODY with the figures after the generic ones.
LEAD = "lead"
BODY = "body"


def _frozen(a) -> np.ndarray:
    """A read-only float copy of ``a`` (a spec never changes after the analysis)."""
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


@dataclass(frozen=True)
class Curve:
    """One curve of a chart: ``y`` against the chart's x (or its own ``t``)."""
    label: str
    y: np.ndarray
    role: str = ""            # waveform style: "without", "with", "input"
    t: np.ndarray | None = None
    unit: str = ""            # sweep: the curve's unit
    axis: str = "left"        # sweep: "left" or "right" y axis

    def __post_init__(self):
        object.__setattr__(self, "y", _frozen(self.y))
        if self.t is not None:
            object.__setattr__(self, "t", _frozen(self.t))


@dataclass(frozen=True)
class LevelBand:
    """A horizontal band on the y axis (an allowed range, a threshold range)."""
    lo: float
    hi: float
    label: str = ""


@dataclass(frozen=True)
class Marker:
    """A vertical line at ``x`` with its legend text."""
    x: float
    label: str


@dataclass(frozen=True)
class SettleWindow:
    """A tolerance strip [lo, hi] and a line at the settling time ``t``."""
    t: float
    lo: float
    hi: float
    label: str


@dataclass(frozen=True)
class TableBlock:
    title: str
    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    note: str | None = None
    place: str = BODY

    def __post_init__(self):
        object.__setattr__(self, "columns", tuple(self.columns))
        object.__setattr__(self, "rows", tuple(tuple(r) for r in self.rows))


@dataclass(frozen=True)
class TextBlock:
    title: str
    paragraphs: tuple[str, ...]
    place: str = BODY

    def __post_init__(self):
        object.__setattr__(self, "paragraphs", tuple(self.paragraphs))


@dataclass(frozen=True)
class WaveformChart:
    """A waveform against time: the nominal, its Monte Carlo min-max band, other curves."""
    fig_id: str
    title: str
    caption: str
    t_s: np.ndarray
    nominal: np.ndarray
    y_label: str
    nominal_label: str = "nominal"
    band: tuple[np.ndarray, np.ndarray] | None = None
    curves: tuple[Curve, ...] = ()
    window: SettleWindow | None = None
    place: str = BODY

    def __post_init__(self):
        object.__setattr__(self, "t_s", _frozen(self.t_s))
        object.__setattr__(self, "nominal", _frozen(self.nominal))
        object.__setattr__(self, "curves", tuple(self.curves))
        if self.band is not None:
            object.__setattr__(self, "band", (_frozen(self.band[0]), _frozen(self.band[1])))


@dataclass(frozen=True)
class SweepChart:
    """Curves against one swept quantity (left and optionally right y axis)."""
    fig_id: str
    title: str
    caption: str
    x: np.ndarray
    x_label: str
    x_unit: str
    curves: tuple[Curve, ...]
    logx: bool = True
    marker_x: float | None = None       # the chosen value
    markers: tuple[Marker, ...] = ()
    allowed: LevelBand | None = None
    place: str = BODY

    def __post_init__(self):
        object.__setattr__(self, "x", _frozen(self.x))
        object.__setattr__(self, "curves", tuple(self.curves))
        object.__setattr__(self, "markers", tuple(self.markers))


@dataclass(frozen=True)
class EdgePanel:
    """One logic edge: nominal and band of the input voltage, the threshold ranges,
    the nominal crossing time (NaN if none) and its spread over the samples."""
    title: str
    t: np.ndarray
    nominal: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    band: tuple[float, float]       # the threshold range this edge crosses
    other: tuple[float, float]      # the other edge's range
    cross: float
    cross_range: tuple[float, float]

    def __post_init__(self):
        for name in ("t", "nominal", "lo", "hi"):
            object.__setattr__(self, name, _frozen(getattr(self, name)))


@dataclass(frozen=True)
class EdgeChart:
    """Logic edges side by side (press and release of a debounced contact)."""
    fig_id: str
    title: str
    caption: str
    panels: tuple[EdgePanel, ...] = field(default_factory=tuple)
    place: str = BODY

    def __post_init__(self):
        object.__setattr__(self, "panels", tuple(self.panels))


Block = Union[TableBlock, TextBlock, WaveformChart, SweepChart, EdgeChart]
