"""Bench: the note's charts, per chart type, as CPU seconds and as ratios measured in one run.

Analyses the example board (projects/greenhouse-controller.toml) and the
40-stage board of bench/rebuild.py (2000 samples per stage, as bench/floor.py
d builds it), records every chart the note draws for them (the arguments of
each call to rcdoc.note.charts_freq, charts_time and logic_chart), and then
draws them all again, timed per chart type: CPU seconds (time.process_time)
per chart, the best of k repeats.

--against REV also draws the same recorded charts with the rcdoc of git
revision REV (exported into a temporary folder): fresh processes, the two
code paths interleaved, k rounds, best per chart type on each side; it prints
the ratio REV / this tree per type and over all charts, and how many of the
PNG images are byte-identical between the two (a chart that looks the same
should normally be the same bytes; compare the rest with your eyes), and how
many are the same pixels (the decoded RGB images: a PNG deflated differently
is other bytes but the same picture). Each board's line also gives the bytes of
all its charts (PNG; the 40-stage note's size aim).

--profile prints the top entries of a cProfile of one drawing of all charts.
--schematics times the schematics of the two boards instead (no analysis
needed): each round a fresh process per side draws them all, so the first
schematic's font loading is in the figure as it is in a build's worker; with
--against REV, the two sides interleaved, best of k, and the count of SVGs
byte-identical to REV's.
--quick shrinks the 40-stage board to 5 stages of 200 samples and k to 1.
--calls FILE keeps the recorded charts in FILE (a pickle this script wrote): read
when it exists, else written, so a second run skips the analysis (minutes).
Writes only into a temporary folder and FILE. Run:
    python bench/charts.py [--quick] [--repeats K] [--against REV] [--profile] [--calls FILE]
                           [--schematics]
"""

from __future__ import annotations

import argparse
import hashlib
import importlib
import io
import json
import os
import pickle
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "projects" / "greenhouse-controller.toml"
CHARTS = (("rcdoc.note.charts_freq", ("bode", "phasor")),
          ("rcdoc.note.charts_time", ("time_response", "histogram", "corner_overview_pages", "sweep")),
          ("rcdoc.note.logic_chart", ("edges",)))


def record(boards: dict[str, Path]) -> dict[str, list]:
    """Every chart call the note makes for each board: (module, function, args, kwargs)."""
    sys.path.insert(0, str(ROOT))
    from rcdoc.kinds import analyse_stage, load_project
    from rcdoc.note import page
    calls: list = []
    for name, funcs in CHARTS:
        module = importlib.import_module(name)
        for func in funcs:
            def spy(*args, _f=getattr(module, func), _m=name, _n=func, **kwargs):
                calls.append((_m, _n, args, kwargs))
                return _f(*args, **kwargs)
            setattr(module, func, spy)
    out = {}
    for board, path in boards.items():
        project = load_project(path)
        calls.clear()
        results = [analyse_stage(s, project.analysis) for s in project.stages]
        for r in results:
            page.stage_context(r, project)
        page.overview_images(results)
        out[board] = list(calls)
    return out


def draw_all(calls: dict[str, list], repeats: int, images: Path | None = None) -> dict:
    """{board: {chart type: best CPU seconds over `repeats` for all its charts}}, with
    the sha256 of each chart's bytes (under the key "sha256") and of its decoded
    pixels (under "pixels"; SVG charts: of their text) and their total size ("bytes")."""
    funcs = {(m, n): getattr(importlib.import_module(m), n) for b in calls.values()
             for m, n, _a, _k in b}
    warm = {}                       # first use of each: imports and font caches, not timed
    for board in calls.values():
        for m, n, a, k in board:
            warm.setdefault((m, n), (a, k))
    for key, (a, k) in warm.items():
        funcs[key](*a, **k)
    out: dict = {}
    for board, items in calls.items():
        best: dict[str, float] = {}
        digests = []
        for _ in range(repeats):
            spent: dict[str, float] = {}
            digests, pixels, size = [], [], 0
            for m, n, a, k in items:
                t0 = time.process_time()
                data = funcs[(m, n)](*a, **k)
                spent[n] = spent.get(n, 0.0) + time.process_time() - t0
                size += len(data)
                digests.append(hashlib.sha256(data if isinstance(data, bytes) else data.encode()).hexdigest())
                pixels.append(_pixel_digest(data))
            for n, s in spent.items():
                best[n] = min(best.get(n, float("inf")), s)
        out[board] = {"cpu": best, "count": {n: sum(1 for c in items if c[1] == n) for n in best},
                      "sha256": digests, "pixels": pixels, "bytes": size}
    return out


def _pixel_digest(data: bytes | str) -> str:
    if isinstance(data, str):
        return hashlib.sha256(data.encode()).hexdigest()
    from PIL import Image
    with Image.open(io.BytesIO(data)) as im:
        rgb = im.convert("RGB")
        return hashlib.sha256(repr(rgb.size).encode() + rgb.tobytes()).hexdigest()


_CHILD = """
import json, pickle, sys
sys.path.insert(0, sys.argv[1]); sys.path.insert(0, sys.argv[2])
import charts as bench
calls = pickle.load(open(sys.argv[3], "rb"))
print(json.dumps(bench.draw_all(calls, 1)))
"""


def against(calls_file: Path, rev: str, repeats: int, work: Path) -> tuple[dict, dict]:
    """Best per board and chart type of this tree and of `rev`, interleaved in fresh processes."""
    old = work / "rev"
    old.mkdir()
    archive = subprocess.run(["git", "-C", str(ROOT), "archive", rev, "rcdoc"], check=True,
                             capture_output=True).stdout
    subprocess.run(["tar", "-x", "-C", str(old)], input=archive, check=True)
    sides: dict[str, dict] = {"this": {}, rev: {}}
    for _ in range(repeats):
        for side, tree in (("this", ROOT), (rev, old)):
            env = dict(os.environ, PYTHONPATH=str(tree))
            out = subprocess.run([sys.executable, "-c", _CHILD, str(tree), str(ROOT / "bench"),
                                  str(calls_file)], check=True, capture_output=True, env=env,
                                 cwd=work).stdout
            got = json.loads(out)
            for board, res in got.items():
                mine = sides[side].setdefault(board, {"cpu": {}, "count": res["count"],
                                                      "sha256": res["sha256"],
                                                      "pixels": res["pixels"],
                                                      "bytes": res["bytes"]})
                for n, s in res["cpu"].items():
                    mine["cpu"][n] = min(mine["cpu"].get(n, float("inf")), s)
    return sides["this"], sides[rev]


def report(this: dict, other: dict | None, rev: str | None) -> None:
    for board, res in this.items():
        total = sum(res["cpu"].values())
        print(f"\n{board}: {sum(res['count'].values())} charts, {total:.2f} s CPU, "
              f"{res['bytes'] / 1e6:.2f} MB" + (f" ({rev}: {other[board]['bytes'] / 1e6:.2f} MB)"
                                                if other else ""))
        head = f"{'chart':16} {'n':>4} {'ms/chart':>9}"
        if other:
            head += f" {rev + ' ms':>12} {'ratio':>6}"
        print(head)
        for n in sorted(res["cpu"], key=lambda n: -res["cpu"][n]):
            line = f"{n:16} {res['count'][n]:4d} {1000 * res['cpu'][n] / res['count'][n]:9.1f}"
            if other:
                o = other[board]["cpu"][n]
                line += f" {1000 * o / res['count'][n]:12.1f} {o / res['cpu'][n]:6.2f}"
            print(line)
        if other:
            o_total = sum(other[board]["cpu"].values())
            same = sum(a == b for a, b in zip(res["sha256"], other[board]["sha256"]))
            looks = sum(a == b for a, b in zip(res["pixels"], other[board]["pixels"]))
            print(f"{'all':16} {'':4} {'':9} {'':12} {o_total / total:6.2f}   "
                  f"({same} of {len(res['sha256'])} images byte-identical to {rev}'s, "
                  f"{looks} the same pixels)")


def profile(calls: dict[str, list]) -> None:
    import cProfile
    import pstats
    prof = cProfile.Profile()
    prof.enable()
    draw_all(calls, 1)
    prof.disable()
    text = io.StringIO()
    pstats.Stats(prof, stream=text).sort_stats("cumulative").print_stats(40)
    print(text.getvalue())


_SCHEMATICS = """
import hashlib, json, sys, time
from pathlib import Path
from rcdoc.kinds import KINDS, load_project
from rcdoc.note.schematic import render_svg
out = {}
for board in sys.argv[1:]:
    recipes = [KINDS[s.kind].schematic(s) for s in load_project(Path(board)).stages]
    t0 = time.process_time()
    svgs = [render_svg(r) for r in recipes]
    out[board] = (time.process_time() - t0, len(svgs),
                  [hashlib.sha256(s.encode()).hexdigest() for s in svgs])
print(json.dumps(out))
"""


def schematics(boards: dict[str, Path], rev: str | None, repeats: int, work: Path) -> None:
    """Print the CPU seconds of drawing every schematic of each board (best of `repeats`
    fresh processes), against `rev` when given."""
    trees = {"this": ROOT}
    if rev:
        trees[rev] = work / "rev"
        trees[rev].mkdir()
        archive = subprocess.run(["git", "-C", str(ROOT), "archive", rev, "rcdoc"], check=True,
                                 capture_output=True).stdout
        subprocess.run(["tar", "-x", "-C", str(trees[rev])], input=archive, check=True)
    best: dict = {}
    for _ in range(repeats):
        for side, tree in trees.items():
            env = dict(os.environ, PYTHONPATH=str(tree))
            got = json.loads(subprocess.run(
                [sys.executable, "-c", _SCHEMATICS, *map(str, boards.values())], check=True,
                capture_output=True, env=env, cwd=work).stdout)
            for name, path in boards.items():
                cpu, n, digests = got[str(path)]
                old = best.get((side, name))
                best[(side, name)] = (min(cpu, old[0]) if old else cpu, n, digests)
    for name in boards:
        cpu, n, digests = best[("this", name)]
        line = f"{name}: {n} schematics, {cpu:.2f} s CPU ({1000 * cpu / n:.0f} ms each)"
        if rev:
            o_cpu, _, o_digests = best[(rev, name)]
            same = sum(a == b for a, b in zip(digests, o_digests))
            line += (f"; {rev}: {o_cpu:.2f} s, ratio {o_cpu / cpu:.2f} "
                     f"({same} of {n} byte-identical)")
        print(line)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--repeats", type=int, default=None)
    ap.add_argument("--against", metavar="REV")
    ap.add_argument("--profile", action="store_true")
    ap.add_argument("--calls", metavar="FILE", type=Path)
    ap.add_argument("--schematics", action="store_true")
    args = ap.parse_args(argv)
    repeats = args.repeats or (1 if args.quick else 3)
    sys.path.insert(0, str(ROOT / "bench"))
    import rebuild
    with tempfile.TemporaryDirectory(prefix="rcdoc-charts-") as tmp:
        work = Path(tmp)
        forty = work / "forty.toml"
        stages, samples = (5, 200) if args.quick else (40, 2000)
        forty.write_text(rebuild.board(stages, samples), encoding="utf-8")
        if args.schematics:
            print(f"schematics of the example board and a {stages}-stage board; "
                  f"best of {repeats} fresh processes, CPU seconds")
            schematics({"example": EXAMPLE, f"{stages}-stage": forty}, args.against, repeats, work)
            return 0
        print(f"recording the charts of the example board and a {stages}-stage board "
              f"({samples} samples); best of {repeats}, CPU seconds")
        if args.calls is not None and args.calls.exists():
            calls = pickle.loads(args.calls.read_bytes())
            print(f"(the charts recorded in {args.calls})")
        else:
            calls = record({"example": EXAMPLE, f"{stages}-stage": forty})
            if args.calls is not None:
                args.calls.write_bytes(pickle.dumps(calls))
        calls_file = work / "calls.pkl"
        calls_file.write_bytes(pickle.dumps(calls))
        if args.profile:
            profile(calls)
            return 0
        if args.against:
            this, other = against(calls_file, args.against, repeats, work)
        else:
            this, other = draw_all(calls, repeats), None
        report(this, other, args.against)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
