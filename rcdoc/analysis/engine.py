"""Modified nodal analysis (MNA) of a stage's Network, vectorised over Monte Carlo samples.

What it is for: one import for the callers of the analysis engine, which
lives in four modules: ``assembly`` (checks, System, the stamps), ``ac``
(frequency responses, element voltages and currents, input impedance),
``noise`` (thermal output noise) and ``transient`` (transient, step and
periodic steady state by Radau IIA). This module only re-exports their
public names; the conventions are in ``assembly``'s docstring.

What it must not do: hold code of its own.
"""

from __future__ import annotations

from rcdoc.analysis.assembly import SOURCE, System, assemble
from rcdoc.analysis.ac import (
    ac,
    conditioned,
    element_currents,
    element_voltages,
    input_impedance,
    node_voltage,
    solve_ac,
    source_current,
)
from rcdoc.analysis.noise import BOLTZMANN_J_PER_K, output_noise_psd
from rcdoc.analysis.transient import INPUT_MODES, periodic_steady_state, step, transient


__all__ = [
    "BOLTZMANN_J_PER_K",
    "SOURCE",
    "System",
    "assemble",
    "ac",
    "conditioned",
    "solve_ac",
    "node_voltage",
    "element_voltages",
    "element_currents",
    "source_current",
    "input_impedance",
    "transient",
    "step",
    "periodic_steady_state",
    "output_noise_psd",
]
