"""Bench: rcdoc against the floors of issue 17, as ratios measured in one run.

Each ratio is between two things timed in this run, interleaved and the best
of k repeats, in CPU seconds (time.process_time in this process; for a
subprocess, utime + stime of resource.getrusage(RUSAGE_CHILDREN) read by a
fresh wrapper process, so only that command counts; its workers included).
Sections (run all, or name some):

a  sweep  Monte Carlo sweep plus corner, 20 000 samples, first-order and
          unity-gain Sallen-Key stage: rcdoc's Evaluator (gain over the sweep and
          corner, in the pipeline's chunks) against the closed-form numpy floor
          (|H(jw)| over samples x frequencies; fc = 1/(2 pi RC), or the biquad's
          root of |H|^2 = 1/2) and a per-sample scipy loop (scipy.signal.freqs
          and scipy.optimize.brentq, timed on a subset and scaled linearly).
b  check  `rcdoc check` of eight first-order stages at 20 000 samples beyond
          its start-up (the same board with --samples 1), against the numpy
          floor for the same answers (draw, sweep, corner, gain at the mark)
          and the per-sample loop.
c  big    one rc-lowpass stage with a step drive at 200 000 samples (`check`
          in a fresh process): CPU seconds and peak RSS.
d  build  a cold 40-stage build (the analysed kinds in turn, 2000 samples)
          with --jobs 2, wall and CPU, and a rebuild after one part value
          changed from that build's output folder; k rounds of the two,
          interleaved, the best of each kept. First, how much two busy
          processes slow each other on this machine (a fixed loop's CPU time,
          two at once against one alone): the builds' branches run side by side.
e  render the note's render (write_outputs of the example board, analysed and
          drawn beforehand, serial, the garbage collector set as the command sets
          it) against a floor: the distinct PNG images taken out of the note's own
          PDF, spread over as many pages in minimal HTML, rendered by weasyprint
          directly in the same process. Each is timed after a full collection, so
          that each pays for collecting its own garbage, not for what the
          analysis, the drawing or the other render left. (d prints the
          40-stage PDF's size.)
p  profile cProfile of the check path (one case of b's board, in process):
          the top entries by cumulative time inside rcdoc.

The floors run in this process with the C heap kept as rcdoc's commands keep
it (rcdoc.commands.allocator: large arrays without fresh page faults each
time), so that a ratio compares the code, not the allocator's setting.

--quick shrinks every size (and k) to try the script; its ratios are not the
issue's. Writes only into a temporary folder. Run:
    python bench/floor.py [--quick] [--repeats K] [sections...]
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "bench"))

# This tree's commands package, before numpy loads: one BLAS thread (BLAS's idle
# threads spin after each call, and that CPU would count against whatever this
# process times next, the floors included) and the C heap kept, as the commands
# run (rcdoc/commands/__init__.py).
import rcdoc.commands  # noqa: E402,F401

import numpy as np  # noqa: E402
import scipy.optimize as so  # noqa: E402  (here: not timed inside the loop's first run)
import scipy.signal as sg  # noqa: E402

EXAMPLE = ROOT / "projects" / "greenhouse-controller.toml"
ROWS: list[tuple[str, str, str]] = []          # (section, what, value) for the table
HEAD = '[board]\nname = "Floor bench"\nrevision = "A"\ndate = "2026-01-01"\n'
# What the `rcdoc` console command runs (cli.entry: main, then the process ends
# without the interpreter's teardown).
CLI = "from rcdoc.commands.cli import entry; entry()"
# A fresh process that runs a command and reports the command's resource use alone:
# getrusage(RUSAGE_CHILDREN) counts the processes that were waited for; pool workers
# forked by a forkserver may not be, so the CPU of the whole process tree is also
# sampled from /proc every 0.2 s (Linux; each process's last < 0.2 s is missed) and
# the larger of the two is the CPU time. peak_mib: ru_maxrss, the largest single
# process; tree_mib: the largest sampled sum of the tree's resident sizes.
WRAP = r"""
import json, os, resource, subprocess, sys, time
TICK = os.sysconf("SC_CLK_TCK")
def tree(root):
    info = {}
    for e in os.listdir("/proc"):
        if e.isdigit():
            try:
                with open(f"/proc/{e}/stat") as fh:
                    st = fh.read()
                f = st[st.rindex(")") + 2:].split()
                info[int(e)] = (int(f[1]), (int(f[11]) + int(f[12])) / TICK, int(f[21]) * 4096)
            except (OSError, ValueError, IndexError):
                pass
    def under(pid):
        while pid > 1:
            if pid == root:
                return True
            pid = info[pid][0] if pid in info else 0
        return False
    return {p: v for p, v in info.items() if under(p)}
import threading
t = time.perf_counter()
p = subprocess.Popen(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
cpu, tree_peak, stop = {}, [0], threading.Event()
def sample():       # beside the wait, so that the wall time is not rounded to the sampling
    while not stop.is_set():
        seen = tree(p.pid)
        cpu.update({pid: v[1] for pid, v in seen.items()})
        tree_peak[0] = max(tree_peak[0], sum(v[2] for v in seen.values()))
        stop.wait(0.2)
sampler = threading.Thread(target=sample, daemon=True)
if os.path.isdir("/proc/self"):
    sampler.start()
err = p.communicate()[1]     # the command's end and the end of its stderr (any process holding it)
w = time.perf_counter() - t
stop.set()
if sampler.is_alive():
    sampler.join()
tree_peak = tree_peak[0]
u = resource.getrusage(resource.RUSAGE_CHILDREN)
print(json.dumps({"rc": p.returncode, "wall": w,
  "cpu": max(u.ru_utime + u.ru_stime, sum(cpu.values())), "peak_mib": u.ru_maxrss / 1024,
  "tree_mib": tree_peak / 2**20, "err": err.decode(errors="replace")[-2000:]}))
"""


def row(section: str, what: str, value: str) -> None:
    ROWS.append((section, what, value))
    print(f"  {section}  {what:64s} {value}", flush=True)


# ---- rcdoc's entry points: one import each, at the top of a small function ----

def load(path: Path, samples: int | None = None):
    from rcdoc.kinds import load_project
    return load_project(path, samples=samples)


def mc_values(stage, analysis) -> dict[str, np.ndarray]:
    from rcdoc.analysis.spread import build_batch
    batch = build_batch(stage, analysis)
    return {k: np.ascontiguousarray(v[batch.mc]) for k, v in batch.values.items()}


def stage_setup(stage, analysis):
    """Network, passband, characteristic frequency and sweep, as analyse_stage picks them."""
    from rcdoc.analysis.analyse import passband_of
    from rcdoc.analysis.evaluate import sweep_for
    from rcdoc.kinds import kind_of
    kind = kind_of(stage)
    char = kind.characteristic_hz(stage)
    return kind.build(stage), passband_of(stage, kind), char, sweep_for(char, analysis)


def rcdoc_sweep_corner(stage, network, values, freqs, passband, char, chunk=4000):
    """Gain over the sweep and corner of every row, in the pipeline's chunks of rows:
    one (gain, corner) pair of arrays per chunk. The pipeline takes its chunks one by
    one and never joins them, so neither does the timed call: the comparison with
    the floor joins them afterwards (the join of 48 MB of gains was a tenth of the
    Sallen-Key's timed call)."""
    from rcdoc.analysis.evaluate import Evaluator
    rows = len(next(iter(values.values())))
    chunks = []
    for s in range(0, rows, chunk):
        ev = Evaluator(stage, network, {k: v[s:s + chunk] for k, v in values.items()},
                       freqs, passband, char)
        chunks.append((ev.gain_db, ev.corner()))
    return chunks


# ---- the floors ---------------------------------------------------------------

def floor_first_order(r, c, freqs, mark=None):
    """H = 1/(1 + sRC) (any circuits textbook): dB over samples x freqs, fc = 1/(2 pi RC)."""
    tau = r * c
    x = np.square(np.multiply.outer(tau, 2 * np.pi * freqs))
    gain = -10 * np.log10(1 + x)
    corner = 1 / (2 * np.pi * tau)
    at = None if mark is None else -10 * np.log10(1 + (2 * np.pi * mark * tau) ** 2)
    return gain, corner, at


def floor_sallen_key(v, freqs):
    """Unity-gain Sallen-Key, H = 1/(s^2 a + s b + 1), a = r1 r2 c1 c2, b = c2 (r1 + r2)
    (docs/project-format.md, the standard result). |H|^2 = 1/2 at x = w^2 with
    a^2 x^2 + (b^2 - 2a) x - 1 = 0; the positive root in its cancellation-free form."""
    a = v["r1"] * v["r2"] * v["c1"] * v["c2"]
    b = v["c2"] * (v["r1"] + v["r2"])
    w2 = np.square(2 * np.pi * freqs)
    gain = -10 * np.log10(np.square(1 - np.multiply.outer(a, w2)) + np.multiply.outer(b * b, w2))
    p = b * b - 2 * a
    x = 2 / (p + np.sqrt(p * p + 4 * a * a))
    return gain, np.sqrt(x) / (2 * np.pi)


def scipy_loop(num_den, freqs, mark=None):
    """Per sample: scipy.signal.freqs over the sweep, brentq for the -3 dB corner."""
    w = 2 * np.pi * freqs
    out = []
    for b, a in num_den:
        _, h = sg.freqs(b, a, worN=w)
        g = 20 * np.log10(np.abs(h))
        target = abs(b[-1] / a[-1]) / math.sqrt(2)
        j = int(np.argmax(g < 20 * math.log10(target)))
        fc = so.brentq(lambda f: abs(sg.freqs(b, a, worN=[2 * np.pi * f])[1][0]) - target,
                       freqs[j - 1], freqs[j], xtol=1e-12 * freqs[j], rtol=1e-14)
        gm = None if mark is None else 20 * np.log10(abs(sg.freqs(b, a, worN=[2 * np.pi * mark])[1][0]))
        out.append((g, fc, gm))
    return out


def best_of(k: int, jobs: dict) -> dict[str, tuple[float, object]]:
    """CPU seconds of each job, interleaved, best of k; with the last result."""
    best: dict[str, list] = {n: [math.inf, None] for n in jobs}
    for _ in range(k):
        for name, fn in jobs.items():
            t0 = time.process_time()
            res = fn()
            dt = time.process_time() - t0
            best[name] = [min(best[name][0], dt), res]
    return {n: (v[0], v[1]) for n, v in best.items()}


def measure(args: list[str], cwd: Path) -> dict:
    """Run `rcdoc <args>` through cli.main in a fresh process: wall, CPU, peak RSS."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.run([sys.executable, "-c", WRAP, sys.executable, "-c", CLI, *args],
                          capture_output=True, text=True, cwd=cwd, env=env)
    res = json.loads(proc.stdout.strip().splitlines()[-1])
    if res["rc"] not in (0, 1):
        raise SystemExit(f"rcdoc {' '.join(args)} failed ({res['rc']}):\n{res['err']}")
    return res


# ---- a: sweep plus corner -------------------------------------------------------

SWEEP_BOARD = HEAD + '''
[analysis]
samples = 20000
seed = 1

[[stage]]
id = "first-order"
title = "RC low-pass"
kind = "rc-lowpass"
parts.r = { value = "4k7", tolerance = "1%" }
parts.c = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }

[[stage]]
id = "sallen-key"
title = "Sallen-Key low-pass"
kind = "sallen-key-lowpass"
parts.r1 = { value = "11k", tolerance = "1%" }
parts.r2 = { value = "11k", tolerance = "1%" }
parts.c1 = { value = "20 nF", tolerance = "5%", dielectric = "C0G" }
parts.c2 = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }
'''


def num_den(kind: str, v: dict[str, np.ndarray], i: int):
    if kind == "rc-lowpass":
        return [1.0], [float(v["r"][i] * v["c"][i]), 1.0]
    r1, r2, c1, c2 = (float(v[k][i]) for k in ("r1", "r2", "c1", "c2"))
    return [1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0]


def section_sweep(tmp: Path, n: int, loop_n: int, k: int) -> None:
    path = tmp / "sweep.toml"
    path.write_text(SWEEP_BOARD, encoding="utf-8")
    project = load(path, samples=n)
    for stage in project.stages:
        values = mc_values(stage, project.analysis)
        network, passband, char, freqs = stage_setup(stage, project.analysis)
        if stage.kind == "rc-lowpass":
            def floor():
                return floor_first_order(values["r"], values["c"], freqs)[:2]
        else:
            def floor():
                return floor_sallen_key(values, freqs)
        m = min(loop_n, n)
        t = best_of(k, {
            "rcdoc": lambda: rcdoc_sweep_corner(stage, network, values, freqs, passband, char),
            "floor": floor,
            "loop": lambda: scipy_loop([num_den(stage.kind, values, i) for i in range(m)], freqs)})
        g_r, c_r = (np.concatenate(a) for a in zip(*t["rcdoc"][1]))
        g_f, c_f = t["floor"][1]
        loop_s = t["loop"][0] * n / m
        name = f"{stage.kind} {n} x {len(freqs)}"
        row("a", f"{name}: rcdoc Evaluator sweep+corner", f"{t['rcdoc'][0]:.3f} s")
        row("a", f"{name}: closed-form numpy floor", f"{t['floor'][0]:.3f} s")
        row("a", f"{name}: scipy loop ({m} samples, x{n / m:g})", f"{loop_s:.1f} s")
        row("a", f"{stage.kind}: rcdoc / floor   [target <= 3]", f"{t['rcdoc'][0] / t['floor'][0]:.1f}x")
        row("a", f"{stage.kind}: loop / rcdoc", f"{loop_s / t['rcdoc'][0]:.1f}x")
        row("a", f"{stage.kind}: max |dB|, corner rel. diff, rcdoc vs floor",
            f"{np.max(np.abs(g_r - g_f)):.1e}, {np.max(np.abs(c_r / c_f - 1)):.1e}")


# ---- b: a whole check of eight first-order stages -------------------------------

R_CHECK = [1000 * (1 + i) for i in range(8)]          # 1k ... 8k, C = 10 nF


def check_board(samples: int) -> str:
    text = HEAD + f"\n[analysis]\nsamples = {samples}\nseed = 3\n"
    for i, r in enumerate(R_CHECK, start=1):
        text += (f'\n[[stage]]\nid = "lp-{i}"\ntitle = "Input {i}"\nkind = "rc-lowpass"\n'
                 'marks = ["100 kHz"]\n'
                 f'parts.r = {{ value = "{r} ohm", tolerance = "1%" }}\n'
                 'parts.c = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }\n'
                 '[[stage.check]]\nmetric = "corner"\nmin = "1 kHz"\n'
                 '[[stage.check]]\nmetric = "gain"\nat = "100 kHz"\nmax = "-3 dB"\n')
    return text


def floor_check(n: int):
    """The same answers with bare numpy: draw, sweep (3 decades either side, 50 per
    decade), corner and gain at the mark for each of the eight stages."""
    rng = np.random.default_rng(3)
    out = []
    for r0 in R_CHECK:
        r = r0 * rng.uniform(0.99, 1.01, n)
        c = 10e-9 * rng.uniform(0.95, 1.05, n)
        fc = 1 / (2 * np.pi * r0 * 10e-9)
        freqs = np.logspace(math.log10(fc) - 3, math.log10(fc) + 3, 301)
        out.append(floor_first_order(r, c, freqs, mark=100e3))
    return out


def loop_check(m: int):
    rng = np.random.default_rng(3)
    for r0 in R_CHECK:
        fc = 1 / (2 * np.pi * r0 * 10e-9)
        freqs = np.logspace(math.log10(fc) - 3, math.log10(fc) + 3, 301)
        pairs = [([1.0], [r0 * a * 10e-9 * b, 1.0])
                 for a, b in zip(rng.uniform(0.99, 1.01, m), rng.uniform(0.95, 1.05, m))]
        scipy_loop(pairs, freqs, mark=100e3)


def section_check(tmp: Path, n: int, loop_n: int, k: int) -> None:
    path = tmp / "check8.toml"
    path.write_text(check_board(n), encoding="utf-8")
    runs = {"full": [], "start": []}
    floor = loop = math.inf
    m = min(loop_n, n)
    for rep in range(k):
        for name, samples in (("full", n), ("start", 1)):
            out = tmp / f"check-out-{name}-{rep}"        # a fresh (empty) cache each time
            runs[name].append(measure(["check", str(path), "--samples", str(samples),
                                       "--jobs", "1", "--quiet", "-o", str(out)], tmp))
        t0 = time.process_time()
        floor_check(n)
        floor = min(floor, time.process_time() - t0)
        t0 = time.process_time()
        loop_check(m)
        loop = min(loop, (time.process_time() - t0) * n / m)
    full = min(r["cpu"] for r in runs["full"])
    start = min(r["cpu"] for r in runs["start"])
    beyond = full - start
    row("b", f"check 8 x rc-lowpass, {n} samples, --jobs 1 (CPU)", f"{full:.2f} s "
        f"(wall {min(r['wall'] for r in runs['full']):.2f} s)")
    row("b", "start-up: same check with --samples 1 (CPU)", f"{start:.2f} s")
    row("b", "check beyond start-up", f"{beyond:.2f} s")
    row("b", "bare-numpy floor (draw, sweep, corner, gain at mark)", f"{floor:.3f} s")
    row("b", f"per-sample scipy loop ({m} samples a stage, x{n / m:g})", f"{loop:.1f} s")
    row("b", "check beyond start-up / floor   [target <= 3]", f"{beyond / floor:.1f}x")
    row("b", "loop / check beyond start-up   [target >= 10]", f"{loop / beyond:.1f}x")
    row("b", "loop / whole check", f"{loop / full:.1f}x")


# ---- c: one stage at 200 000 samples --------------------------------------------

BIG_BOARD = HEAD + '''
[analysis]
samples = 2000
seed = 5

[[stage]]
id = "big"
title = "RC low-pass, step drive"
kind = "rc-lowpass"
drive = { step = "3.3 V" }
parts.r = { value = "4k7", tolerance = "1%" }
parts.c = { value = "10 nF", tolerance = "5%", dielectric = "C0G" }
[[stage.check]]
metric = "settling"
bits = 12
max = "5 ms"
'''


def section_big(tmp: Path, n: int) -> None:
    path = tmp / "big.toml"
    path.write_text(BIG_BOARD, encoding="utf-8")
    res = measure(["check", str(path), "--samples", str(n), "--jobs", "1", "--quiet",
                   "-o", str(tmp / "big-out")], tmp)
    start = measure(["check", str(path), "--samples", "1", "--jobs", "1", "--quiet",
                     "-o", str(tmp / "big-out-1")], tmp)
    row("c", f"rc-lowpass + step, {n} samples: CPU   [target < 25 s]",
        f"{res['cpu']:.1f} s (start-up {start['cpu']:.1f} s, wall {res['wall']:.1f} s)")
    row("c", f"rc-lowpass + step, {n} samples: peak RSS   [target < 800 MB]",
        f"{res['peak_mib']:.0f} MiB (start-up {start['peak_mib']:.0f} MiB)")


# ---- d: cold 40-stage build and a one-value rebuild ------------------------------

def section_build(tmp: Path, stages: int, samples: int, k: int = 1) -> Path:
    """k rounds, each a cold build and then a rebuild after one part value
    changed, from the output folder (and its cache) that cold build left; the
    best of each kept. Interleaved and best of k on both sides, so that the
    ratio compares like with like on a noisy machine."""
    import shutil
    from rebuild import board          # bench/rebuild.py: the analysed kinds in turn
    path = tmp / "board40.toml"
    out = tmp / "board40-out"
    cold = warm = None
    for _ in range(k):
        shutil.rmtree(out, ignore_errors=True)
        path.write_text(board(stages, samples), encoding="utf-8")
        run = measure(["build", str(path), "-o", str(out), "--jobs", "2", "--quiet"], tmp)
        cold = run if cold is None or run["wall"] < cold["wall"] else cold
        path.write_text(board(stages, samples, changed=stages // 2), encoding="utf-8")
        run = measure(["build", str(path), "-o", str(out), "--jobs", "2", "--quiet"], tmp)
        warm = run if warm is None or run["wall"] < warm["wall"] else warm
    name = f"{stages} stages, {samples} samples, --jobs 2"
    row("d", "two busy processes: each one's CPU for a fixed loop, against it alone",
        f"{contention(k):.2f}x")
    row("d", f"cold build, {name}, best of {k}   [target < 30 s wall]",
        f"{cold['wall']:.1f} s wall, {cold['cpu']:.1f} s CPU, {cold['tree_mib']:.0f} MiB peak (all)")
    row("d", f"rebuild after one value change (stage {stages // 2}), best of {k}",
        f"{warm['wall']:.2f} s wall, {warm['cpu']:.2f} s CPU, {warm['tree_mib']:.0f} MiB peak (all)")
    row("d", "rebuild / cold, wall   [target < 10 %]", f"{100 * warm['wall'] / cold['wall']:.1f} %")
    row("d", "rebuild / cold, CPU", f"{100 * warm['cpu'] / cold['cpu']:.1f} %")
    pdf = out / "board40.pdf"
    row("d", f"{stages}-stage note PDF size   [target < 6 MB]", f"{pdf.stat().st_size / 1e6:.2f} MB")
    return pdf


# A fixed pure-Python loop; prints its own CPU seconds.
SPIN = ("import time\nt = time.process_time()\nx = 0\n"
        "for i in range(6_000_000):\n    x += i * i\nprint(time.process_time() - t)")


def contention(k: int) -> float:
    """The CPU seconds of SPIN run by two processes at once (their mean) against
    SPIN run alone, the best of k each, interleaved. 1.0: each of two busy
    processes runs at full speed; above it, the machine's cores slow each other
    (shared by the host, or threads of one core): a build's two busy branches
    then overlap for less than twice the work of one."""
    def run(n: int) -> list[float]:
        procs = [subprocess.Popen([sys.executable, "-c", SPIN], stdout=subprocess.PIPE, text=True)
                 for _ in range(n)]
        return [float(p.communicate()[0]) for p in procs]
    alone = both = math.inf
    for _ in range(k):
        alone = min(alone, run(1)[0])
        both = min(both, sum(run(2)) / 2)
    return both / alone


# ---- e: the note's render against a floor ----------------------------------------

# Runs in a fresh process: analyse and draw once (serial), then render the note
# and the floor k times, interleaved; prints CPU seconds as JSON. The process's
# garbage collector is set as the rcdoc command sets its own (collector.tune), for
# the note and the floor alike: the note's render is measured as the command runs it.
RENDER = r'''
import gc, json, sys, time
from pathlib import Path
sys.path.insert(0, sys.argv[1])
import floor as bench
from rcdoc.commands.collector import tune
tune()
file, samples, k, tmp = Path(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4]), Path(sys.argv[5])
project = bench.load(file, samples=samples)
outcome = bench.analyse_drawn(project)
note, fl, pages = [], [], None
fresh = None if outcome.parts is None else list(outcome.parts)
for rep in range(k):
    if fresh is not None:   # write_outputs files the parts it rendered: start each repeat cold
        outcome.parts[:] = fresh
    outcome.note_parts.clear()   # the appendix and page-number parts too
    gc.collect()                 # each side pays for its own garbage, not the other's
    t0 = time.process_time()
    pdf = bench.write_note(outcome, tmp / f"note-{rep}")
    note.append(time.process_time() - t0)
    if pages is None:
        html, pages = bench.floor_html(pdf, tmp / "floor")
    gc.collect()
    t0 = time.process_time()
    floor_pages = bench.render_floor(html, tmp / "floor")
    fl.append(time.process_time() - t0)
print(json.dumps({"note": min(note), "floor": min(fl), "pages": pages,
                  "floor_pages": floor_pages, "mb": pdf.stat().st_size / 1e6}))
'''


def analyse_drawn(project):
    from rcdoc.commands.build import analyse_project
    return analyse_project(project, jobs=1, draw=True)


def write_note(outcome, out: Path) -> Path:
    from rcdoc.commands.build import write_outputs
    return write_outputs(outcome, out)[0]


def floor_html(pdf: Path, folder: Path) -> tuple[str, int]:
    """Minimal HTML with the note's PNG images (taken out of its PDF with pypdf,
    each distinct image once: a page's resources may list images of other pages)
    spread in order over as many sections as the note has pages, each with a
    heading and a line."""
    import hashlib
    import pypdf
    folder.mkdir(parents=True, exist_ok=True)
    pages = pypdf.PdfReader(pdf).pages
    names, seen = [], set()
    for page in pages:
        for img in page.images:
            digest = hashlib.sha256(img.data).hexdigest()
            if digest not in seen:
                seen.add(digest)
                names.append(f"img-{len(names)}.png")
                img.image.save(folder / names[-1], format="PNG")
    per = -(-len(names) // max(1, len(pages)))
    body = []
    for p in range(len(pages)):
        mine = names[p * per:(p + 1) * per]
        imgs = "".join(f'<img src="{n}" style="max-height:{200 // max(1, len(mine))}mm;'
                       'max-width:170mm;display:block">' for n in mine)
        body.append(f'<section><h2>Page {p + 1}</h2><p>Floor page.</p>{imgs}</section>')
    css = ("@page{size:A4;margin:20mm} section{page-break-after:always}"
           " section:last-child{page-break-after:auto}")
    return (f"<!doctype html><html><head><meta charset='utf-8'><style>{css}</style></head>"
            f"<body>{''.join(body)}</body></html>"), len(pages)


def render_floor(html: str, folder: Path) -> int:
    import weasyprint
    doc = weasyprint.HTML(string=html, base_url=str(folder)).render()
    doc.write_pdf(folder / "floor.pdf")
    return len(doc.pages)


def section_render(tmp: Path, samples: int, k: int) -> None:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.run([sys.executable, "-c", RENDER, str(ROOT / "bench"), str(EXAMPLE),
                           str(samples), str(k), str(tmp / "render")],
                          capture_output=True, text=True, cwd=tmp, env=env)
    if proc.returncode != 0:
        raise SystemExit(f"render failed:\n{proc.stderr[-3000:]}")
    r = json.loads(proc.stdout.strip().splitlines()[-1])
    row("e", f"example note render, write_outputs, serial ({r['pages']} pages)", f"{r['note']:.2f} s CPU")
    row("e", f"floor: same PNGs, minimal HTML, weasyprint ({r['floor_pages']} pages)",
        f"{r['floor']:.2f} s CPU")
    row("e", "note render / floor   [target <= 2]", f"{r['note'] / r['floor']:.2f}x")
    row("e", "example note PDF size", f"{r['mb']:.2f} MB")


# ---- p: where the check's time goes -----------------------------------------------

def section_profile(tmp: Path, n: int, top: int = 10) -> None:
    import cProfile
    import io
    import pstats
    from rcdoc.commands.build import analyse_project
    path = tmp / "profile.toml"
    path.write_text(check_board(n), encoding="utf-8")
    project = load(path, samples=n)
    prof = cProfile.Profile()
    prof.runcall(analyse_project, project, jobs=1)
    buf = io.StringIO()
    stats = pstats.Stats(prof, stream=buf).sort_stats("cumulative")
    stats.print_stats(r"rcdoc[/\\]", top)
    text = buf.getvalue()
    start = text.find("   ncalls")
    print(f"  p  cProfile of the check path (analyse_project, 8 x rc-lowpass, {n} samples), "
          f"top {top} cumulative inside rcdoc:")
    for line in text[start:].rstrip().splitlines():
        print("     " + line.replace(str(ROOT) + os.sep, ""))


# ---- main ----------------------------------------------------------------------

def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("sections", nargs="*", default=list("abcdep"),
                    help="any of a b c d e p (default: all)")
    ap.add_argument("--quick", action="store_true", help="small sizes, to try the script")
    ap.add_argument("--repeats", type=int, default=None, help="k, the repeats of each timing")
    args = ap.parse_args(argv)
    q = args.quick
    k = args.repeats or (1 if q else 3)
    n = 2000 if q else 20000
    print(f"floor bench: {'quick' if q else 'full'}, best of {k}, CPU seconds unless said, "
          f"{os.cpu_count()} cores, load {os.getloadavg()[0]:.1f}", flush=True)
    t_all = time.perf_counter()
    # rcdoc's bytecode first, as an installed package has it (pip compiles at install,
    # Python on first import): where PYTHONDONTWRITEBYTECODE is set, every command
    # would otherwise compile the modules changed since their .pyc was written.
    import compileall
    compileall.compile_dir(str(ROOT / "rcdoc"), quiet=1)
    with tempfile.TemporaryDirectory(prefix="rcdoc-floor-") as name:
        tmp = Path(name)
        if "c" in args.sections:     # first: nothing else has run in a child yet
            section_big(tmp, 20000 if q else 200000)
        if "a" in args.sections:
            section_sweep(tmp, n, 50 if q else 200, k)
        if "b" in args.sections:
            section_check(tmp, n, 20 if q else 100, k)
        if "d" in args.sections:
            section_build(tmp, 10 if q else 40, 300 if q else 2000, k)
        if "e" in args.sections:
            section_render(tmp, 200, 1 if q else max(k, 2))
        if "p" in args.sections:
            section_profile(tmp, n)
    print(f"\n{'':2s}{'sec':3s} {'what':64s} value")
    for sec, what, value in ROWS:
        print(f"  {sec:3s} {what:64s} {value}")
    print(f"(bench ran {time.perf_counter() - t_all:.0f} s wall)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
