"""rcdoc.analysis.heap: after reuse_freed_memory, a large array freed and allocated
again costs no fresh pages (glibc's mallopt, M_MMAP_MAX and M_TRIM_THRESHOLD, as its
manual describes them); without it, each such array comes as new pages from mmap.
Measured in fresh processes by their minor page faults (getrusage), so the test
process's own allocator is left as it was."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

# Three rounds of a 64 MB array written in full and freed; the page faults of each.
PROBE = r'''
import json, resource, sys
import numpy as np
sys.path.insert(0, sys.argv[1])
from rcdoc.analysis.heap import reuse_freed_memory
took = reuse_freed_memory() if sys.argv[2] == "on" else None
again = reuse_freed_memory() if sys.argv[2] == "on" else None
faults = []
for _ in range(3):
    before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    a = np.empty(8 * 2**20)
    a[:] = 1.0
    del a
    faults.append(resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before)
print(json.dumps({"took": took, "again": again, "faults": faults}))
'''


def _run(mode: str) -> dict:
    out = subprocess.run([sys.executable, "-c", PROBE, str(ROOT), mode], check=True,
                         capture_output=True, text=True).stdout
    return json.loads(out)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc's allocator only")
def test_freed_arrays_are_reused_without_page_faults():
    off, on = _run("off"), _run("on")
    if min(off["faults"][1:]) < 256:
        pytest.skip("this allocator already keeps large freed blocks")
    assert on["took"] is True and on["again"] is True          # set once, same answer after
    # 64 MB is 16 384 pages of 4 KiB (or 32 huge pages); reused, it faults next to none.
    assert max(on["faults"][1:]) < 64, on
