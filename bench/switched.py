"""Bench: periodic steady state of a converter input against the plain AC sweep.

One sampled-input stage (RC in front of a multiplexed 12-bit converter),
written as a project file and loaded by rcdoc itself; its batch of N rows
(default 20 000 Monte Carlo samples) as rcdoc.analysis.spread draws them. Timed, in
one run, best of ``--repeat``:

* the periodic steady state of the switched network for every row
  (rcdoc.analysis.sampled.steady: two exact interval maps per row by the matrix
  exponential, one batched linear solve; the charge integral included);
* the plain AC sweep of the same stage's RC network over its default sweep
  (3 decades either side of the corner, 50 points per decade) for the same
  rows (rcdoc.analysis.engine.ac).

Prints the ratio; the target is under 20x. Run:
python bench/switched.py [--samples N] [--repeat K]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from rcdoc.analysis import engine

from rcdoc.analysis import sampled

from rcdoc.analysis import spread  # noqa: E402
from rcdoc.kinds import kind_of  # noqa: E402
from rcdoc.analysis.evaluate import sweep_for  # noqa: E402
from rcdoc.kinds.sampled_input import params_for  # noqa: E402
from rcdoc.kinds import load_project  # noqa: E402

PROJECT = """\
[board]
name = "Bench"
revision = "A"
date = "2026-01-01"
[analysis]
samples = {samples}
[[stage]]
id = "ain0"
title = "AIN0"
kind = "sampled-input"
source = "1 kohm"
level = "3.0 V"
converter = {{ sampling_c = "12 pF", switch_r = "400 ohm", pin_c = "4 pF", acquisition = "300 ns", sample_rate = "200 kHz", full_scale = "3.3 V", bits = 12, start = "0 V", leakage = "200 nA" }}
[stage.parts.r]
value = "100 ohm"
tolerance = "1%"
[stage.parts.c]
value = "100 nF"
tolerance = "10%"
"""


def best(fn, repeat):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=20000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench.toml"
        path.write_text(PROJECT.format(samples=args.samples), encoding="utf-8")
        project = load_project(path)
    stage, analysis = project.stages[0], project.analysis
    kind = kind_of(stage)
    network = kind.build(stage)
    batch = spread.build_batch(stage, analysis)
    values = batch.take(batch.mc)
    freqs = sweep_for(kind.characteristic_hz(stage), analysis)
    p = params_for(stage, values)
    t_pss = best(lambda: sampled.steady(p), args.repeat)
    t_ac = best(lambda: engine.ac(network, values, freqs), args.repeat)
    print(f"rows: {len(values['r'])}, sweep points: {len(freqs)}")
    print(f"periodic steady state: {t_pss * 1e3:8.1f} ms")
    print(f"AC sweep:              {t_ac * 1e3:8.1f} ms")
    print(f"ratio: {t_pss / t_ac:.2f}x (target under 20x)")


if __name__ == "__main__":
    main()
