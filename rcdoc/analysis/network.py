"""The circuit a stage kind builds and the engine solves.

A Network is plain data: two-terminal R, C and L elements between named
nodes ("0" is ground), op-amps as three-terminal blocks, the node the ideal
source drives and the node that is the output. Stage kinds build one; the
engine solves it; nothing here knows about parts' tolerances or drawing.
"""

from __future__ import annotations

from dataclasses import dataclass, field

GROUND = "0"


@dataclass(frozen=True)
class Element:
    """A two-terminal part: ``kind`` is "R", "C" or "L"; ``name`` keys its value."""

    name: str
    kind: str
    a: str
    b: str


@dataclass(frozen=True)
class OpAmp:
    """An op-amp: output driven to A(s)·(V(plus) − V(minus)), output referred to ground.

    Single-pole model: A(s) = a0 / (1 + s·a0 / (2π·gbw)). ``gbw_hz`` = inf and
    ``a0`` = inf give the ideal op-amp (a nullor).
    """

    name: str
    plus: str
    minus: str
    out: str
    gbw_hz: float = float("inf")
    a0: float = float("inf")


@dataclass(frozen=True)
class Network:
    """Elements and op-amps between nodes, driven at ``drive`` and read at ``output``.

    The ideal voltage source sits between ``drive`` and ground. ``path`` lists
    the elements from the drive towards the output whose voltages, head to
    tail, form the phasor diagram (optional).
    """

    elements: tuple[Element, ...]
    drive: str
    output: str
    opamps: tuple[OpAmp, ...] = ()
    path: tuple[str, ...] = field(default=())

    def nodes(self) -> list[str]:
        """All non-ground nodes, in first-seen order (deterministic)."""
        seen: dict[str, None] = {}
        for e in self.elements:
            for n in (e.a, e.b):
                if n != GROUND:
                    seen.setdefault(n, None)
        for o in self.opamps:
            for n in (o.plus, o.minus, o.out):
                if n != GROUND:
                    seen.setdefault(n, None)
        if self.drive != GROUND:
            seen.setdefault(self.drive, None)
        return list(seen)

    def element(self, name: str) -> Element:
        for e in self.elements:
            if e.name == name:
                return e
        raise KeyError(name)
