"""The validated project as frozen dataclasses, SI floats inside.

project.py builds these from TOML; everything downstream reads them. No
parsing and no physics here.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class Part:
    """One part of a stage, by role (``r``, ``c1``, ...).

    ``kind`` is "R", "C" or "L" (from the role's first letter). Tolerances are
    fractions: ``tol_plus`` = 0.8, ``tol_minus`` = 0.2 for +80 %/−20 %.
    """

    role: str
    kind: str
    value: float
    ref: str = ""
    tol_plus: float = 0.05
    tol_minus: float = 0.05
    tcr_ppm: float | None = None          # ppm/K; resistors, film and class I capacitors
    dielectric: str | None = None          # "X7R", "C0G", "film-pp", ...
    dc_bias: tuple[float, float] | None = None  # (at volts, fractional change, e.g. -0.4)
    temperature_change: tuple[float, float] | None = None  # class II: (at °C, fractional change)
    bias_v: float | None = None            # DC volts across the capacitor in this circuit
    voltage_rating_v: float | None = None
    power_rating_w: float | None = None
    pulse_energy_j: float | None = None    # resistors: energy per pulse rating
    pulse_power_w: float | None = None     # resistors: peak (pulse) power rating
    model: str = ""
    path: str = ""                         # key path, e.g. "stage[2].parts.c"


@dataclass(frozen=True)
class Check:
    """A requirement on one metric; ``min``/``max`` in the metric's SI unit."""

    metric: str
    min: float | None = None
    max: float | None = None
    at_hz: float | None = None
    within: float | None = None            # settling band, fraction of the final value
    bits: int | None = None                # settling to half an LSB of an N-bit converter
    full_scale: float | None = None        # with bits: LSB = full_scale / 2^bits (volts)
    required_yield: float = 1.0
    path: str = ""


@dataclass(frozen=True)
class Drive:
    """Input signal for time-domain metrics: a step or a PWM wave of ``amplitude_v``."""

    kind: str                              # "step" or "pwm"
    amplitude_v: float
    frequency_hz: float | None = None
    duty: float | None = None


@dataclass(frozen=True)
class Stage:
    """One filter or snubber stage. ``options`` holds the kind's own keys, parsed by the kind."""

    index: int                             # 1-based position in the file
    id: str
    title: str
    kind: str
    notes: str = ""
    source_r: float = 0.0
    source_l: float = 0.0
    load_r: float | None = None
    load_c: float | None = None
    marks_hz: tuple[float, ...] = ()
    drive: Drive | None = None
    parts: dict[str, Part] = field(default_factory=dict)
    checks: tuple[Check, ...] = ()
    options: dict[str, Any] = field(default_factory=dict)
    # Identical channels: role -> designator per channel, channel 1 first (rcdoc.input.channels).
    channels: tuple[dict[str, str], ...] = ()

    @property
    def path(self) -> str:
        return f"stage[{self.index}]"


@dataclass(frozen=True)
class Analysis:
    samples: int = 2000
    seed: int = 1
    distribution: str = "uniform"
    temperature_c: tuple[float, float] = (25.0, 25.0)
    points_per_decade: int = 50
    sweep_hz: tuple[float, float] | None = None
    bom: str | None = None
    bom_wins: bool = False


@dataclass(frozen=True)
class Board:
    name: str
    revision: str
    date: str
    authors: tuple[str, ...] = ()
    notes: str = ""
    hazardous_voltage_v: float = 60.0


@dataclass(frozen=True)
class Project:
    file: str                              # path of the TOML file as given
    board: Board
    analysis: Analysis
    stages: tuple[Stage, ...]
    # BOM rows (rcdoc.input.bom.BomRow) whose designators no stage uses, in file order.
    bom_unused: tuple = ()
