"""Bench: cold build and rebuild after one value change of a generated 40-stage board.

Writes a board of 40 stages (RC low-pass with a step drive, RC high-pass,
two-section RC ladder with a PWM drive, Sallen-Key and multiple-feedback
low-pass, in turn; invented values) into a temporary folder, then times, each
as a separate `python -m rcdoc build` process:

1. the cold build (empty output folder, so an empty build cache);
2. the rebuild after one part value of one stage has changed (the cache
   serves the other 39 stages).

It prints both wall-clock times, their ratio, and the peak memory: the
largest sum of the resident sizes of the build process and its workers,
sampled every 50 ms from /proc (Linux; elsewhere "n/a").

The sample count per stage is 500 by default (the example board uses 2000);
the figures in the README say which was used. Run:
    python bench/rebuild.py [--stages 40] [--samples 500] [--jobs N]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent

HEADER = """\
[board]
name = "Bench board, {stages} stages"
revision = "A"
date = "2026-01-15"

[analysis]
samples = {samples}
seed = 11
temperature = ["0 °C", "50 °C"]
"""

# One template per kind; {k} makes values differ from stage to stage.
KINDS = [
    """
[[stage]]
id = "lp-{i}"
title = "Sensor input {i}: anti-alias filter"
kind = "rc-lowpass"
source = "1 kohm"
drive = {{ step = "3.3 V" }}
parts.r = {{ ref = "R{i}01", value = "{r} ohm", tolerance = "1%", power = "0.1 W" }}
parts.c = {{ ref = "C{i}01", value = "10 nF", tolerance = "5%", dielectric = "C0G", voltage = "50 V" }}
[[stage.check]]
metric = "settling"
bits = 12
max = "5 ms"
""",
    """
[[stage]]
id = "hp-{i}"
title = "Pulse input {i}: AC coupling"
kind = "rc-highpass"
source = "2.2 kohm"
parts.c = {{ ref = "C{i}02", value = "1 uF", tolerance = "10%", dielectric = "X7R", voltage = "25 V" }}
parts.r = {{ ref = "R{i}02", value = "{r}0 ohm", tolerance = "1%" }}
[[stage.check]]
metric = "corner"
max = "20 Hz"
""",
    """
[[stage]]
id = "ladder-{i}"
title = "Set-point {i}: PWM smoothing"
kind = "rc-ladder"
load = {{ r = "100 kohm" }}
drive = {{ pwm = "3.3 V", frequency = "20 kHz", duty = "50%" }}
parts.r1 = {{ ref = "R{i}03", value = "{r} ohm", tolerance = "1%", power = "0.1 W" }}
parts.c1 = {{ ref = "C{i}03", value = "220 nF", tolerance = "10%", dielectric = "X7R", voltage = "16 V" }}
parts.r2 = {{ ref = "R{i}04", value = "{r} ohm", tolerance = "1%", power = "0.1 W" }}
parts.c2 = {{ ref = "C{i}04", value = "220 nF", tolerance = "10%", dielectric = "X7R", voltage = "16 V" }}
[[stage.check]]
metric = "ripple"
max = "20 mV"
""",
    """
[[stage]]
id = "sk-{i}"
title = "Analog input {i}: Sallen-Key low-pass"
kind = "sallen-key-lowpass"
amplifier = {{ gbw = "1 MHz", gain = "110 dB" }}
parts.r1 = {{ ref = "R{i}05", value = "{r} ohm", tolerance = "1%" }}
parts.r2 = {{ ref = "R{i}06", value = "{r} ohm", tolerance = "1%" }}
parts.c1 = {{ ref = "C{i}05", value = "20 nF", tolerance = "5%", dielectric = "C0G" }}
parts.c2 = {{ ref = "C{i}06", value = "10 nF", tolerance = "5%", dielectric = "C0G" }}
[[stage.check]]
metric = "q"
min = "0.6"
max = "0.8"
""",
    """
[[stage]]
id = "mfb-{i}"
title = "Probe {i}: multiple-feedback low-pass"
kind = "mfb-lowpass"
amplifier = {{ gbw = "1 MHz", gain = "100 dB" }}
parts.r1 = {{ ref = "R{i}07", value = "{r} ohm", tolerance = "1%" }}
parts.r2 = {{ ref = "R{i}08", value = "20k", tolerance = "1%" }}
parts.r3 = {{ ref = "R{i}09", value = "20k", tolerance = "1%" }}
parts.c1 = {{ ref = "C{i}07", value = "270 nF", tolerance = "5%", dielectric = "film-pet" }}
parts.c2 = {{ ref = "C{i}08", value = "27 nF", tolerance = "5%", dielectric = "film-pet" }}
""",
]


def board(stages: int, samples: int, changed: int | None = None) -> str:
    """The board's TOML; ``changed`` gives that stage's first resistor a different value."""
    text = HEADER.format(stages=stages, samples=samples)
    for i in range(1, stages + 1):
        r = 4700 + 100 * i + (330 if i == changed else 0)
        text += KINDS[(i - 1) % len(KINDS)].format(i=i, r=r)
    return text


def _tree_rss_kib(root: int) -> int:
    """Resident KiB of ``root`` and all its descendants (Linux /proc)."""
    parents: dict[int, int] = {}
    rss: dict[int, int] = {}
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat") as fh:
                stat = fh.read()
            ppid = int(stat[stat.rindex(")") + 2:].split()[1])
            with open(f"/proc/{entry}/status") as fh:
                kib = next((int(line.split()[1]) for line in fh if line.startswith("VmRSS:")), 0)
        except (OSError, ValueError, StopIteration):
            continue
        parents[int(entry)] = ppid
        rss[int(entry)] = kib
    total = 0
    for pid in rss:
        p = pid
        while p > 1:
            if p == root:
                total += rss[pid]
                break
            p = parents.get(p, 0)
    return total


def timed_build(project: Path, out: Path, jobs: int) -> tuple[float, int | None]:
    cmd = [sys.executable, "-m", "rcdoc", "build", str(project), "-o", str(out), "--quiet",
           "--jobs", str(jobs)]
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, cwd=REPO, env=env, stderr=subprocess.PIPE)
    peak = [0]
    linux = os.path.isdir("/proc/self")

    def sample():
        while proc.poll() is None:
            try:
                peak[0] = max(peak[0], _tree_rss_kib(proc.pid))
            except OSError:
                pass
            time.sleep(0.05)
    sampler = threading.Thread(target=sample, daemon=True)
    if linux:
        sampler.start()
    _, err = proc.communicate()
    elapsed = time.perf_counter() - t0
    if linux:
        sampler.join()
    if proc.returncode not in (0, 1):
        sys.exit(f"build failed ({proc.returncode}):\n{err.decode(errors='replace')}")
    return elapsed, (peak[0] if linux else None)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stages", type=int, default=40)
    ap.add_argument("--samples", type=int, default=500)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--keep", metavar="DIR", help="work in DIR and keep the files")
    args = ap.parse_args(argv)
    work = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="rcdoc-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    project = work / "bench-board.toml"
    out = work / "out"
    project.write_text(board(args.stages, args.samples), encoding="utf-8")
    print(f"{args.stages} stages, {args.samples} Monte Carlo samples per stage, --jobs {args.jobs}, "
          f"{os.cpu_count()} cores")
    cold, peak_cold = timed_build(project, out, args.jobs)
    print(f"cold build:                   {cold:7.1f} s")
    changed = args.stages // 2
    project.write_text(board(args.stages, args.samples, changed=changed), encoding="utf-8")
    warm, peak_warm = timed_build(project, out, args.jobs)
    print(f"rebuild after one value change (stage {changed}): {warm:7.1f} s")
    print(f"rebuild / cold:               {warm / cold * 100:7.1f} %")
    if peak_cold is not None:
        print(f"peak memory (build and workers): cold {peak_cold / 1024:.0f} MiB, "
              f"rebuild {peak_warm / 1024:.0f} MiB")
    else:
        print("peak memory: n/a (needs /proc)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
