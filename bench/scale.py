"""Scale bench: peak memory and time of the analysis at the limits rcdoc accepts.

Runs each case in a fresh Python process and reports that process's peak
resident memory (``resource.getrusage(RUSAGE_SELF).ru_maxrss``, kilobytes on
Linux), so imports and caches of one case do not count against another:

- a 2-part stage (rc-lowpass) and a 5-part stage (mfb-lowpass) at the
  largest sample count accepted (rcdoc.input.project.MAX_SAMPLES = 200 000), with a
  step drive so the time-domain metrics run as well;
- a generated 200-stage board (all analysed kinds in turn) at the default
  2 000 samples, analysis only, and optionally with the PDF note (``--pdf``);
- the import baseline (what Python, numpy, scipy and matplotlib cost alone).

Usage::

    python bench/scale.py            # analysis cases, a few minutes
    python bench/scale.py --pdf      # and the 200-stage note (slow)
    python bench/scale.py --quick    # small numbers, to try the script

The figures it printed when last run are in the README ("Limits"). It writes
only into a temporary folder.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

BOARD = '[board]\nname = "Scale bench"\nrevision = "A"\ndate = "2026-01-01"\n'

STAGES = {
    "rc-lowpass": ('kind = "rc-lowpass"\n'
                   'parts.r = { ref = "R{n}", value = "4k7", tolerance = "1%", tcr = "100 ppm/K" }\n'
                   'parts.c = { ref = "C{n}", value = "10 nF", dielectric = "X7R" }\n'),
    "mfb-lowpass": ('kind = "mfb-lowpass"\n'
                    'parts.r1 = { value = "10k", tolerance = "1%" }\n'
                    'parts.r2 = { value = "10k", tolerance = "1%" }\n'
                    'parts.r3 = { value = "5k1", tolerance = "1%" }\n'
                    'parts.c1 = { value = "10n", dielectric = "C0G" }\n'
                    'parts.c2 = { value = "1n", dielectric = "C0G" }\n'),
    "rc-highpass": ('kind = "rc-highpass"\nparts.c = { value = "1 uF" }\n'
                    'parts.r = { value = "220k" }\n'),
    "rc-ladder": ('kind = "rc-ladder"\nparts.r1 = { value = "10k" }\nparts.c1 = { value = "100n" }\n'
                  'parts.r2 = { value = "10k" }\nparts.c2 = { value = "100n" }\n'),
    "sallen-key-lowpass": ('kind = "sallen-key-lowpass"\nparts.r1 = { value = "10k" }\n'
                           'parts.r2 = { value = "10k" }\nparts.c1 = { value = "22n" }\n'
                           'parts.c2 = { value = "10n" }\n'),
}
CHECKS = ('[[stage.check]]\nmetric = "gain"\nat = "1 MHz"\nmax = "-3 dB"\n'
          '[[stage.check]]\nmetric = "settling"\nwithin = "1%"\nmax = "1 s"\n')


def board(kinds: list[str], samples: int) -> str:
    out = [BOARD, f"[analysis]\nsamples = {samples}\nseed = 1\n"
                  'temperature = ["-20 °C", "70 °C"]\n']
    for n, kind in enumerate(kinds, start=1):
        out.append(f'[[stage]]\nid = "s{n}"\ntitle = "Stage {n}: {kind}"\n'
                   'drive = { step = "3.3 V" }\n' + STAGES[kind].replace("{n}", str(n))
                   + CHECKS)
    return "".join(out)


CHILD = textwrap.dedent("""
    import json, resource, sys, time
    t0 = time.perf_counter()
    from rcdoc.kinds import load_project
    from rcdoc.commands.build import analyse_project, write_outputs
    file, pdf, out = sys.argv[1], sys.argv[2] == "1", sys.argv[3]
    base_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t1 = time.perf_counter()
    project = load_project(file)
    outcome = analyse_project(project, jobs=1)
    t2 = time.perf_counter()
    if pdf:
        write_outputs(outcome, __import__("pathlib").Path(out))
    t3 = time.perf_counter()
    print(json.dumps({"peak_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                      "import_peak_mib": base_kb / 1024, "analyse_s": t2 - t1,
                      "pdf_s": t3 - t2, "status": outcome.status}))
""")


def run(name: str, text: str, folder: Path, pdf: bool = False) -> dict:
    file = folder / f"{name}.toml"
    file.write_text(text, encoding="utf-8")
    start = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", CHILD, str(file), "1" if pdf else "0",
                           str(folder / "out")], capture_output=True, text=True, cwd=ROOT)
    if proc.returncode != 0:
        raise SystemExit(f"{name} failed:\n{proc.stderr[-3000:]}")
    result = json.loads(proc.stdout.strip().splitlines()[-1])
    result["wall_s"] = time.perf_counter() - start
    print(f"{name:<34} peak {result['peak_mib']:8.0f} MiB   (imports {result['import_peak_mib']:.0f}"
          f" MiB)   analyse {result['analyse_s']:7.1f} s   pdf {result['pdf_s']:6.1f} s",
          flush=True)
    return result


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--pdf", action="store_true", help="also write the 200-stage note")
    ap.add_argument("--quick", action="store_true", help="small numbers, to try the script")
    args = ap.parse_args()
    from rcdoc.input.project import MAX_SAMPLES
    big, stages = (2000, 10) if args.quick else (MAX_SAMPLES, 200)
    kinds = list(STAGES)
    with tempfile.TemporaryDirectory(prefix="rcdoc-scale-") as tmp:
        folder = Path(tmp)
        results = {
            f"2-part stage, {big} samples": run("two", board(["rc-lowpass"], big), folder),
            f"5-part stage, {big} samples": run("five", board(["mfb-lowpass"], big), folder),
            f"{stages}-stage board, 2000 samples": run(
                "board", board([kinds[i % len(kinds)] for i in range(stages)], 2000), folder,
                pdf=args.pdf),
        }
    print(json.dumps(results, indent=1))


if __name__ == "__main__":
    main()
