"""Atomic file writes: every output rcdoc makes lands whole or not at all.

A write goes to a temporary file beside the target and is renamed over it,
so a failed or interrupted build never leaves a half-written file and never
clobbers the previous one. Temporary names carry the writing process's id
(``.<name>.~rcdoc<pid>.<random>.tmp``), so a later build can tell the leftovers
of a killed build (their process is gone) from a running build's files and
remove them (``remove_stale_temps``); nothing else in a folder is touched.

Ctrl-C: while ``interrupts()`` is active, SIGINT sets a flag (and raises
KeyboardInterrupt). No output is renamed into place once the flag is set,
even if some library swallowed the KeyboardInterrupt, and the command ends
with status 130. SIGTERM (a CI job's time-out, ``kill``) does the same with
``Terminated``, a KeyboardInterrupt: the worker processes are stopped as for
Ctrl-C, not left waiting for a parent that is gone, and the status is 143.
An interrupt that lands inside a finalizer or weakref callback, where Python
can only report it ("Exception ignored", with a traceback), is kept quiet: the
flag holds it.
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import signal
import sys
import tempfile
import threading
from pathlib import Path

_TEMP = re.compile(r"\..+\.~rcdoc(\d+)\.[A-Za-z0-9_]+\.tmp")
_interrupted = False


class Terminated(KeyboardInterrupt):
    """SIGTERM, handled as an interrupt (see the module docstring)."""


def temp_prefix(name: str) -> str:
    """Prefix of rcdoc's temporary files for the output ``name`` (see _TEMP)."""
    return f".{name}.~rcdoc{os.getpid()}."


def make_temp(folder: Path, name: str) -> Path:
    """An empty temporary file in ``folder`` for the output ``name``."""
    fd, tmp = tempfile.mkstemp(prefix=temp_prefix(name), suffix=".tmp", dir=folder)
    os.close(fd)
    return Path(tmp)


def write_atomic(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path``: a temporary file in the same folder, then a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=temp_prefix(path.name), suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp makes the file private; an output is as readable as any other file.
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def replace(tmp, path) -> None:
    """Rename a finished temporary file over ``path``, unless the build was interrupted."""
    stop_if_interrupted()
    os.replace(tmp, path)


def refuse_folder(path, message: str, key: str = "") -> None:
    """Raise ProjectError (naming ``path`` and ``key``) where a folder, or a link
    to one, has the name of a file a command is to write: checked before any work,
    so that the command does not fail at its end, after its other files landed."""
    if Path(path).is_dir():
        from rcdoc.errors import ProjectError
        raise ProjectError(message, path=key, file=str(path))


def commit(pairs) -> None:
    """Rename several finished temporary files into place as one step: SIGINT is
    held back while they move, so an interrupt leaves all old or all new."""
    stop_if_interrupted()
    for _, path in pairs:       # all or none: a folder in a file's place fails before any move
        if Path(path).is_dir() and not Path(path).is_symlink():
            raise IsADirectoryError(errno.EISDIR, "a folder has this file's name", str(path))
    can_block = hasattr(signal, "pthread_sigmask") and \
        threading.current_thread() is threading.main_thread()
    if can_block:
        signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT})
    try:
        for tmp, path in pairs:
            os.replace(tmp, path)
    finally:
        if can_block:
            signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGINT})


def remove_stale_temps(folder: Path) -> list[Path]:
    """Remove rcdoc's temporary files in ``folder`` whose writing process is gone."""
    removed = []
    try:
        entries = list(Path(folder).iterdir())
    except OSError:
        return removed
    for path in entries:
        m = _TEMP.fullmatch(path.name)
        if m is None or not path.is_file() or path.is_symlink() or _alive(int(m.group(1))):
            continue
        try:
            path.unlink()
            removed.append(path)
        except OSError:
            pass
    return removed


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True      # exists (another user's) or cannot tell: leave it
    return True


def stop_if_interrupted() -> None:
    if _interrupted:
        raise Terminated if _interrupted == signal.SIGTERM else KeyboardInterrupt


def was_interrupted() -> bool:
    return bool(_interrupted)


@contextlib.contextmanager
def interrupts():
    """Record SIGINT and SIGTERM for the duration (see the module docstring); main
    thread only."""
    global _interrupted
    _interrupted = False
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def on_signal(signum, frame):
        global _interrupted
        _interrupted = signum
        raise Terminated if signum == signal.SIGTERM else KeyboardInterrupt

    def unraisable(report) -> None:
        # The signal's exception raised inside a finalizer or a weakref callback
        # (importlib's module locks have one) cannot leave it: Python would print
        # "Exception ignored in ..." with a traceback. The flag holds it; the
        # build stops at its next check, as for any swallowed interrupt.
        if _interrupted and isinstance(report.exc_value, KeyboardInterrupt):
            return
        hook(report)

    previous = {s: signal.signal(s, on_signal) for s in (signal.SIGINT, signal.SIGTERM)}
    hook, sys.unraisablehook = sys.unraisablehook, unraisable
    try:
        yield
        stop_if_interrupted()       # swallowed somewhere: still an interrupted build
    finally:
        sys.unraisablehook = hook
        for s, handler in previous.items():
            signal.signal(s, handler)
