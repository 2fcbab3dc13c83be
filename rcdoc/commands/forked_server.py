"""The worker pool's fork server and multiprocessing's resource tracker, forked
from the ``rcdoc`` command's own process instead of started as new interpreters.

What it is for: multiprocessing starts each of the two as a new Python, which
starts an interpreter (about 0.1 s of CPU on the machines the README's figures
come from) and, for the fork server, imports again what the command has
imported already (rcdoc and numpy, about 0.15 s more). A one-value rebuild is
bound by the CPU of its processes on two cores, so those seconds are on its
path. A fork of the command, made while it has one thread and no file open
beyond those it started with, inherits the modules and starts no interpreter;
it then runs multiprocessing's own server code (``forkserver.main``,
``resource_tracker.main``), and the pool talks to it the usual way.

The command starts its pool before it sets its own signal handlers, warning
filters or hooks (rcdoc.commands.cli.main), so the forks begin as it began;
the garbage collector's thresholds, which it sets first thing, and any signal
handler are put back as they were at its start (``remember_start``), and the
descriptors it was started with (a make jobserver's pipe, say) are closed in
the forks, as multiprocessing closes them in its servers.

What it must not do: fork a process with a second thread or a file of its own
open (a lock held, a half-written output), or change anything of the command's
state. Where a condition does not hold, where the process is not the ``rcdoc``
command (``cli.main`` called from Python: its process is its caller's), or
where multiprocessing's internals are not those of Python 3.8 to 3.13, the
functions start nothing and return False; the caller starts the usual server.
"""

from __future__ import annotations

import gc
import os
import signal
import sys
import threading

__all__ = ["remember_start", "start_tracker", "start_server"]

_BLOCKED = {signal.SIGINT, signal.SIGTERM}
# The forks' process names (/proc/PID/comm, what ps -o comm and top show; the
# command line stays the command's): multiprocessing's own are told apart by
# their command lines, these by their names. The workers inherit the server's.
TRACKER_NAME = b"rcdoc-tracker"
SERVER_NAME = b"rcdoc-pool"


class _Start:
    """What the command's process was at its start."""

    def __init__(self) -> None:
        self.fds = _open_fds()
        self.handlers = {s: signal.getsignal(s) for s in _BLOCKED}
        self.gc = gc.get_threshold()


_AT_START: _Start | None = None


def remember_start() -> None:
    """Record the process as the command starts (rcdoc.commands.cli.entry, before
    it changes anything); without this record nothing is forked."""
    global _AT_START
    _AT_START = _Start()


def _open_fds() -> frozenset[int] | None:
    try:
        names = os.listdir("/proc/self/fd")
    except OSError:
        return None
    # listdir's own descriptor is listed too, and closed by then.
    return frozenset(int(n) for n in names if n.isdigit() and os.path.exists(f"/proc/self/fd/{n}"))


def _may_fork(*own: int) -> bool:
    """One thread (the C libraries' included), and no descriptor open that the
    command's start did not have, but ``own`` (the tracker's pipe)."""
    if _AT_START is None or _AT_START.fds is None or threading.active_count() != 1:
        return False
    try:
        if len(os.listdir("/proc/self/task")) != 1:
            return False
    except OSError:
        return False
    return _open_fds() == _AT_START.fds | set(own)


def _internals():
    """multiprocessing's fork server and tracker, as Python 3.8 to 3.13 have them."""
    if not (sys.platform.startswith("linux") and (3, 8) <= sys.version_info[:2] <= (3, 13)):
        return None
    from multiprocessing import forkserver, resource_tracker
    server = getattr(forkserver, "_forkserver", None)
    tracker = getattr(resource_tracker, "_resource_tracker", None)
    needs = ((server, ("_forkserver_pid", "_forkserver_address", "_forkserver_alive_fd",
                       "_preload_modules")), (tracker, ("_fd", "_pid")))
    if any(obj is None or not all(hasattr(obj, n) for n in names) for obj, names in needs):
        return None
    return forkserver, server, resource_tracker, tracker


def start_tracker() -> bool:
    """Fork multiprocessing's resource tracker from this process; True if it runs
    (it then serves this process and its workers as the usual one would)."""
    found = _internals()
    if found is None or found[3]._fd is not None or not _may_fork():
        return False
    resource_tracker, tracker = found[2], found[3]
    r, w = os.pipe()
    try:
        # Its main() ignores SIGINT and SIGTERM itself.
        pid = _fork(lambda: _serve(resource_tracker.main, r, ignore=_BLOCKED), keep={r},
                    name=TRACKER_NAME)
    except OSError:                 # no fork to be had (a process limit): the usual one
        os.close(w)
        return False
    finally:
        os.close(r)
    tracker._fd, tracker._pid = w, pid
    return True


def start_server() -> bool:
    """Fork the pool's fork server, with the preload of ``set_forkserver_preload``,
    from this process; True if it runs. A resource tracker must run already
    (``start_tracker``, or multiprocessing's own)."""
    found = _internals()
    if found is None:
        return False
    forkserver, server, _, tracker = found
    if server._forkserver_pid is not None or tracker._fd is None or not _may_fork(tracker._fd):
        return False
    import socket
    from multiprocessing import connection, util
    with socket.socket(socket.AF_UNIX) as listener:
        address = connection.arbitrary_address("AF_UNIX")
        listener.bind(address)
        if not util.is_abstract_socket_namespace(address):
            os.chmod(address, 0o600)
        listener.listen()
        alive_r, alive_w = os.pipe()
        preload = list(server._preload_modules)

        def serve() -> None:
            # The tracker's pipe is the command's and each worker's (handed to
            # each by the command), not the server's: a fresh server has none.
            tracker._fd = tracker._pid = None
            _serve(forkserver.main, listener.fileno(), alive_r, preload,
                   ignore={signal.SIGINT})
        # The tracker's descriptor is not among those the start had: closed by _fork.
        try:
            pid = _fork(serve, keep={listener.fileno(), alive_r}, name=SERVER_NAME)
        except OSError:             # no fork to be had: the usual server
            os.close(alive_w)
            if not util.is_abstract_socket_namespace(address):
                os.unlink(address)
            return False
        finally:
            os.close(alive_r)
    server._forkserver_address = address
    server._forkserver_alive_fd = alive_w
    server._forkserver_pid = pid
    return True


def _fork(run, keep: set[int], name: bytes) -> int:
    """Fork; the child takes the process name ``name``, closes every descriptor
    but the standard streams and ``keep``, is put back as the command started,
    and runs ``run``, never returning. The parent gets the child's pid."""
    for stream in (sys.stdout, sys.stderr):     # else the child would write it again
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    # As multiprocessing does for its tracker: a Ctrl-C that comes before the
    # child has its handlers must not end it. Both lift the mask again.
    signal.pthread_sigmask(signal.SIG_BLOCK, _BLOCKED)
    try:
        pid = os.fork()
        if pid == 0:
            try:
                _set_name(name)
                start = _AT_START
                for fd in sorted((_open_fds() or frozenset()) - {0, 1, 2} - keep):
                    try:
                        os.close(fd)
                    except OSError:
                        pass
                for sig, handler in start.handlers.items():
                    if handler is not None:
                        signal.signal(sig, handler)
                gc.set_threshold(*start.gc)
                run()
            finally:
                os._exit(1)      # run() ends the process itself; this is for a failure
    finally:
        signal.pthread_sigmask(signal.SIG_UNBLOCK, _BLOCKED)
    return pid


def _set_name(name: bytes) -> None:
    try:
        with open("/proc/self/comm", "wb") as fh:     # Linux: the process's name
            fh.write(name)
    except OSError:                 # not writable here: the command's name stays
        pass


def _serve(main, *args, ignore) -> None:
    """A server's main loop, then the end of the process: never back into the
    command's code (its atexit handlers, its finally blocks). Ctrl-C, which the
    terminal sends to every process of the command, is the command's to handle:
    both servers ignore it (multiprocessing's own do too, once started), and the
    tracker SIGTERM too, as its main() has it."""
    code = 0
    try:
        for sig in ignore:
            signal.signal(sig, signal.SIG_IGN)
        signal.pthread_sigmask(signal.SIG_UNBLOCK, _BLOCKED)
        main(*args)
    except SystemExit as exc:          # the server's normal end: its clients are gone
        code = exc.code if isinstance(exc.code, int) else 0
    except BaseException:  # noqa: BLE001 - reported, as the interpreter would, then ended
        code = 1
        try:
            sys.excepthook(*sys.exc_info())
            sys.stderr.flush()
        except BaseException:  # noqa: BLE001
            pass
    finally:
        os._exit(code)
