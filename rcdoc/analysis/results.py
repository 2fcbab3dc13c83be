"""Typed results that cross from the analysis to the note and the commands.

What it is for: every number the note, the JSON summary, the terminal table
and ``rcdoc diff`` read about an analysed stage travels in one of these frozen
dataclasses: a metric with its samples and worst case, the response band, the
time waveforms, the phasors, the parts table rows, the part stresses, the
preferred-value alternatives and a kind's own result. No free dict crosses a
module boundary, and parameters such as the settling band travel typed (the
note never parses a label back).

What it must not do: compute physics or draw; numpy arrays held here are made
read-only so a reader cannot change a result another reader sees.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Iterator, Mapping, Protocol, runtime_checkable

import numpy as np

from rcdoc.analysis.checks import Verdict
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Check, Part, Stage
from rcdoc.analysis.network import Network

__all__ = ["SettlingBand", "MetricResult", "Waveform", "ResponseBand", "Phasors", "PartRow",
           "PartStress", "Alternative", "StageAlternatives", "KindResult",
           "StageResult", "Verdict", "DEFAULT_SETTLING", "param_of"]


class FrozenMap(Mapping):
    """A read-only mapping that pickles (the build cache stores results as pickles)."""

    __slots__ = ("_d",)

    def __init__(self, items=()):
        object.__setattr__(self, "_d", dict(items))

    def __getitem__(self, key):
        return self._d[key]

    def __iter__(self) -> Iterator:
        return iter(self._d)

    def __len__(self) -> int:
        return len(self._d)

    def __repr__(self) -> str:
        return f"FrozenMap({self._d!r})"

    def __reduce__(self):
        return (FrozenMap, (self._d,))

    def __setattr__(self, name, value):
        raise AttributeError("FrozenMap is read-only")


class _ReadOnlyAgain:
    """Unpickled (from a worker or the build cache), arrays are read-only again."""

    def __setstate__(self, state):
        self.__dict__.update(state)
        self.__post_init__()


def _frozen(arr) -> np.ndarray | None:
    """A read-only array (a view when the input is an array already)."""
    if arr is None:
        return None
    a = np.asarray(arr)
    if a.flags.writeable:
        a = a.view()
        a.setflags(write=False)
    return a


@dataclass(frozen=True)
class SettlingBand:
    """The band a settling time is measured to: a share of the step, or half an LSB
    of ``bits`` (of the step, or of ``full_scale_v`` volts when given)."""

    within: float | None = None
    bits: int | None = None
    full_scale_v: float | None = None

    @property
    def text(self) -> str:
        """The label the note and the JSON show ("within 1 %", "12 bits of 3.3 V")."""
        if self.bits is not None and self.full_scale_v is not None:
            from rcdoc.input.quantities import format_quantity
            return f"{self.bits} bits of {format_quantity(self.full_scale_v, 'V', 6)}"
        if self.bits is not None:
            return f"{self.bits} bits"
        return f"within {self.within * 100:g} %"

    def fraction(self, final_v: float) -> float:
        """The band as a share of a final value ``final_v`` (for drawing it)."""
        if self.bits is not None and self.full_scale_v is not None:
            return self.full_scale_v / 2.0 ** (self.bits + 1) / max(abs(final_v), 1e-300)
        if self.bits is not None:
            return 2.0 ** -(self.bits + 1)
        return float(self.within)


DEFAULT_SETTLING = SettlingBand(within=0.01)     # the band when no check names one


def param_of(name: str, chk: Check | None) -> SettlingBand | None:
    """The typed parameter of a metric request: the settling band, or None."""
    if name != "settling":
        return None
    if chk is None or chk.metric != "settling":
        return DEFAULT_SETTLING
    if chk.bits is not None:
        return SettlingBand(bits=chk.bits, full_scale_v=chk.full_scale)
    return SettlingBand(within=chk.within)


@dataclass(frozen=True)
class MetricResult(_ReadOnlyAgain):
    """One metric of one stage: nominal, Monte Carlo samples, worst case, sensitivities."""

    name: str
    at_hz: float | None
    param: SettlingBand | None
    nominal: float
    samples: np.ndarray                  # (S,) read-only
    worst_case: tuple[float, float]      # extreme-value analysis: lowest, highest
    worst_case_method: str               # how the worst-case range was found
    sensitivity: Mapping[str, float]     # part role -> sensitivity
    missing: int = -1                    # samples with no value (NaN); computed when -1
    label: str = ""                      # the stage's own name where the registry's would
    #                                      mislead (an inductive load's coil, not a loop)

    def __post_init__(self):
        object.__setattr__(self, "samples", _frozen(np.asarray(self.samples, dtype=float)))
        object.__setattr__(self, "sensitivity", FrozenMap(dict(self.sensitivity)))
        object.__setattr__(self, "worst_case", (float(self.worst_case[0]),
                                                float(self.worst_case[1])))
        if self.missing < 0:
            object.__setattr__(self, "missing", int(np.sum(~np.isfinite(self.samples))))

    @property
    def detail(self) -> str:
        """The parameter as display text ("" when the metric has none)."""
        return self.param.text if self.param is not None else ""

    @property
    def wc(self) -> tuple[float, float]:
        return self.worst_case

    @property
    def wc_method(self) -> str:
        return self.worst_case_method

    @property
    def unit(self) -> str:
        return METRICS[self.name].unit

    @property
    def key(self) -> tuple:
        return (self.name, self.at_hz, self.detail)


@dataclass(frozen=True)
class Waveform(_ReadOnlyAgain):
    """A time response for the figures: nominal, and min–max over the stable samples."""

    t_s: np.ndarray
    nominal: np.ndarray
    min: np.ndarray
    max: np.ndarray
    mean: float | None = None            # PWM: the nominal output's mean (shown about it)
    input: np.ndarray | None = None      # PWM: the drive over one period

    def __post_init__(self):
        for name in ("t_s", "nominal", "min", "max", "input"):
            object.__setattr__(self, name, _frozen(getattr(self, name)))


@dataclass(frozen=True)
class ResponseBand(_ReadOnlyAgain):
    """The spread of the Bode response over the stable Monte Carlo samples, (F,) each:
    min and max over all of them, the 5 % and 95 % percentiles (lo, hi) over the
    first ``drawn`` of them (rcdoc.analysis.spread.band_samples)."""

    gain_min: np.ndarray
    gain_max: np.ndarray
    gain_lo: np.ndarray
    gain_hi: np.ndarray
    phase_min: np.ndarray
    phase_max: np.ndarray
    phase_lo: np.ndarray
    phase_hi: np.ndarray
    drawn: int = 0

    def __post_init__(self):
        for name in self._ARRAYS:
            object.__setattr__(self, name, _frozen(getattr(self, name)))

    _ARRAYS = ("gain_min", "gain_max", "gain_lo", "gain_hi",
               "phase_min", "phase_max", "phase_lo", "phase_hi")

    def as_mapping(self) -> Mapping[str, np.ndarray]:
        """Read-only name -> array view, for a chart that takes its bands by name."""
        return FrozenMap({k: getattr(self, k) for k in self._ARRAYS})


@dataclass(frozen=True)
class Phasors:
    """Part voltages along the network's path at one frequency for a 1 V rms source."""

    freq_hz: float
    reference: str                                   # "current" or "source"
    vectors: tuple[tuple[str, str, complex], ...]    # (element, kind, voltage) head to tail
    closing: tuple[str, complex] | None              # open path: its end node's voltage
    current: complex
    source: complex
    output: complex | None
    # Largest phase difference between the drawn phasors at freq_hz (rcdoc.analysis.phasor_choice),
    # the reason freq_hz was chosen; NaN when the frequency was given, not chosen.
    spread_deg: float = math.nan


@dataclass(frozen=True)
class PartRow:
    """One row of a stage's parts table."""

    role: str
    part: Part
    in_circuit: float                    # nominal in-circuit value (DC-bias loss included)
    low: float
    high: float
    preferred: str | None                # the series the value is preferred in, or None
    series: str                          # the series that fits the part's tolerance


@dataclass(frozen=True)
class PartStress:
    """A part's computed stress: metric, nominal value and highest Monte Carlo value."""

    metric: str
    nominal: float
    worst: float
    pulse: tuple["PartStress", ...] = ()   # a resistor's surge power and energy per edge


@dataclass(frozen=True)
class Alternative:
    """One design of the stage: ``role`` at ``value`` (``step`` "" = as designed)."""

    role: str
    ref: str
    value: float
    unit: str
    series: str
    step: str                       # "", "below" or "above"
    metrics: tuple[float, ...]      # nominal value of each metric in the table's order
    inside: tuple[bool, ...]        # each metric's nominal inside its check's limits
    yields: tuple[float, ...] = ()  # each checked metric's yield over the reduced Monte
    #                                 Carlo (NaN for an unchecked one)


@dataclass(frozen=True)
class StageAlternatives:
    metrics: tuple[tuple[str, float | None, str], ...]   # (name, at_hz, detail)
    checks: tuple[Check | None, ...]
    rows: tuple[Alternative, ...]
    samples: int = 0                # Monte Carlo samples behind each yield
    seed: int = 0


@runtime_checkable
class KindResult(Protocol):
    """A kind's own result (snubber, debounce, sampled input)."""

    summary: str                     # one line for the summary table
    peak_voltage_v: float            # for the safety caution

    def blocks(self) -> tuple: ...   # block specs for the kind's page (analysis/blocks.py)

    def json(self) -> dict: ...      # JSON-ready, written under the kind's name


@dataclass(frozen=True)
class StageResult(_ReadOnlyAgain):
    """Everything known about one analysed stage."""

    stage: Stage
    network: Network
    passband: str
    char_hz: float
    freqs_hz: np.ndarray                 # (F,); empty for kinds with no sweep
    h_nominal: np.ndarray                # (F,) complex
    band: ResponseBand | None
    metrics: tuple[MetricResult, ...]
    verdicts: tuple[Verdict, ...]
    ratings: tuple[Verdict, ...]
    phasors: Phasors | None
    step: Waveform | None
    pwm: Waveform | None
    parts: tuple[PartRow, ...]
    assumptions: tuple[str, ...]
    samples: int
    stresses: Mapping[str, PartStress] = field(default_factory=dict)
    alternatives: StageAlternatives | None = None
    kind_result: KindResult | None = None
    samples_unstable: int = 0            # Monte Carlo samples with a pole at Re s >= 0
    unstable_poles: tuple = ()           # the nominal's offending poles (rad/s), empty if stable
    # The Bode band was left out (an analysis for check or diff, which draw nothing);
    # rcdoc.kinds.complete_bode adds it, the same numbers, before the stage is drawn.
    bode_pending: bool = False

    def __post_init__(self):
        for name in ("metrics", "verdicts", "ratings", "parts", "assumptions", "unstable_poles"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        object.__setattr__(self, "stresses", FrozenMap(dict(self.stresses)))
        object.__setattr__(self, "freqs_hz", _frozen(self.freqs_hz))
        object.__setattr__(self, "h_nominal", _frozen(self.h_nominal))

    @property
    def reason(self) -> str | None:
        """Why the stage fails beyond its checks: "unstable" when the nominal design is."""
        return "unstable" if self.unstable_poles else None

    @property
    def status(self) -> str:
        bad = [v for v in self.verdicts + self.ratings if v.status != "pass"]
        return "fail" if bad or self.reason else "pass"

    def metric(self, name: str, at_hz: float | None = None) -> MetricResult | None:
        for m in self.metrics:
            if m.name == name and (at_hz is None or m.at_hz == at_hz):
                return m
        return None

