"""Per-part stresses the analysis keeps for the parts list and the ratings.

A resistor's average power and a capacitor's peak voltage (bias plus the
drive's response), as gathered per chunk of rows by rcdoc.analysis.analyse;
"worst" is the highest over the Monte Carlo samples, the number the rating
check judges. Computed here (analysis layer); rcdoc.note.partslist writes them.
"""

from __future__ import annotations

import math

import numpy as np

_STRESS = {"R": "resistor_power", "C": "capacitor_voltage"}


def part_stresses(stage, batch, cap_peaks: dict, res_powers: dict) -> dict[str, dict]:
    """Per part role: the stress metric, its nominal and its worst (highest) Monte
    Carlo value; from the arrays the analysis gathered per chunk of rows."""
    out = {}
    for role, part in stage.parts.items():
        if part.kind == "C" and role in cap_peaks:
            arr = np.concatenate(cap_peaks[role])
        elif part.kind == "C" and part.bias_v:
            arr = np.full(batch.rows, part.bias_v)
        elif part.kind == "R" and role in res_powers:
            arr = np.concatenate(res_powers[role])
        else:
            continue
        out[role] = {"metric": _STRESS[part.kind], "nominal": float(arr[0]),
                     "worst": _highest(arr[batch.mc])}
    return out


def _highest(samples: np.ndarray) -> float:
    # As rcdoc.analysis.checks.worst_value with an upper limit: NaN if any sample has no value.
    if samples.size == 0 or not np.all(np.isfinite(samples)):
        return math.nan
    return float(samples.max())
