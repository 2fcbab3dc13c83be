"""Imported first by the worker pool's fork server (never by the command itself):
no cyclic garbage collection while the server imports.

The server's imports (rcdoc and numpy; for a build also matplotlib,
weasyprint and schemdraw) make about a million objects, none of them garbage,
and the collector's passes over them cost a tenth of the imports' CPU (measured:
2.12 s against 1.92 s, best of 12). The server does nothing else but fork, so
it never turns collection back on; each worker, once forked, freezes what it
inherited and collects again from there (workers._worker_init).
"""

from __future__ import annotations

import gc

gc.disable()
