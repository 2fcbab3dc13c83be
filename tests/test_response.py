"""The zero-pole-gain evaluation of H at one frequency per row (rcdoc.analysis.response)
and the phase unwrapping at a mark, against general-purpose libraries.

Sources: scipy.signal.freqs (a polynomial transfer function evaluated on jω);
the unity-gain Sallen-Key low-pass H = 1/(s²·R1R2C1C2 + s·C2(R1 + R2) + 1)
(the standard result, as in docs/project-format.md); numpy.unwrap.
"""

from __future__ import annotations

import numpy as np
import scipy.signal as sg

from rcdoc.analysis import sweep_math

from boards import mc_evaluator

BOARD = """\
[board]
name = "Response test"
revision = "A"
date = "2026-01-01"

[analysis]
samples = 200
seed = 2

[[stage]]
id = "sk"
title = "Sallen-Key low-pass"
kind = "sallen-key-lowpass"
parts.r1 = { value = "11k", tolerance = "5%" }
parts.r2 = { value = "22k", tolerance = "5%" }
parts.c1 = { value = "20 nF", tolerance = "10%", dielectric = "C0G" }
parts.c2 = { value = "4.7 nF", tolerance = "10%", dielectric = "C0G" }
"""


def _evaluator(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text(BOARD, encoding="utf-8")
    return mc_evaluator(path)


def test_h_at_one_frequency_per_row_matches_scipy_freqs(tmp_path):
    ev, v = _evaluator(tmp_path)
    rng = np.random.default_rng(4)
    f = 10 ** rng.uniform(1.5, 5.5, ev.rows)           # a different frequency in every row
    h = ev.response.at_rows(f)
    ref = np.array([sg.freqs([1.0], [v["r1"][i] * v["r2"][i] * v["c1"][i] * v["c2"][i],
                                     v["c2"][i] * (v["r1"][i] + v["r2"][i]), 1.0],
                             worN=[2 * np.pi * f[i]])[1][0] for i in range(ev.rows)])
    assert np.max(np.abs(h / ref - 1)) < 1e-9
    # ... and the direct solve of the nodal equations agrees with it.
    assert np.max(np.abs(ev.h_rows(f) / h - 1)) < 1e-9


def test_corner_is_where_the_textbook_gain_is_half_power(tmp_path):
    ev, v = _evaluator(tmp_path)
    fc = ev.corner()
    a = v["r1"] * v["r2"] * v["c1"] * v["c2"]
    b = v["c2"] * (v["r1"] + v["r2"])
    # |H(jω)|² = 1/2: a²x² + (b² − 2a)x − 1 = 0 in x = ω², positive root.
    p = b * b - 2 * a
    ref = np.sqrt(2 / (p + np.sqrt(p * p + 4 * a * a))) / (2 * np.pi)
    assert np.max(np.abs(fc / ref - 1)) < 1e-9


def test_last_unwrapped_phase_is_numpys():
    rng = np.random.default_rng(1)
    for _ in range(50):
        p = np.angle(np.exp(1j * np.cumsum(rng.normal(0, 1.5, (40, 30)), axis=1)))
        ref = np.unwrap(p, axis=1)[:, -1]               # numpy.unwrap
        rows, k = sweep_math.unwrap_corrections(p[:, :-1])
        k_before = np.zeros(len(p))
        k_before[rows] = k[:, -1]
        got = sweep_math.unwrapped_at(p[:, -1], p[:, -2], k_before)
        assert np.allclose(got, ref, rtol=1e-13, atol=1e-12)
