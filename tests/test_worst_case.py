"""The worst-case range holds the nominal and every sample, also where a metric peaks inside the box."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from boards import analyse_one
from rcdoc.note import summary
from rcdoc.analysis import worstcase

R_OHM = 10e3
F_HZ = 50.0
C_F = 1 / (2 * math.pi * F_HZ * R_OHM)      # corner at 50 Hz: the group delay there peaks

HIGHPASS = f"""\
[[stage]]
id = "hp"
title = "High-pass"
kind = "rc-highpass"
parts.c = {{ ref = "C1", value = "{C_F * 1e9:.6f} nF", tolerance = "10%" }}
parts.r = {{ ref = "R1", value = "10k", tolerance = "5%" }}
[[stage.check]]
metric = "group_delay"
at = "50 Hz"
max = "10 ms"
"""

LOWPASS = """\
[[stage]]
id = "lp"
title = "Low-pass"
kind = "rc-lowpass"
parts.r = { ref = "R1", value = "4k7", tolerance = "1%" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "5%" }
"""


def scipy_group_delay(rc: float, f_hz: float) -> float:
    """−dφ/dω of H(s) = sRC/(1 + sRC) (textbook first-order high-pass) from
    scipy.signal.freqs, by a central difference of the unwrapped phase."""
    w = 2 * math.pi * f_hz
    dw = w * 1e-5
    _, h = signal.freqs([rc, 0.0], [rc, 1.0], worN=[w - dw, w + dw])
    phase = np.unwrap(np.angle(h))
    return float(-(phase[1] - phase[0]) / (2 * dw))


def test_highpass_group_delay_worst_case_encloses_nominal_and_samples(tmp_path):
    res = analyse_one(tmp_path, HIGHPASS, "samples = 2000")
    m = res.metric("group_delay", F_HZ)
    # The engine's nominal agrees with scipy.signal on the textbook H(s).
    assert m.nominal == pytest.approx(scipy_group_delay(R_OHM * C_F, F_HZ), rel=1e-4)
    # τ(RC) = RC/(1 + (ωRC)²) peaks at ωRC = 1 with 1/(2ω) (textbook): inside the box.
    peak = 1 / (2 * 2 * math.pi * F_HZ)
    corners = [scipy_group_delay(r * c, F_HZ) for r in (0.95 * R_OHM, 1.05 * R_OHM)
               for c in (0.9 * C_F, 1.1 * C_F)]
    assert max(corners) < peak * (1 - 5e-4)        # no corner shows the maximum ...
    assert m.wc[1] == pytest.approx(peak, rel=1e-6)  # ... the search inside does
    assert m.wc[0] == pytest.approx(min(corners), rel=1e-4)
    samples = m.samples[np.isfinite(m.samples)]
    assert samples.size == m.samples.size
    assert samples.max() > max(corners)            # the issue: corners alone miss samples
    assert m.wc[0] <= samples.min() and samples.max() <= m.wc[1]
    assert m.wc[0] <= m.nominal <= m.wc[1]
    assert m.wc_method == "vertices + interior search"
    assert summary.metric_entry(m)["worst_case_method"] == "vertices + interior search"
    # The check's worst-case columns carry the same range.
    (v,) = res.verdicts
    assert (v.wc_low, v.wc_high) == m.wc


def test_monotonic_corner_keeps_the_vertex_result(tmp_path):
    res = analyse_one(tmp_path, LOWPASS, "samples = 500")
    m = res.metric("corner")
    # fc = 1/(2πRC) (textbook) is monotonic in R and C: its extremes are at the box corners.
    lo = 1 / (2 * math.pi * 4.7e3 * 1.01 * 10e-9 * 1.05)
    hi = 1 / (2 * math.pi * 4.7e3 * 0.99 * 10e-9 * 0.95)
    assert m.wc == pytest.approx((lo, hi), rel=1e-6)
    assert m.wc_method == "vertices"
    assert summary.metric_entry(m)["worst_case_method"] == "vertices"


def test_pattern_search_finds_an_interior_extreme_from_every_start_at_once():
    # f(x, y) = −(x − 0.3)² − (y − 0.7)² + 0.5·x·y on the unit box: a concave
    # quadratic whose maximum is where its gradient vanishes (textbook calculus),
    # inside the box; that 2×2 linear system is solved with numpy.
    def f(x):
        return -(x[:, 0] - 0.3) ** 2 - (x[:, 1] - 0.7) ** 2 + 0.5 * x[:, 0] * x[:, 1]
    # ∇f = 0: [−2, 0.5; 0.5, −2]·[x, y] = [−0.6, −1.4]
    opt = np.linalg.solve([[-2.0, 0.5], [0.5, -2.0]], [-0.6, -1.4])
    assert np.all((opt > 0) & (opt < 1))
    starts = np.array([[0.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
    found = worstcase.search(f, starts, np.array([True, True, True]), np.zeros(2), np.ones(2))
    assert found.max() == pytest.approx(float(f(opt[None, :])[0]), abs=1e-9)
    # Minimising: the lowest value of the box is at a corner; the search ends there too.
    corners = np.array([[0, 0], [0, 1], [1, 0], [1, 1]], dtype=float)
    low = worstcase.search(f, np.array([[0.5, 0.5]]), np.array([False]), np.zeros(2), np.ones(2))
    assert low.min() == pytest.approx(f(corners).min(), abs=1e-9)


def test_walk_through_the_nominal_detects_a_turn():
    # One part: a parabola turns back, a line does not.
    assert worstcase.turns_back(-(np.linspace(-1, 1, worstcase.LINE_POINTS)) ** 2, 1)
    assert not worstcase.turns_back(np.linspace(-1, 1, worstcase.LINE_POINTS), 1)
    assert not worstcase.turns_back(np.zeros(worstcase.LINE_POINTS), 1)


def test_seen_points_are_found_by_their_bytes_as_a_dict_finds_them():
    # The search's bookkeeping (worstcase._Seen) against the method it replaced: a
    # dict keyed by each row's bytes (Python's own dict), points numbered in the order
    # of their first row; rows of -0.0 and 0.0, NaN and repeats included.
    from rcdoc.analysis.worstcase import _Seen
    rng = np.random.default_rng(0)
    for trial in range(100):
        p = int(rng.integers(1, 5))
        seen, number, points = _Seen(p, 3), {}, []
        pool = rng.choice([0.0, -0.0, 1.0, 2.5, np.nan, 1e-300], size=(30, p))
        for _ in range(6):
            rows = pool[rng.integers(0, 30, int(rng.integers(1, 40)))]
            got_points, at, _ = seen.merge(rows, [0])
            want = []
            for row in rows:
                n = number.setdefault(row.tobytes(), len(number))
                if n == len(points):
                    points.append(row)
                want.append(n)
            assert np.array_equal(at, want)
            assert np.array_equal(got_points, np.array(points), equal_nan=True)
