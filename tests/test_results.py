"""Typed results (rcdoc/analysis/results.py): frozen, of their declared types, and the
example board's JSON summary unchanged by the move from dicts to dataclasses."""

from __future__ import annotations

import collections.abc
import dataclasses
import json
import math
import types
import typing
from pathlib import Path

import numpy as np
import pytest

from rcdoc.analysis import results as resmod
from rcdoc.analysis.metrics import METRICS
from rcdoc.analysis.results import (MetricResult, SettlingBand, StageResult,
                                    Waveform)
from rcdoc.commands.build import analyse_project
from rcdoc.kinds import load_project
from rcdoc.note.summary import summary

pytestmark = pytest.mark.slow      # analyses the whole example board

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "projects" / "greenhouse-controller.toml"
# The example's JSON summary as last reviewed (regenerate it only for a deliberate change of
# the example or of its numbers, and say why in the commit).
BASELINE = Path(__file__).parent / "data" / "greenhouse-controller.summary.json"


@pytest.fixture(scope="module")
def example():
    project = load_project(EXAMPLE)
    outcome = analyse_project(project, jobs=2)
    return project, outcome.results


def _close(a, b, path="$", floor=1e-300):
    """Equal structure; numbers equal to 1e-9 relative (the performance issue's bar: a
    faster but equivalent arithmetic or another BLAS rounds apart), or apart by less than
    a millionth of the metric's resolution (a passband gain of 1e-15 dB is rounding noise
    of 0 dB, shown as 0; its relative change means nothing)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), path
        if a.get("metric") in METRICS:
            floor = max(1e-300, 1e-6 * METRICS[a["metric"]].resolution)
        for k in a:
            # A standard deviation far below its values (a converter's input current:
            # 0.54 pA about 380 nA) moves by what the values round to: apart in their
            # 14th digit (another CPU's BLAS kernels), it moved by 7e-9 of itself. Its
            # bar is 1e-12 of the values, whatever its own size.
            sub = (max(floor, 1e-12 * abs(a["mean"])) if k == "std"
                   and isinstance(a.get("mean"), float) else floor)
            _close(a[k], b[k], f"{path}.{k}", sub)
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), path
        for k, (x, y) in enumerate(zip(a, b)):
            _close(x, y, f"{path}[{k}]", floor)
    elif isinstance(a, float) and isinstance(b, float):
        assert a == pytest.approx(b, rel=1e-9, abs=floor), path
    else:
        assert a == b, path


def test_example_json_is_unchanged(example):
    project, results = example
    now = json.loads(json.dumps(summary(project, results)))
    before = json.loads(BASELINE.read_text(encoding="utf-8"))
    now.pop("generator"), before.pop("generator")      # the version string only
    _close(now, before)


def _conforms(value, hint) -> bool:
    """Whether ``value`` is of the (resolved) type ``hint``; no plain dict passes a Mapping."""
    if hint is typing.Any:
        return True
    origin, args = typing.get_origin(hint), typing.get_args(hint)
    if origin in (typing.Union, types.UnionType):
        return any(_conforms(value, a) for a in args)
    if hint is type(None):
        return value is None
    if origin is tuple:
        if not isinstance(value, tuple):
            return False
        if len(args) == 2 and args[1] is Ellipsis:
            return all(_conforms(v, args[0]) for v in value)
        return not args or (len(args) == len(value)
                            and all(_conforms(v, a) for v, a in zip(value, args)))
    if origin is collections.abc.Mapping:
        return (isinstance(value, collections.abc.Mapping) and not isinstance(value, dict)
                and all(_conforms(k, args[0]) and _conforms(v, args[1])
                        for k, v in value.items()))
    if hint is float:
        return isinstance(value, (float, int)) and not isinstance(value, bool)
    if hint is complex:
        return isinstance(value, (complex, float, int))
    return isinstance(value, origin or hint)


def _check_fields(obj, seen=None):
    """Every field of a results dataclass, recursively, has its declared type."""
    hints = typing.get_type_hints(type(obj), vars(resmod))
    for f in dataclasses.fields(obj):
        value = getattr(obj, f.name)
        assert _conforms(value, hints[f.name]), (type(obj).__name__, f.name, type(value))
        items = value if isinstance(value, tuple) else (value,)
        if isinstance(value, collections.abc.Mapping):
            items = tuple(value.values())
        for v in items:
            if dataclasses.is_dataclass(v) and type(v).__module__ == resmod.__name__:
                _check_fields(v)


def test_stage_results_have_their_declared_types(example):
    _, results = example
    kinds = set()
    for r in results:
        assert isinstance(r, StageResult)
        _check_fields(r)
        kinds.add(r.stage.kind)
        if r.kind_result is not None:
            assert isinstance(r.kind_result, resmod.KindResult)
    # The example covers filters with and without a drive and the kinds with their
    # own analysis (a snubber and a debounce input).
    assert {"rc-lowpass", "snubber", "debounce"} <= kinds


def test_results_are_frozen(example):
    project, results = example
    r = next(r for r in results if r.step is not None and r.pwm is not None)
    with pytest.raises(dataclasses.FrozenInstanceError):
        r.metrics = ()
    m = r.metrics[0]
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.nominal = 0.0
    with pytest.raises(ValueError):
        m.samples[0] = 0.0                       # read-only array
    with pytest.raises(TypeError):
        m.sensitivity["x"] = 1.0                 # read-only mapping
    for w in (r.step, r.pwm):
        with pytest.raises(ValueError):
            w.nominal[0] = 0.0
    # An analysis that draws nothing (analyse_project without draw: check, diff) leaves
    # the Bode band out; completed, it is frozen like the rest.
    assert r.band is None and r.bode_pending
    from rcdoc.kinds import complete_bode
    band = complete_bode(r, project.analysis).band
    with pytest.raises(ValueError):
        band.gain_lo[0] = 0.0
    with pytest.raises(AttributeError):
        r.metrics.append(m)                      # a tuple, not a list
    assert r.pwm.mean is not None and r.pwm.input is not None


def test_settling_band_travels_typed(example):
    _, results = example
    # The example checks settling to 12 bits of a 3.3 V full scale, and reports within 1 %.
    bands = {m.param for r in results for m in r.metrics if m.name == "settling"}
    assert SettlingBand(bits=12, full_scale_v=3.3) in bands and SettlingBand(within=0.01) in bands
    for r in results:
        for m in r.metrics:
            assert (m.param is None) == (m.name != "settling")


def test_settling_band_text_and_fraction():
    # Half an LSB of an n-bit converter is 2^-(n+1) of its full scale (common practice).
    assert SettlingBand(within=0.01).text == "within 1 %"
    assert SettlingBand(within=0.01).fraction(5.0) == 0.01
    assert SettlingBand(bits=12).text == "12 bits"
    assert SettlingBand(bits=12).fraction(2.0) == 2.0 ** -13
    b = SettlingBand(bits=12, full_scale_v=3.3)
    assert b.text == "12 bits of 3.3 V"
    assert b.fraction(1.65) == pytest.approx(3.3 / 2 ** 13 / 1.65, rel=1e-15)


def test_metric_result_counts_missing_samples_and_copies_nothing_writable():
    arr = np.array([1.0, math.nan, 3.0, math.inf])
    m = MetricResult(name="corner", at_hz=None, param=None, nominal=1.0, samples=arr,
                     worst_case=(1.0, 3.0), worst_case_method="vertices",
                     sensitivity={"r": -1.0})
    assert m.missing == 2 and m.detail == "" and m.wc == (1.0, 3.0)
    arr[0] = 5.0             # the caller's array stays the caller's to change
    assert arr.flags.writeable and not m.samples.flags.writeable


def test_one_sample_has_no_standard_deviation():
    # One Monte Carlo sample tells nothing of the parts' spread: the JSON gives no std
    # (null, as for a metric without any finite sample) rather than a spread of zero;
    # two samples give numpy's population std (ddof 0), as every other count does.
    from rcdoc.note.summary import metric_entry

    def entry(values):
        return metric_entry(MetricResult(name="corner", at_hz=None, param=None, nominal=1.0,
                                         samples=np.array(values), worst_case=(1.0, 3.0),
                                         worst_case_method="vertices", sensitivity={}))
    assert entry([2.0])["std"] is None
    assert entry([2.0, math.nan])["std"] is None
    assert entry([1.0, 3.0])["std"] == pytest.approx(np.std([1.0, 3.0]))


def test_results_pickle_for_the_build_cache(example):
    import pickle
    _, results = example
    for r in results:
        back = pickle.loads(pickle.dumps(r))
        assert back.metrics[0].sensitivity == r.metrics[0].sensitivity
        assert [m.key for m in back.metrics] == [m.key for m in r.metrics]
        assert not back.metrics[0].samples.flags.writeable
    w = Waveform(t_s=np.arange(3.0), nominal=np.zeros(3), min=np.zeros(3), max=np.zeros(3))
    assert pickle.loads(pickle.dumps(w)).t_s.tolist() == [0.0, 1.0, 2.0]
