"""What every stage kind provides, and the pieces kinds share.

A kind turns a validated Stage into a Network (core circuit between "in" and
"out"), a schematic recipe and its list of applicable metrics. The source
impedance and the load are added here, the same way for every kind, so the
engine and the figures see them as ordinary elements.
"""

from __future__ import annotations

from typing import Any, Protocol

from rcdoc.errors import ProjectError
from rcdoc.kinds.recipes import Label
from rcdoc.input.model import Part, Stage
from rcdoc.analysis.network import GROUND, Element, Network
# The names around a stage live in the analysis (it needs them too); kinds use them from here.
from rcdoc.analysis.surroundings import (  # noqa: F401
    LOAD_C, LOAD_R, SOURCE_L, SOURCE_L_NODE, SOURCE_NODE, SOURCE_R, core_input, fixed_values)
from rcdoc.input.quantities import PART_UNITS, format_quantity

UNIT_OF = PART_UNITS

FREQUENCY_METRICS = ("corner", "passband_gain", "gain", "phase", "group_delay",
                     "input_impedance", "noise")


class KindModule(Protocol):
    """The interface every kind module provides; rcdoc.kinds.register checks it."""

    NAME: str                         # the `kind` string of a stage
    TITLE: str                        # as the note and the summary show the kind
    ROLES: tuple[str, ...]            # part roles taken (empty: the stage names them)
    OPTIONS: tuple[str, ...]          # the kind's own stage keys
    # "low", "high", "band" or "band-stop" (or a function of the stage): where the
    # passband gain is read (DC, high frequency, the peak, DC).
    PASSBAND: Any
    HEADLINE: tuple[str, ...]         # metrics reported first, in order (metric registry names)

    def parse_options(self, table: dict, path: str) -> dict[str, Any]: ...
    def check_roles(self, parts: dict[str, Part], options: dict, path: str) -> None: ...
    def metrics(self, options: dict, drive) -> tuple[str, ...]: ...
    def build(self, stage: Stage) -> Network: ...
    def characteristic_hz(self, stage: Stage) -> float: ...
    def schematic(self, stage: Stage): ...
    # Optional: ``analyse(stage, analysis, bode=True) -> StageResult``, a kind's own
    # analysis (``bode``: whether to gather the Bode band), and ``EVALUATOR``, the
    # Evaluator subclass it hands analyse_network (rcdoc.analysis.analyse.complete).


def no_options(table: dict, path: str) -> dict:
    return {}


def require_roles(parts: dict[str, Part], required: tuple[str, ...], path: str,
                  optional: tuple[str, ...] = ()) -> None:
    """Missing or extra roles are errors naming the roles the kind takes."""
    for role in required:
        if role not in parts:
            raise ProjectError(f"role '{role}' is missing; this kind takes "
                               f"{', '.join(required + optional)}", path=f"{path}.{role}")
    for role in parts:
        if role not in required and role not in optional:
            raise ProjectError(f"role '{role}' is not part of this kind; it takes "
                               f"{', '.join(required + optional)}", path=f"{path}.{role}")


def standard_metrics(drive, extra: tuple[str, ...] = ()) -> tuple[str, ...]:
    names = FREQUENCY_METRICS + extra
    if drive is not None:
        names += ("rise_time", "settling", "capacitor_voltage")
        if drive.kind == "pwm":
            names += ("ripple",)
    return names


def wrap(stage: Stage, elements: list[Element], *, output: str = "out",
         opamps=(), path: tuple[str, ...] = (), input: str = "in") -> Network:
    """Add the stage's source impedance (before ``input``) and load (at the output)."""
    elements = list(elements)
    drive = input
    chain = []
    if stage.source_l > 0:
        elements.insert(0, Element(SOURCE_L, "L", SOURCE_L_NODE, drive))
        chain.insert(0, SOURCE_L)
        drive = SOURCE_L_NODE
    if stage.source_r > 0:
        elements.insert(0, Element(SOURCE_R, "R", SOURCE_NODE, drive))
        chain.insert(0, SOURCE_R)
        drive = SOURCE_NODE
    if stage.load_r is not None:
        elements.append(Element(LOAD_R, "R", output, GROUND))
    if stage.load_c is not None:
        elements.append(Element(LOAD_C, "C", output, GROUND))
    return Network(elements=tuple(elements), drive=drive, output=output,
                   opamps=tuple(opamps), path=tuple(chain) + tuple(path))


def label(part: Part) -> Label:
    return Label(part.ref or part.role.upper(), format_quantity(part.value, UNIT_OF[part.kind]))


def source_labels(stage: Stage):
    out = []
    if stage.source_r > 0:
        out.append(("R", Label("Rs", format_quantity(stage.source_r, "ohm"))))
    if stage.source_l > 0:
        out.append(("L", Label("Ls", format_quantity(stage.source_l, "H"))))
    return tuple(out)


def load_labels(stage: Stage):
    out = []
    if stage.load_r is not None:
        out.append(("R", Label("RL", format_quantity(stage.load_r, "ohm"))))
    if stage.load_c is not None:
        out.append(("C", Label("CL", format_quantity(stage.load_c, "F"))))
    return tuple(out)


# The highest open-loop gain a project may state (10^15).
MAX_GAIN_DB = 300.0


def parse_amplifier(t: dict, path: str) -> dict:
    """``amplifier = { gbw = "10 MHz", gain = "120 dB" }``; default ideal (inf, inf)."""
    from rcdoc.input.quantities import parse_positive, parse_quantity
    raw = t.get("amplifier")
    if raw is None:
        return {"gbw_hz": float("inf"), "a0": float("inf")}
    if not isinstance(raw, dict):
        raise ProjectError("expected a table { gbw = \"10 MHz\", gain = \"120 dB\" }",
                           path=f"{path}.amplifier")
    for key in raw:
        if key not in ("gbw", "gain"):
            raise ProjectError(f"unknown key '{key}'; an amplifier has 'gbw' and 'gain'",
                               path=f"{path}.amplifier.{key}")
    gbw = (parse_positive(raw["gbw"], "Hz", f"{path}.amplifier.gbw") if "gbw" in raw
           else float("inf"))
    a0 = float("inf")
    if "gain" in raw:
        db = parse_quantity(raw["gain"], "dB", f"{path}.amplifier.gain")
        if db <= 0:
            raise ProjectError("open-loop gain must be above 0 dB",
                               path=f"{path}.amplifier.gain")
        if db > MAX_GAIN_DB:
            # No op-amp comes near 10^15; far beyond it 10 ** (db / 20) overflows.
            raise ProjectError(f"open-loop gain above {MAX_GAIN_DB:g} dB is no real op-amp; "
                               "leave 'gain' out for an ideal one",
                               path=f"{path}.amplifier.gain")
        a0 = 10 ** (db / 20)
    return {"gbw_hz": gbw, "a0": a0}


SECOND_ORDER_METRICS = ("f0", "q", "peaking")
