"""How the analysis bounds its memory when the sweep is long: rows of the batch
solved at once and the samples of the drawn percentile band, both sized by the
number of sweep points (rcdoc.analysis.spread.chunk_rows, band_samples).

A sample's results must not depend on the chunk it is solved in (common
practice); the memory is measured with tracemalloc, which sees numpy's array
buffers (numpy documentation, "Memory management in NumPy": tracemalloc's
tracking hooks were added to NumPy's PyDataMem_* data allocation routines).
"""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from rcdoc.analysis import spread
from boards import analyse_one

_STAGE = """
    [[stage]]
    id = "lp"
    title = "Low-pass, step drive"
    kind = "rc-lowpass"
    drive = { step = "3.3 V" }
    parts.r = { value = "4k7", tolerance = "1%" }
    parts.c = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }
    [[stage.check]]
    metric = "corner"
    min = "2 kHz"
    """


def test_chunks_and_band_keep_their_sizes_at_the_default_sweep():
    # A first-order stage's default sweep: six decades at 50 points a decade.
    assert spread.chunk_rows(301) == spread.CHUNK_ROWS == 4000
    assert spread.band_samples(301) == spread.BAND_SAMPLES == 20000
    assert spread.chunk_rows(10) == 4000 and spread.band_samples(10) == 20000


def test_long_sweeps_hold_as_many_values_as_the_default_one():
    for points in (6001, 12001):          # 1 000 points a decade over 6 and 12 decades
        rows, samples = spread.chunk_rows(points), spread.band_samples(points)
        assert rows * points <= spread.CHUNK_VALUES
        assert samples * points <= spread.BAND_VALUES
        assert rows >= 100 and samples >= 500
    assert spread.chunk_rows(10 ** 7) == 100          # the floor: time steps cost per chunk
    assert spread.band_samples(10 ** 9) == 1


@pytest.mark.slow
def test_a_long_sweep_is_solved_in_small_chunks_with_the_same_samples(tmp_path, monkeypatch):
    analysis = "samples = 3000\npoints_per_decade = 1000"
    tracemalloc.start()
    try:
        long_sweep = analyse_one(tmp_path, _STAGE, analysis=analysis, name="a")
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    points = len(long_sweep.freqs_hz)
    assert points > 6000
    band_samples = spread.band_samples(points)
    # One chunk of all 3 000 samples would hold 3 000 x 6 001 complex values
    # (288 MB) in each of its sweep arrays; the chunks of 200 rows, 19 MB.
    assert peak < 150e6, f"{peak / 1e6:.0f} MB"
    # The same samples, solved in one chunk.
    monkeypatch.setattr(spread, "CHUNK_VALUES", 10 ** 9)
    monkeypatch.setattr(spread, "BAND_VALUES", 10 ** 9)
    whole = analyse_one(tmp_path, _STAGE, analysis=analysis, name="b")
    # (Equal to round-off, not bit for bit: the passband gain, 0 dB, differs
    # by 1e-14 dB.)
    assert [m.key for m in long_sweep.metrics] == [m.key for m in whole.metrics]
    for m1, m2 in zip(long_sweep.metrics, whole.metrics):
        np.testing.assert_allclose(m1.samples, m2.samples, rtol=1e-12, atol=1e-12)
        assert m1.nominal == pytest.approx(m2.nominal, rel=1e-12, abs=1e-12)
    # The drawn band from fewer samples: its 5-95 % range inside the full one's
    # min-max envelope, which every sample still sets.
    b1, b2 = long_sweep.band, whole.band
    np.testing.assert_array_equal(b1.gain_min, b2.gain_min)
    np.testing.assert_array_equal(b1.gain_max, b2.gain_max)
    assert np.all(b1.gain_lo >= b2.gain_min) and np.all(b1.gain_hi <= b2.gain_max)
    assert np.allclose(b1.gain_lo, b2.gain_lo, atol=0.05)    # dB: both estimate the 5 %
    assert b1.drawn == band_samples < 3000 and b2.drawn == 3000
    # The note says so under the frequency response.
    from rcdoc.note.page import _drawn
    assert _drawn(long_sweep) == f" (from the first {b1.drawn} of them)"
    assert _drawn(whole) == ""
