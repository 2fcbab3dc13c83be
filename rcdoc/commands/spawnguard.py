"""Imported by the worker pool's fork server only (never by the command itself).

When Ctrl-C ends a build while the pool is still starting a worker, the
parent removes the pool's semaphores and the half-started worker fails to
unpickle them; the fork server would print that failure as a traceback on the
user's terminal after rcdoc has already said "interrupted". The build's own
errors never pass through here: they travel back through the futures.
"""

from __future__ import annotations

import sys

_PARENT_GONE = (FileNotFoundError, EOFError, ConnectionError)


def _quiet_when_parent_gone(exc_type, exc, tb):
    if issubclass(exc_type, _PARENT_GONE):
        return
    sys.__excepthook__(exc_type, exc, tb)


sys.excepthook = _quiet_when_parent_gone
