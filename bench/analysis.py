"""Bench: the analysis of the 40-stage board, this tree against a git revision, per kind.

Two fresh worker processes (one BLAS thread each), one importing the rcdoc of
git revision REV (exported into a temporary folder), one this tree's. For each
stage kind of the board (bench/rebuild.py's 40 stages, 2000 samples) both run
rcdoc.kinds.analyse_stage on every stage of that kind, interleaved REV, tree,
REV, tree..., and the best of k repeats in CPU seconds (time.process_time
inside the worker) is kept. Printed: CPU per kind and in all, the ratio REV /
tree, and the largest relative difference between the two revisions' numbers
(nominal, worst case and samples of every metric, yields, ratings, stresses,
alternatives): the speed must not move a number beyond 1e-9 relative. A second
column leaves out differences below a millionth of the metric's resolution (as
the example JSON's test does: a passband gain of 1e-15 dB is rounding noise of
0 dB, its relative change means nothing).

The machine may be shared: only the ratios of one run mean anything.
Run:  python bench/analysis.py [--against REV] [--repeats K] [--quick] [--board FILE]
(--board: any project file instead, e.g. projects/greenhouse-controller.toml).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "bench"))

import rebuild  # noqa: E402  (bench/rebuild.py: the 40-stage board)

# The worker: reads stage indices (one line, comma-separated), analyses them and
# answers one JSON line {"cpu": seconds, "numbers": [[floats per stage]...]}.
WORKER = r'''
import json, math, sys, time
sys.path.insert(0, sys.argv[1])
import numpy as np
from rcdoc import kinds
project = kinds.load_project(sys.argv[2])

from rcdoc.analysis.metrics import METRICS

def numbers(r):
    """Every number of a stage's result, and beside each the absolute difference below
    which it counts as equal: a millionth of its metric's resolution (the example
    JSON's test: a passband gain of 1e-15 dB is rounding noise of 0 dB), else 0."""
    out, floors = [], []
    def add(values, floor=0.0):
        out.extend(values)
        floors.extend([floor] * len(values))
    def floor_of(name):
        return 1e-6 * METRICS[name].resolution if name in METRICS else 0.0
    for m in r.metrics:
        s = np.asarray(m.samples, dtype=float)
        add([m.nominal, *m.worst_case, float(np.nanmin(s)) if s.size else 0.0,
             float(np.nanmax(s)) if s.size else 0.0], floor_of(m.name))
        add([float(np.nansum(s))], floor_of(m.name) * max(s.size, 1))
    for v in list(r.verdicts) + list(r.ratings):
        add([v.yield_])
        add([v.worst, v.nominal, v.wc_low, v.wc_high], floor_of(getattr(v, "metric", "")))
    for st in r.stresses.values():
        add([st.nominal, st.worst])
    a = r.alternatives
    if a is not None:
        for row in a.rows:
            add(list(row.metrics) + list(row.yields))
    vals = [x if isinstance(x, float) and math.isfinite(x) else None for x in map(float, out)]
    return vals, floors

for line in sys.stdin:
    idx = [int(x) for x in line.split(",") if x]
    t = time.process_time()
    results = [kinds.analyse_stage(project.stages[i], project.analysis) for i in idx]
    cpu = time.process_time() - t
    got = [numbers(r) for r in results]
    print(json.dumps({"cpu": cpu, "numbers": [g[0] for g in got], "floors": [g[1] for g in got]}),
          flush=True)
'''


class Worker:
    def __init__(self, src: Path, board: Path):
        env = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1",
                   MKL_NUM_THREADS="1", PYTHONHASHSEED="0")
        self.proc = subprocess.Popen([sys.executable, "-c", WORKER, str(src), str(board)],
                                     stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True,
                                     env=env, cwd=str(src))

    def run(self, idx: list[int]) -> dict:
        self.proc.stdin.write(",".join(map(str, idx)) + "\n")
        self.proc.stdin.flush()
        return json.loads(self.proc.stdout.readline())

    def close(self):
        self.proc.stdin.close()
        self.proc.wait()


def export(rev: str, into: Path) -> Path:
    archive = subprocess.run(["git", "-C", str(ROOT), "archive", rev, "rcdoc"], check=True,
                             capture_output=True).stdout
    into.mkdir(parents=True, exist_ok=True)
    subprocess.run(["tar", "-x", "-C", str(into)], input=archive, check=True)
    return into


def largest_difference(a: list, b: list, floors: list | None = None) -> float:
    """The largest relative difference between two results' numbers; with ``floors``,
    of those apart by more than their floor (rounding noise of a zero left out)."""
    worst = 0.0
    for k, (sa, sb) in enumerate(zip(a, b)):
        if len(sa) != len(sb):
            return float("inf")
        fl = floors[k] if floors is not None else [0.0] * len(sa)
        for x, y, f in zip(sa, sb, fl):
            if (x is None) != (y is None):
                return float("inf")
            if x is not None and x != y and abs(x - y) > f:
                worst = max(worst, abs(x - y) / max(abs(x), abs(y)))
    return worst


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--against", default="HEAD", help="git revision to compare with (HEAD)")
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="10 stages, 300 samples, 1 repeat")
    ap.add_argument("--board", help="a project file instead of the 40-stage board")
    args = ap.parse_args(argv)
    stages, samples, k = (10, 300, 1) if args.quick else (40, 2000, args.repeats)
    import tomllib
    with tempfile.TemporaryDirectory(prefix="rcdoc-bench-") as tmp:
        if args.board:
            board = Path(args.board).resolve()
        else:
            board = Path(tmp) / "board.toml"
            board.write_text(rebuild.board(stages, samples), encoding="utf-8")
        kinds_of = [s["kind"] for s in tomllib.loads(board.read_text())["stage"]]
        old_src = export(args.against, Path(tmp) / "old")
        old, new = Worker(old_src, board), Worker(ROOT, board)
        try:
            old.run([0]), new.run([0])                       # imports and first calls
            what = args.board or f"{stages} stages at {samples} samples"
            print(f"analysis of {what}: {args.against} / this tree, best of {k}, CPU s")
            print(f"{'kind':22} {'stages':>6} {args.against[:10]:>10} {'tree':>8} {'ratio':>6}  "
                  "max rel diff  beyond floor")
            tot_old = tot_new = 0.0
            worst = worst_f = 0.0
            for kind in dict.fromkeys(kinds_of):
                idx = [i for i, kd in enumerate(kinds_of) if kd == kind]
                best_old = best_new = float("inf")
                for _ in range(k):
                    a, b = old.run(idx), new.run(idx)
                    best_old, best_new = min(best_old, a["cpu"]), min(best_new, b["cpu"])
                diff = largest_difference(a["numbers"], b["numbers"])
                diff_f = largest_difference(a["numbers"], b["numbers"], b.get("floors"))
                worst, worst_f = max(worst, diff), max(worst_f, diff_f)
                tot_old, tot_new = tot_old + best_old, tot_new + best_new
                print(f"{kind:22} {len(idx):6d} {best_old:10.2f} {best_new:8.2f} "
                      f"{best_old / best_new:6.2f}  {diff:.1e}       {diff_f:.1e}")
            print(f"{'all':22} {len(kinds_of):6d} {tot_old:10.2f} {tot_new:8.2f} "
                  f"{tot_old / tot_new:6.2f}  {worst:.1e}       {worst_f:.1e}")
        finally:
            old.close(), new.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
