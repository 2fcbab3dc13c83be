"""The frequency at which a stage's phasor diagram says the most.

A phasor diagram drawn where every phasor points the same way (a divider in
its passband, a band-pass at its centre) collapses onto one line and tells a
reader nothing. This module picks, from the nominal design's sweep, the
frequency where the phasors that the note draws differ most in phase, so the
note draws them there (or says in one sentence that they are in phase at
every swept frequency). The note does no physics: it reads the result.

Criterion: at each swept frequency, take the drawn phasors (part voltages
along the network's path, the open path's end-node voltage, the source and,
for an open path, the output) whose magnitude is within ``WITHIN_DB`` of the
largest there; their spread is the largest phase difference between two of
them, folded to 0…90° (opposite phasors lie on one line too: an inverting
stage's output at low frequency is no reason to draw there). A phasor far
below the others would be an invisible arrow: it does not count. The chosen frequency has the largest spread; among the frequencies
within ``TIE_DEG`` of it (an RC divider's V_R and V_C are 90° apart at every
frequency), the one where the weaker phasor of a widest pair is largest
against the largest phasor, so both arrows of the angle can be seen.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rcdoc.analysis import engine
from rcdoc.analysis.network import GROUND, Network

WITHIN_DB = 20.0     # phasors weaker than this below the largest do not count
TIE_DEG = 0.5        # spreads this close to the largest count as equal


@dataclass(frozen=True)
class PhasorChoice:
    """The chosen frequency and the phasors' spread there (degrees)."""

    freq_hz: float
    spread_deg: float


def drawn_phasors(network: Network, values: dict, freqs_hz: np.ndarray) -> np.ndarray:
    """The phasors the note draws, per 1 V of source, at each frequency: (P, F) complex.

    The same walk as rcdoc.analysis.analyse.phasor_data (each element's voltage
    taken in the direction of travel from the drive), before its common
    rotation, which changes no phase difference. ``values`` holds one row.
    """
    f = np.asarray(freqs_hz, dtype=float)
    sol = engine.solve_ac(network, values, f)[0]              # (F, N)
    system = engine.assemble(network, values)

    def v(node: str) -> np.ndarray:
        return engine.node_voltage(sol, system, node)

    node = network.drive
    rows = []
    for name in network.path:
        e = network.element(name)
        if e.b == node:
            rows.append(v(e.b) - v(e.a))
            node = e.a
        else:
            rows.append(v(e.a) - v(e.b))
            node = e.b
    rows.append(np.ones(f.size, dtype=complex))               # the source
    if node != GROUND:
        rows.append(v(node))                                  # the open path's end node
        rows.append(v(network.output))                        # the output
    return np.array(rows)


def phase_spread(phasors: np.ndarray, within_db: float = WITHIN_DB) -> tuple[np.ndarray, np.ndarray]:
    """Per frequency: the largest phase difference (folded to 0…90°: opposite phasors
    count as on one line) between two phasors within ``within_db`` of the largest,
    and its balance: of the pairs that wide (within ``TIE_DEG``), the largest
    magnitude of a pair's weaker phasor, over the largest phasor.

    ``phasors`` is (P, F) complex. A frequency with fewer than two counted
    phasors has spread 0 and balance 0.
    """
    p = np.asarray(phasors, dtype=complex)
    mag = np.abs(p)
    top = mag.max(axis=0)
    counted = (mag > 0) & (mag >= top * 10.0 ** (-within_db / 20.0))
    unit = np.where(counted, p / np.where(mag > 0, mag, 1.0), 0.0)
    # Angle between the lines of every pair: |arg(a · conj(b))| folded to 0…90°, since
    # opposite phasors (an inverting stage's output) lie on one line as much as equal ones.
    diff = np.degrees(np.abs(np.angle(unit[:, None, :] * np.conj(unit[None, :, :]))))
    diff = np.minimum(diff, 180.0 - diff)
    others = ~np.eye(p.shape[0], dtype=bool)[:, :, None]          # a phasor is no pair with itself
    pair_ok = counted[:, None, :] & counted[None, :, :] & others
    diff = np.where(pair_ok, diff, -1.0)
    spread = np.maximum(diff.max(axis=(0, 1)), 0.0)
    # Of the pairs as wide as the widest (within TIE_DEG), the one whose weaker arrow is largest.
    weaker = np.minimum(mag[:, None, :], mag[None, :, :])
    wide = pair_ok & (diff >= spread - TIE_DEG) & (spread > 0)
    best = np.where(wide, weaker, 0.0).max(axis=(0, 1))
    balance = best / np.where(top > 0, top, 1.0)
    return spread, balance


def choose(freqs_hz: np.ndarray, phasors: np.ndarray) -> PhasorChoice:
    """The frequency of largest spread (ties by balance); see the module's criterion."""
    f = np.asarray(freqs_hz, dtype=float)
    spread, balance = phase_spread(phasors)
    near = spread >= spread.max() - TIE_DEG
    k = int(np.argmax(np.where(near, balance, -1.0)))
    return PhasorChoice(freq_hz=float(f[k]), spread_deg=float(spread[k]))


def phasor_frequency(network: Network, values: dict, freqs_hz: np.ndarray) -> PhasorChoice | None:
    """The choice for a network with a phasor path over its sweep, or None without one."""
    if not network.path or len(freqs_hz) == 0:
        return None
    return choose(freqs_hz, drawn_phasors(network, values, freqs_hz))
