"""How often the cyclic garbage collector runs in the ``rcdoc`` command's process.

CPython starts a young collection every 700 new container objects. Importing
(weasyprint, matplotlib), laying out the note's front matter and drawing its
charts make millions of them, nearly all freed by reference counting or kept
for good, and every few young passes an older one walks all that was kept.
In the command's process a young collection runs every YOUNG_THRESHOLD objects
instead: a one-value rebuild with ``--jobs 1`` takes about 5 % less CPU (4.93 s
against 4.69 s, best of 6, interleaved), and cyclic garbage waits at most that
many allocations longer. The pool's workers do not need it: they freeze what
they inherit from the fork server (workers._worker_init), which measured the
same. ``cli.main`` called from Python leaves its caller's settings alone; only
``cli.entry`` (the command) calls ``tune``.
"""

from __future__ import annotations

import gc

YOUNG_THRESHOLD = 20_000


def tune() -> None:
    """Young collections every YOUNG_THRESHOLD objects; the older generations'
    thresholds stay CPython's."""
    _, older, oldest = gc.get_threshold()
    gc.set_threshold(YOUNG_THRESHOLD, older, oldest)
