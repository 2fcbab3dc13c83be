"""The analysis's shared evaluations give the numbers of the methods they replace.

Each speed-up of the spine evaluates rows together that were evaluated apart
(alternative designs in one Evaluator, the worst case's walks in the last
chunk, several worst-case searches in lockstep with each point evaluated
once, the march without part reductions where no stress is read); each test
here runs the method it replaced beside it and compares. Closed-form checks:
a first-order low-pass's corner 1/(2πRC) (textbook) and a pattern search on
functions whose maxima are known.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from rcdoc.analysis import alternatives as alt
from rcdoc.analysis import analyse as spine
from rcdoc.analysis import worstcase
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.kinds import kind_of

from boards import load

LADDER = """
[[stage]]
id = "ladder"
title = "PWM smoothing"
kind = "rc-ladder"
load = { r = "100 kohm" }
drive = { pwm = "3.3 V", frequency = "20 kHz", duty = "30%" }
parts.r1 = { ref = "R1", value = "5000 ohm", tolerance = "1%", power = "0.1 W" }
parts.c1 = { ref = "C1", value = "220 nF", tolerance = "10%", dielectric = "X7R", voltage = "16 V" }
parts.r2 = { ref = "R2", value = "5000 ohm", tolerance = "1%", power = "0.1 W" }
parts.c2 = { ref = "C2", value = "220 nF", tolerance = "10%", dielectric = "X7R", voltage = "16 V" }
[[stage.check]]
metric = "ripple"
max = "20 mV"
"""

SALLEN_KEY = """
[[stage]]
id = "sk"
title = "Sallen-Key"
kind = "sallen-key-lowpass"
amplifier = { gbw = "1 MHz", gain = "110 dB" }
parts.r1 = { ref = "R1", value = "5100 ohm", tolerance = "1%" }
parts.r2 = { ref = "R2", value = "5100 ohm", tolerance = "1%" }
parts.c1 = { ref = "C1", value = "20 nF", tolerance = "5%", dielectric = "C0G" }
parts.c2 = { ref = "C2", value = "10 nF", tolerance = "5%", dielectric = "C0G" }
[[stage.check]]
metric = "q"
min = "0.6"
max = "0.8"
"""

LOWPASS_STEP = """
[[stage]]
id = "lp"
title = "Anti-alias"
kind = "rc-lowpass"
source = "1 kohm"
drive = { step = "3.3 V" }
parts.r = { ref = "R1", value = "4800 ohm", tolerance = "1%", power = "0.1 W" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "5%", dielectric = "C0G", voltage = "50 V" }
[[stage.check]]
metric = "settling"
bits = 12
max = "5 ms"
"""


def _close(a, b, rtol=1e-12):
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    assert a.shape == b.shape
    assert np.array_equal(np.isnan(a), np.isnan(b))
    ok = ~np.isnan(a)
    np.testing.assert_allclose(a[ok], b[ok], rtol=rtol, atol=0.0)


def _setup(tmp_path, stages, samples=60):
    project = load(tmp_path, stages, f"samples = {samples}")
    stage = project.stages[0]
    return spine._setup(stage, project.analysis, kind_of(stage), Evaluator), project


# ---- the march without part reductions -------------------------------------

@pytest.mark.parametrize("stages", [LADDER, LOWPASS_STEP])
def test_march_without_reductions_keeps_the_output(tmp_path, stages):
    """The output and every metric are the same numbers with or without the part
    voltages reduced on the fly (to rounding: under a step drive the march without
    them runs in closed form per run, transient._constant_march, the one with them
    step by step); a stress asked of an Evaluator without them still comes out,
    equal to the pipeline's (its own march)."""
    s, _ = _setup(tmp_path, stages)
    vals = s.batch.take(slice(0, s.batch.rows))
    full, bare = s.evaluate(vals), s.evaluate(vals, stresses=False)
    for name, at, chk in s.requests:
        a = full.metric(name, chk, at_hz=at)
        b = bare.metric(name, chk, at_hz=at)
        # (settling reads the response where it lies within 2^-13 of its final value:
        # a waveform's rounding of 1e-15 of its size moves it by about 1e-11)
        _close(a, b, rtol=1e-10)
    _close(full.step, bare.step, rtol=1e-12)
    for role, peak in full.capacitor_peaks().items():
        assert np.array_equal(peak, bare.capacitor_peaks()[role])
    for role, power in full.resistor_powers().items():
        assert np.array_equal(power, bare.resistor_powers()[role])


# ---- alternatives as rows of one Evaluator ---------------------------------

def test_alternatives_together_match_each_design_alone(tmp_path):
    """Every design's nominal and samples, evaluated together, equal the same design
    evaluated alone (each with its own Evaluator, as before) to rounding."""
    project = load(tmp_path, LADDER, "samples = 40")
    stage = project.stages[0]
    result = spine.analyse_network(stage, project.analysis, kind=kind_of(stage))
    requests = alt._requests(result, tuple(kind_of(stage).HEADLINE))
    designs = [("r1", 5000.0), ("r1", 4990.0), ("r2", 5110.0), ("c1", 270e-9)]
    together = alt.designs_metrics(result, project.analysis, designs, requests, samples=50)
    for (role, value), table in zip(designs, together):
        alone = alt.designs_metrics(result, project.analysis, [(role, value)], requests,
                                    samples=50)[0]
        assert table.shape == (51, len(requests))
        _close(table, alone)


def test_alternatives_as_drawn_once(tmp_path, monkeypatch):
    """Two non-preferred parts: six designs, of which the two 'as designed' are one
    evaluation; the table still holds six rows and both read the same numbers."""
    project = load(tmp_path, LADDER, "samples = 40")
    stage = project.stages[0]
    result = spine.analyse_network(stage, project.analysis, kind=kind_of(stage))
    asked = []
    real = alt.designs_metrics

    def counting(r, analysis, designs, requests, samples=alt.ALT_SAMPLES):
        asked.extend(designs)
        return real(r, analysis, designs, requests, samples)
    monkeypatch.setattr(alt, "designs_metrics", counting)
    out = alt.stage_alternatives(result, project.analysis, kind_of(stage), samples=30)
    assert len(out.rows) == 6 and len(asked) == 5
    drawn = [row for row in out.rows if row.step == ""]
    assert len(drawn) == 2 and drawn[0].metrics == drawn[1].metrics
    assert drawn[0].yields == drawn[1].yields


def test_alternatives_with_own_step_grids(tmp_path):
    """A settling check reads each design's own step grid: the designs are then
    evaluated apart, and the design as drawn reads the stage's own settling."""
    project = load(tmp_path, LOWPASS_STEP, "samples = 40")
    stage = project.stages[0]
    result = spine.analyse_network(stage, project.analysis, kind=kind_of(stage))
    requests = alt._requests(result, tuple(kind_of(stage).HEADLINE))
    assert alt._step_grid(requests, stage.drive)
    table = alt.designs_metrics(result, project.analysis, [("r", 4800.0)], requests,
                                samples=0)[0]
    # the 12-bit settling check (to rounding: the pipeline's march reduces the part
    # voltages, the alternatives' runs in closed form; see the march test above)
    _close(table[0, :1], [result.verdicts[0].nominal], rtol=1e-10)


# ---- the walks in the last chunk -------------------------------------------

@pytest.mark.parametrize("stages", [LADDER, SALLEN_KEY])
def test_walks_in_the_last_chunk_match_their_own_evaluator(tmp_path, stages):
    """The walks' metrics, computed as extra rows of the pipeline's last chunk, equal
    those of an Evaluator of their own (worstcase.Context.line_values, as before)."""
    s, _ = _setup(tmp_path, stages)
    g = spine._gather(s)
    own = spine._wc_context(s).line_values(s.requests, spine.request_key)
    assert set(g.line) == set(own)
    for key, values in own.items():
        assert len(values) == len(s.batch.roles) * worstcase.LINE_POINTS
        _close(g.line[key], values)
    # the chunk's own arrays hold the batch's rows only
    assert sum(len(u) for u in g.unstable) == s.batch.rows
    assert sum(len(v) for v in g.values[0]) == s.batch.rows


def test_first_order_corner_along_a_walk(tmp_path):
    """Along the resistor's walk a first-order low-pass's corner is 1/(2π(R + Rs)C)
    (textbook), C at its nominal in-circuit value."""
    stages = """
[[stage]]
id = "lp"
title = "RC"
kind = "rc-lowpass"
source = "1 kohm"
parts.r = { ref = "R1", value = "10 kohm", tolerance = "5%" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "5%", dielectric = "C0G" }
[[stage.check]]
metric = "corner"
max = "2 kHz"
"""
    s, _ = _setup(tmp_path, stages)
    g = spine._gather(s)
    roles = s.batch.roles
    ctx = spine._wc_context(s)
    x = worstcase.line_rows(ctx.part_values(slice(0, 1))[0], ctx.lows, ctx.highs)
    corner = next(v for k, v in g.line.items() if k[0] == "corner")
    r, c = x[:, roles.index("r")], x[:, roles.index("c")]
    expected = 1 / (2 * math.pi * (r + 1e3) * c)      # textbook RC low-pass
    np.testing.assert_allclose(corner, expected, rtol=1e-9)


# ---- searches in lockstep --------------------------------------------------

def _peaks(x):
    # f1 peaks at (0.3, 0.7), f2 at (0.9, 0.1): smooth, one maximum each (closed form)
    f1 = -((x[:, 0] - 0.3) ** 2 + (x[:, 1] - 0.7) ** 2)
    f2 = -((x[:, 0] - 0.9) ** 2 + 2 * (x[:, 1] - 0.1) ** 2)
    return f1, f2


def test_search_together_is_each_search_alone():
    """Two searches in lockstep visit exactly what each visits alone (same values,
    same order), one of them without room to move (no span in its problem)."""
    lows, highs = np.zeros(2), np.ones(2)
    starts = np.array([[0.5, 0.5], [0.1, 0.9], [0.8, 0.2]])
    up = np.array([True, True, False])
    calls = []

    def evaluate_all(ks, xs):
        calls.append(list(ks))
        return [_peaks(x)[k] for k, x in zip(ks, xs)]
    together = worstcase.search_together(evaluate_all, [(starts, up), (starts[:2], up[:2])],
                                         lows, highs)
    alone = [worstcase.search(lambda x, k=k: _peaks(x)[k], st, u, lows, highs)
             for k, (st, u) in enumerate([(starts, up), (starts[:2], up[:2])])]
    for a, b in zip(together, alone):
        assert np.array_equal(a, b)
    assert max(together[0]) == pytest.approx(0.0, abs=1e-10)   # f1's maximum is 0
    assert max(together[1]) == pytest.approx(0.0, abs=1e-10)
    assert calls[0] == [0, 1]
    empty = worstcase.search_together(evaluate_all, [(np.zeros((0, 2)), np.zeros(0, bool))],
                                      lows, highs)
    assert empty[0].size == 0


def test_seen_points_are_evaluated_once():
    """_Seen: a point asked again (in the same call or a later one) is not handed out
    for evaluation again, and its stored value comes back."""
    seen = worstcase._Seen(2, 2)
    rows = np.array([[0.0, 1.0], [0.5, 0.5], [0.0, 1.0]])
    points, at, todo = seen.merge(rows, [0])
    assert len(points) == 2 and len(todo) == 2 and at[0] == at[2]
    seen.store(todo, 0, np.array([1.0, 2.0]))
    points, at, todo = seen.merge(np.array([[0.5, 0.5], [0.25, 0.25]]), [0])
    assert len(todo) == 1 and np.array_equal(points[todo[0]], [0.25, 0.25])
    seen.store(todo, 0, np.array([np.nan]))
    assert seen.values[at[0], 0] == 2.0 and np.isnan(seen.values[at[1], 0])
    # another search's value of a known point is still missing
    _, at, todo = seen.merge(np.array([[0.5, 0.5]]), [1])
    assert len(todo) == 1


def test_enclose_all_matches_enclose_one_by_one(tmp_path):
    """A Sallen-Key stage whose corner, Q and peaking are searched: the ranges found
    with the searches together equal each search run alone (its own evaluators,
    as before) to rounding, and name the same method."""
    s, _ = _setup(tmp_path, SALLEN_KEY)
    g = spine._gather(s)
    ctx = spine._wc_context(s)
    jobs = []
    for k, q in enumerate(s.requests):
        arr = np.concatenate(g.values[k])
        jobs.append((q, arr, arr[s.batch.vertex], g.line[spine.request_key(q)]))
    together = ctx.enclose_all(jobs)
    searched = 0
    for (q, arr, corner_y, line_y), (wc, method) in zip(jobs, together):
        name, at, chk = q
        b = s.batch

        def evaluate(x, name=name, at=at, chk=chk):
            return np.asarray(ctx.evaluator(x).metric(name, chk, at_hz=at), dtype=float)
        found = [corner_y, arr[:1], arr[b.mc], line_y]
        if worstcase.needs_search(corner_y, float(arr[0]), arr[b.mc], line_y, len(b.roles)):
            searched += 1
            assert method.endswith(worstcase.SEARCHED)
            starts, up = worstcase.start_points(
                ctx.part_values(b.mc), arr[b.mc], ctx.part_values(slice(0, 1))[0],
                ctx.part_values(b.vertex), arr[b.vertex])
            found.append(worstcase.search(evaluate, starts, up, ctx.lows, ctx.highs))
        _close(wc, worstcase.enclosing_range(np.concatenate(found)), rtol=1e-9)
    assert searched >= 2


# ---- a search's rows prepared once ------------------------------------------

def test_response_rows_db_is_at_rows(tmp_path):
    """Response.rows(idx).db(f) is sweep_math.db(Response.at_rows(f, idx)) bit for bit,
    for all rows and for a subset, with a row that falls back to the direct solve;
    and that row's direct value agrees with its zero-pole-gain value (rounding)."""
    from rcdoc.analysis.sweep_math import db
    s, _ = _setup(tmp_path, SALLEN_KEY)
    ev = s.evaluate(s.batch.take(slice(0, s.batch.rows)))
    resp = ev.response
    rng = np.random.default_rng(7)
    f = s.char_hz * 10 ** rng.uniform(-2, 2, ev.rows)
    assert np.array_equal(resp.rows().db(f), db(resp.at_rows(f)))
    idx = np.array([0, 3, 5, 11])
    assert np.array_equal(resp.rows(idx).db(f[idx]), db(resp.at_rows(f[idx], idx)))
    zpk = resp.rows(idx).db(f[idx])
    resp.ok[3] = False                       # this row now takes the direct solve
    direct = resp.rows(idx).db(f[idx])
    assert np.array_equal(direct, db(resp.at_rows(f[idx], idx)))
    np.testing.assert_allclose(direct, zpk, rtol=1e-9, atol=1e-9)


def test_singularity_check_in_two_rounds_is_the_full_check():
    """assembly._singular_everywhere (every sixth test frequency first) gives the verdict
    of the check over all test frequencies at once: regular pencils, a singular one
    (a row and column of zeros: a node with nothing attached) and one singular only
    at DC (G singular, C regular: well conditioned at the other frequencies)."""
    from rcdoc.analysis import assembly

    def full(G, C):          # the check as it was: the largest rcond over all frequencies
        pencil = G[:, None] + assembly._TEST_OMEGAS[None, :, None, None] * C[:, None]
        return bool(np.any(np.max(assembly._rcond(pencil), axis=1) < assembly._SINGULAR_RCOND))
    rng = np.random.default_rng(3)
    G, C = rng.standard_normal((4, 5, 5)), rng.standard_normal((4, 5, 5)) * 1e-9
    cases = [(G, C)]
    Gs, Cs = G.copy(), C.copy()
    Gs[:, 2, :] = Gs[:, :, 2] = Cs[:, 2, :] = Cs[:, :, 2] = 0.0
    cases.append((Gs, Cs))
    Gd = G.copy()
    Gd[:, 0, :] = 0.0
    cases.append((Gd, C))
    Gm = G.copy()
    Gm[1:] = Gs[1:]                 # one regular row among singular ones
    cases.append((Gm, np.where(np.arange(4)[:, None, None] == 0, C, Cs)))
    verdicts = [assembly._singular_everywhere(g, c) for g, c in cases]
    assert verdicts == [full(g, c) for g, c in cases]
    assert verdicts[0] is False and verdicts[1] is True and verdicts[2] is False
