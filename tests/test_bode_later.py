"""An analysis without its Bode band (``bode=False``: what check and diff run),
completed later (rcdoc.kinds.complete_bode, what a build runs before drawing such
a cache entry), gives the band of an analysis that gathered it, bit for bit, and
every other result unchanged. The stages: every kind of the example board, a
stage of many chunks with the worst case's walks in the last one and a band
kept from fewer samples than analysed (spread.chunk_rows, band_samples made
small), a Sallen-Key near K = 3 with unstable samples (left out of the band) and
one with every sample unstable (the band is the nominal curve)."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from rcdoc.analysis import spread
from rcdoc.kinds import analyse_stage, complete_bode, load_project

from boards import load
from test_stability import sallen_key

EXAMPLE = Path(__file__).resolve().parents[1] / "projects" / "greenhouse-controller.toml"


def _same(a, b, path="result"):
    """Every field of two results equal: arrays bit for bit (NaN where NaN)."""
    if dataclasses.is_dataclass(a) and not isinstance(a, type):
        assert type(a) is type(b), path
        for f in dataclasses.fields(a):
            _same(getattr(a, f.name), getattr(b, f.name), f"{path}.{f.name}")
    elif isinstance(a, np.ndarray):
        assert a.dtype == b.dtype and np.array_equal(a, b, equal_nan=a.dtype.kind in "fc"), path
    elif isinstance(a, (tuple, list)):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            _same(x, y, f"{path}[{i}]")
    elif hasattr(a, "items") and not isinstance(a, str):
        assert list(a) == list(b), path
        for k in a:
            _same(a[k], b[k], f"{path}[{k!r}]")
    elif isinstance(a, float) and np.isnan(a):
        assert isinstance(b, float) and np.isnan(b), path
    else:
        assert a == b, path


def _later_is_the_same(stage, analysis):
    full = analyse_stage(stage, analysis)
    lean = analyse_stage(stage, analysis, bode=False)
    assert not full.bode_pending
    if full.band is None:                   # a kind without a Bode band: nothing left out
        assert not lean.bode_pending and lean.band is None
        _same(lean, full)
        return full
    assert lean.bode_pending and lean.band is None
    _same(dataclasses.replace(lean, band=full.band, bode_pending=False), full)
    done = complete_bode(lean, analysis)
    assert not done.bode_pending
    _same(done, full)
    assert complete_bode(full, analysis) is full
    return full


@pytest.mark.slow
def test_every_kind_of_the_example_board():
    project = load_project(str(EXAMPLE), samples=300)
    kinds = set()
    for stage in project.stages:
        _later_is_the_same(stage, project.analysis)
        kinds.add(stage.kind)
    assert {"rc-lowpass", "sampled-input", "sallen-key-lowpass", "snubber"} <= kinds


def test_many_chunks_walks_in_the_last_and_a_shorter_band(tmp_path, monkeypatch):
    monkeypatch.setattr(spread, "CHUNK_ROWS", 64)
    monkeypatch.setattr(spread, "BAND_SAMPLES", 150)
    project = load(tmp_path, sallen_key("10k", "10k", "20n", "10n", tol="5%"),
                   analysis="samples = 400")
    full = _later_is_the_same(project.stages[0], project.analysis)
    assert spread.chunk_rows(len(full.freqs_hz)) == 64 and full.band.drawn == 150


def test_unstable_samples_and_an_unstable_nominal(tmp_path):
    # K = 1 + 19.5k/10k = 2.95 (Q = 20): 1 % parts push some samples to K >= 3, which
    # the band leaves out; K = 101: every sample unstable, the band is the nominal's.
    near = load(tmp_path, sallen_key("10k", "10k", "10n", "10n", "19.5k", "10k", drive=False),
                analysis="samples = 300", name="near")
    full = _later_is_the_same(near.stages[0], near.analysis)
    assert 0 < full.samples_unstable < 300 and full.band.drawn == 300 - full.samples_unstable
    gone = load(tmp_path, sallen_key("10k", "10k", "10n", "10n", "100k", "1k", drive=False),
                analysis="samples = 40", name="gone")
    full = _later_is_the_same(gone.stages[0], gone.analysis)
    assert full.samples_unstable == 40 and full.band.drawn == 0


def test_drawing_without_the_band_is_refused(tmp_path):
    from rcdoc.note.page import stage_context
    project = load(tmp_path, sallen_key("10k", "10k", "20n", "10n"), analysis="samples = 30")
    lean = analyse_stage(project.stages[0], project.analysis, bode=False)
    with pytest.raises(RuntimeError, match="complete_bode"):
        stage_context(lean, project)
