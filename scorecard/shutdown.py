"""Clean shutdown of a verb: SIGINT or SIGTERM ends its worker processes, leaves no partial file, prints one
line and exits 128 + the signal's number (130, 143), as shells report a process ended by a signal.

How: `handling_signals()` (entered by cli.main before anything else) turns either signal into `Interrupted`, a
BaseException, so it unwinds through every `except Exception` and every `atomic_output` block, which removes
its temporary file. Before raising, the handler terminates this process's worker processes: a process pool
waiting for a running bag would otherwise wait for it to finish. Worker processes (forked) ignore SIGINT (a
terminal's Ctrl-C reaches the whole process group; the parent ends them), take SIGTERM's default action, and
are killed by the kernel when the parent dies, even by SIGKILL, which no handler can catch (Linux
PR_SET_PDEATHSIG; elsewhere a thread that watches the parent's pid).
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import signal
import sys
import threading
import time

SIGNALS = (signal.SIGINT, signal.SIGTERM)
_PR_SET_PDEATHSIG = 1  # linux/prctl.h
_state = {"installed": False, "received": None, "deferring": 0, "pending": None, "fork_hook": False, "watchdog": None,
          "signalled": False}
_temporary: set[str] = set()  # temporary output files not yet renamed or removed (jsondoc.atomic_output)
# after a signal the verb has this long to unwind by itself (it takes well under a second: the workers are
# ended first); past it the watchdog removes the temporary files, ends the workers and exits, so a library
# waiting on a dead worker can never keep the process alive
STOP_GRACE_SECONDS = 10.0


class Interrupted(BaseException):
    """SIGINT or SIGTERM arrived: unwind, then exit with `exit_code`."""

    def __init__(self, signum: int):
        super().__init__(signal.Signals(signum).name)
        self.signum = signum
        self.exit_code = 128 + signum


def _on_signal(signum, frame) -> None:
    if _state["received"] is not None:  # a second Ctrl-C while unwinding: let the clean-up finish
        return
    if _state["deferring"]:
        _state["pending"] = signum
        return
    _state["received"] = signum
    _state["signalled"] = True
    watchdog = threading.Timer(STOP_GRACE_SECONDS, _force_exit, (signum,))
    watchdog.daemon = True
    watchdog.start()
    _state["watchdog"] = watchdog
    end_workers()
    raise Interrupted(signum)


def _force_exit(signum: int) -> None:
    for path in list(_temporary):
        with contextlib.suppress(OSError):
            os.unlink(path)
    end_workers(grace=0.5)
    with contextlib.suppress(OSError):
        os.write(2, (interrupted_line(signum) + "\n").encode())
    os._exit(128 + signum)


def track_temporary(path: str) -> None:
    """`path` is removed by the watchdog if the verb cannot unwind after a signal (until untracked)."""
    _temporary.add(str(path))


def untrack_temporary(path: str) -> None:
    _temporary.discard(str(path))


def received() -> int | None:
    """The signal that arrived, if one did. Python runs a handler between any two steps, also inside a
    callback that swallows exceptions (an at-fork hook, a finaliser), so Interrupted may be lost: the workers
    it ended then break the pool instead, and cli.main reports any error after a signal as the signal."""
    return _state["received"]


def raise_if_received() -> None:
    """Before an output is renamed into place: never publish a file after a signal, even if Interrupted was
    lost (see `received`)."""
    if _state["received"] is not None:
        raise Interrupted(_state["received"])


@contextlib.contextmanager
def handling_signals():
    """SIGINT/SIGTERM raise Interrupted inside the block (main thread only; elsewhere a no-op); the previous
    handlers come back afterwards (the test suite invokes verbs in its own process)."""
    if threading.current_thread() is not threading.main_thread() or _state["installed"]:
        yield
        return
    previous = {s: signal.getsignal(s) for s in SIGNALS}
    if not _state["fork_hook"] and hasattr(os, "register_at_fork"):
        os.register_at_fork(after_in_child=_worker_starts)
        _state["fork_hook"] = True
    _state.update(installed=True, received=None, pending=None, deferring=0)
    previous_hook = sys.unraisablehook

    def quiet_when_lost(unraisable):
        # Interrupted lost in a callback (see `received`), or a finaliser it cut short complaining at exit:
        # consequences of the signal, not worth a traceback after the one line
        if not isinstance(unraisable.exc_value, Interrupted) and not _state["signalled"]:
            previous_hook(unraisable)

    previous_thread_hook = threading.excepthook

    def quiet_thread_after_signal(args):
        # the process pool's manager thread may trip over futures the shutdown cancelled (InvalidStateError):
        # a consequence of the signal, not worth a traceback after the one line
        if not _state["signalled"]:
            previous_thread_hook(args)

    sys.unraisablehook = quiet_when_lost
    threading.excepthook = quiet_thread_after_signal
    for s in SIGNALS:
        signal.signal(s, _on_signal)
    try:
        yield
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)
        if not _state["signalled"]:  # after a signal, stay quiet until the interpreter has finished exiting
            sys.unraisablehook = previous_hook
            threading.excepthook = previous_thread_hook
        if _state["watchdog"] is not None:
            _state["watchdog"].cancel()
        _state["watchdog"] = None
        _state.update(installed=False, received=None, pending=None, deferring=0)


@contextlib.contextmanager
def deferred():
    """A signal arriving inside the block is raised at its end: for the few steps between creating a temporary
    file and being inside the block that removes it."""
    _state["deferring"] += 1
    try:
        yield
    finally:
        _state["deferring"] -= 1
        pending = _state["pending"]
        if pending is not None and not _state["deferring"] and _state["installed"]:
            _state["pending"] = None
            _on_signal(pending, None)


def end_workers(grace: float = 2.0) -> None:
    """Terminate this process's multiprocessing children (a process pool's workers), killing any still alive
    after `grace` seconds, and reap them."""
    children = multiprocessing.active_children()
    for child in children:
        with contextlib.suppress(OSError, ValueError):
            child.terminate()
    deadline = time.monotonic() + grace
    for child in children:
        with contextlib.suppress(OSError, ValueError, AssertionError):
            child.join(max(deadline - time.monotonic(), 0.0))
            if child.is_alive():
                child.kill()
                child.join(1.0)


def interrupted_line(signum: int) -> str:
    return f"stopped by {signal.Signals(signum).name}: worker processes ended, no output left half-written"


def _worker_starts() -> None:
    """In a forked child of a verb: die with the parent, leave SIGINT to the parent, SIGTERM ends it."""
    if not _state["installed"]:
        return
    if _state["received"] is not None:  # forked after the signal (its Interrupted was lost): end at once
        os._exit(1)
    parent = os.getppid()
    _state.update(installed=False, received=None, pending=None, deferring=0)
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    if not _die_with_parent_linux():
        threading.Thread(target=_watch_parent, args=(parent,), daemon=True, name="watch-parent").start()
    if os.getppid() != parent:  # the parent died before the kernel was told
        os._exit(1)


def _die_with_parent_linux() -> bool:
    if not sys.platform.startswith("linux"):
        return False
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        return libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0) == 0
    except (OSError, AttributeError):
        return False


def _watch_parent(parent: int) -> None:
    while os.getppid() == parent:
        time.sleep(0.5)
    os._exit(1)
