"""Run one computation in a forked child while this process does something else.

``strobeplan report`` and ``strobeplan plot --kind tradeoff`` need the design search
(:func:`strobeplan.tune.tune`, about a second) and, independently of it, matplotlib and most
of their figures. :func:`start` forks a child that runs the search and sends its result back
through a pipe (pickled, a few tens of kB); the parent meanwhile imports matplotlib and draws
the figures that do not need the search, then collects the result. The answer is the same
object, bit for bit, as a call in the parent would give (the child runs the same code on a
copy of the same memory).

Where it cannot help or cannot work the call simply runs in this process when its result is
asked for: no ``os.fork`` (Windows), one usable CPU (``os.sched_getaffinity``), another
thread running in this process (a forked child holds only the forking thread, so a lock
another thread held would never be released there: e.g. inside a test runner's worker), or
the environment variable ``STROBEPLAN_SERIAL`` set. A child that fails in any way (an exception,
a result that does not pickle, a crash) is not trusted: the parent runs the call itself, so
an error surfaces exactly as without the child.
"""

from __future__ import annotations

import os
import pickle
import signal
import threading
from collections.abc import Callable
from typing import Any


def _cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def parallel() -> bool:
    """Whether :func:`start` forks (see the module docstring)."""
    return (hasattr(os, "fork") and _cpus() > 1 and threading.active_count() == 1
            and not os.environ.get("STROBEPLAN_SERIAL"))


def start(fn: Callable[..., Any], *args, **kwargs) -> Callable[[], Any]:
    """Begin ``fn(*args, **kwargs)``; returns a function that waits for and returns its
    result (the call runs in a forked child when :func:`parallel`, else when asked for).
    The returned function may be called more than once (the result is kept); its
    ``cancel()`` ends a child whose result was not asked for (call it in a ``finally``)."""
    if not parallel():
        return _Deferred(lambda: fn(*args, **kwargs))
    return forked(fn, *args, **kwargs)


def forked(fn: Callable[..., Any], *args, **kwargs) -> Callable[[], Any]:
    """:func:`start`'s forked case, whatever :func:`parallel` says (the caller has decided
    that forking is safe): the call runs in a child; a failed ``os.fork`` runs it here when
    its result is asked for."""
    read, write = os.pipe()
    try:
        pid = os.fork()
    except OSError:
        os.close(read)
        os.close(write)
        return _Deferred(lambda: fn(*args, **kwargs))
    if pid == 0:  # the child: compute, send, leave without any of the parent's clean-up
        code = 1
        try:
            os.close(read)
            data = pickle.dumps(fn(*args, **kwargs), protocol=pickle.HIGHEST_PROTOCOL)
            with os.fdopen(write, "wb") as out:
                out.write(data)
            code = 0
        except BaseException:  # noqa: BLE001 - any failure: the parent runs the call itself
            pass
        finally:
            os._exit(code)
    os.close(write)

    def collect():
        with os.fdopen(read, "rb") as inp:
            data = inp.read()
        _, status = os.waitpid(pid, 0)
        if os.waitstatus_to_exitcode(status) == 0 and data:
            try:
                return pickle.loads(data)
            except Exception:  # noqa: BLE001 - fall back to running it here
                pass
        return fn(*args, **kwargs)

    def cancel():
        os.close(read)
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)

    return _Deferred(collect, cancel)


class _Deferred:
    """A zero-argument callable that computes its value once, on the first call."""

    def __init__(self, compute: Callable[[], Any], cancel: Callable[[], None] | None = None):
        self._compute = compute
        self._cancel = cancel
        self._done = False
        self._value = None

    def __call__(self) -> Any:
        if not self._done:
            self._cancel = None  # from here on the computation itself cleans up
            self._value = self._compute()
            self._done = True
            self._compute = None
        return self._value

    def cancel(self) -> None:
        """End a child whose result was not asked for (nothing otherwise)."""
        if self._cancel is not None and not self._done:
            cancel, self._cancel = self._cancel, None
            cancel()
