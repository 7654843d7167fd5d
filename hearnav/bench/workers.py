"""Worker processes that run benchmark tasks and outlive the code they run.

Every worker is a forked process with its own pipe. It builds its state once (``setup(options)``, the
environment) and then runs one task at a time. The calling process gives each task a deadline: a worker that
passes it is killed (SIGKILL), and a worker that dies (``os._exit``, a signal, the out-of-memory killer) is
reaped. Either way only that task fails, with a one-line :class:`Failure`; the rest of its group goes to a
fresh worker and the run goes on. Workers are reused across tasks and replaced only when they die or time
out, so the tables they map stay open.

Tasks come in groups (the tasks of one episode): a group goes to one worker, one task after the other, so the
worker's environment generates the episode's sounds once for all of them.

A worker ignores SIGINT (Ctrl-C stops the calling process, which then kills its workers) and ends when its
parent dies (at once on Linux, else within a second), even while a task is stuck, so a killed run leaves no
process behind.
"""

from __future__ import annotations

import math
import multiprocessing as mp
import os
import pickle
import signal
import sys
import threading
import time
import traceback
from collections import deque
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from multiprocessing.connection import Connection, wait
from typing import Any

from hearnav.errors import HearnavError

# Longest single wait of the calling process, so that no select() gets a huge timeout and deadlines are
# checked at least this often (seconds).
_MAX_WAIT_S = 5.0
# prctl(2) option: the signal a process gets when its parent dies (linux/prctl.h).
_PR_SET_PDEATHSIG = 1
# How often a worker checks that its parent is still alive (seconds).
_PARENT_CHECK_S = 0.5
# How long a worker asked to stop may take before it is killed (seconds).
_STOP_GRACE_S = 2.0
# How long a worker whose pipe closed may take to finish exiting before it is killed (seconds).
_EXIT_GRACE_S = 1.0


@dataclass(frozen=True)
class Failure:
    """Why a task gave no result, in one line (e.g. ``timed out after 600 s``)."""

    reason: str


class _RemoteTraceback(Exception):
    """The traceback of an exception raised in a worker, shown as the cause of the re-raised exception."""

    def __str__(self) -> str:
        return str(self.args[0])


def died(exitcode: int | None) -> str:
    """One line for a worker's end: ``worker died (exit code 7)`` or ``worker died (killed by SIGSEGV)``."""
    if exitcode is not None and exitcode < 0:
        try:
            name = signal.Signals(-exitcode).name
        except ValueError:
            name = f"signal {-exitcode}"
        return f"worker died (killed by {name})"
    return f"worker died (exit code {exitcode})"


def _portable(exc: BaseException) -> tuple[BaseException, str]:
    """``exc`` if it survives pickling, else a stand-in with its type and message; and its traceback text."""
    text = "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))
    try:
        pickle.loads(pickle.dumps(exc))
    except Exception:
        kind = HearnavError if isinstance(exc, HearnavError) else RuntimeError
        exc = kind(f"{type(exc).__name__}: {exc}")
    return exc, text


def _die_with_parent() -> None:
    """On Linux, ask the kernel to SIGKILL this process when its parent dies (prctl PR_SET_PDEATHSIG, see
    prctl(2)): it works even while a policy holds the interpreter lock. Elsewhere :func:`_watch_parent` alone."""
    if not sys.platform.startswith("linux"):
        return
    try:
        import ctypes

        ctypes.CDLL(None, use_errno=True).prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    except (OSError, AttributeError, TypeError):
        pass


def _watch_parent(parent: int) -> None:
    """End this process once its parent is gone (the process is then adopted by another)."""
    while os.getppid() == parent:
        time.sleep(_PARENT_CHECK_S)
    os._exit(1)


def _serve(conn: Connection, setup: Callable[[Any], Any], options: Any, fn: Callable[[Any, Any], Any],
           parent: int) -> None:
    """A worker's life: build the state, say "ready", then answer every task with "done" or "raise"."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _die_with_parent()
    threading.Thread(target=_watch_parent, args=(parent,), daemon=True).start()
    try:
        state = setup(options)
        message: tuple = ("ready", None)
    except BaseException as exc:
        message = ("raise", _portable(exc))
    conn.send(message)
    while message[0] != "raise":
        try:
            item = conn.recv()
        except (EOFError, OSError):
            return
        if item is None:
            return
        try:
            message = ("done", fn(state, item))
            conn.send(message)
        except BaseException as exc:  # our own code failed (the runner records the policy's faults itself)
            message = ("raise", _portable(exc))
            conn.send(message)


@dataclass(eq=False)
class _Worker:
    """One worker process as the calling process sees it."""

    process: Any
    conn: Connection
    ready: bool = False
    item: Any = None
    busy: bool = False
    queue: deque = field(default_factory=deque)
    started: float = 0.0
    deadline: float = math.inf


class WorkerPool:
    """Up to ``size`` forked workers running ``fn(state, item)``, ``state = setup(options)``; a context manager.

    Parameters
    ----------
    fn : callable
        ``fn(state, item)``, run in a worker; its result must pickle.
    setup : callable
        ``setup(options)``, run once in each worker.
    options : Any
        Passed to ``setup`` (inherited through fork, never pickled).
    size : int
        Most workers at once.
    timeout : float or None
        Seconds one task may take; ``None`` for no limit.
    """

    def __init__(self, fn: Callable[[Any, Any], Any], setup: Callable[[Any], Any], options: Any, size: int,
                 timeout: float | None = None):
        self.fn, self.setup, self.options = fn, setup, options
        self.size, self.timeout = max(1, int(size)), timeout
        self._workers: list[_Worker] = []
        self._context = mp.get_context("fork")

    def __enter__(self) -> WorkerPool:
        return self

    def __exit__(self, *exc_info: object) -> None:
        self.close()

    def _spawn(self) -> None:
        ours, theirs = self._context.Pipe()
        process = self._context.Process(target=_serve, daemon=True, name="hearnav-worker",
                                        args=(theirs, self.setup, self.options, self.fn, os.getpid()))
        process.start()
        theirs.close()
        self._workers.append(_Worker(process, ours))

    def _send_next(self, worker: _Worker) -> None:
        """Give ``worker`` the next task of its group, if any."""
        worker.busy = bool(worker.queue)
        if not worker.busy:
            worker.item, worker.deadline = None, math.inf
            return
        worker.item = worker.queue.popleft()
        worker.started = time.monotonic()
        worker.deadline = math.inf if self.timeout is None else worker.started + self.timeout
        try:
            worker.conn.send(worker.item)
        except OSError:  # it has just died: the next poll reaps it and fails the task
            pass

    def _drop(self, worker: _Worker, grace: float = 0.0) -> int | None:
        """Stop tracking ``worker``, killing it if it still runs after ``grace`` seconds; its exit code."""
        self._workers.remove(worker)
        worker.process.join(grace)
        if worker.process.is_alive():  # stuck, or it closed its pipe and went on
            worker.process.kill()
        worker.process.join()
        worker.conn.close()
        return worker.process.exitcode

    def _lost(self, worker: _Worker, reason: str | None, pending: deque) -> Iterator[tuple[Any, Failure]]:
        """A worker that timed out (``reason`` given) or died: fail its task, hand its group on."""
        code = self._drop(worker, grace=0.0 if reason else _EXIT_GRACE_S)
        if not worker.ready:
            raise HearnavError(f"expected a worker process to build its environment, but it ended first: "
                               f"{died(code)}; check the memory limit (an out-of-memory kill shows as SIGKILL) "
                               f"and rerun to resume")
        if worker.queue:
            pending.appendleft(worker.queue)
        if worker.busy:
            yield worker.item, Failure(reason or died(code))

    def _receive(self, worker: _Worker, pending: deque) -> Iterator[tuple[Any, Any]]:
        """Handle what ``worker`` sent (or that it died)."""
        try:
            kind, payload = worker.conn.recv()
        except (EOFError, OSError, pickle.UnpicklingError):
            yield from self._lost(worker, None, pending)
            return
        if kind == "raise":
            exc, text = payload
            raise exc from _RemoteTraceback(text)
        if kind == "ready":
            worker.ready = True
            return
        item = worker.item
        self._send_next(worker)
        yield item, payload

    def _assign(self, pending: deque) -> None:
        """Start workers as needed and give every idle ready worker a group."""
        busy = sum(1 for w in self._workers if w.busy)
        while len(self._workers) < min(self.size, busy + len(pending)):
            self._spawn()
        for worker in self._workers:
            if pending and worker.ready and not worker.busy:
                worker.queue = deque(pending.popleft())
                self._send_next(worker)

    def run(self, groups: Sequence[Sequence[Any]]) -> Iterator[tuple[Any, Any]]:
        """``(item, fn's result or Failure)`` for every item of every group, as they finish.

        An exception ``fn`` raises in a worker is raised here (with the worker's traceback as its cause).
        """
        pending = deque(deque(g) for g in groups if len(g))
        while pending or any(w.busy for w in self._workers):
            self._assign(pending)
            soonest = min((w.deadline for w in self._workers), default=math.inf)
            pause = min(_MAX_WAIT_S, max(0.0, soonest - time.monotonic()))
            wait([w.conn for w in self._workers] + [w.process.sentinel for w in self._workers], pause)
            for worker in list(self._workers):
                if worker.conn.poll():
                    yield from self._receive(worker, pending)
                elif not worker.process.is_alive():
                    yield from self._lost(worker, None, pending)
                elif time.monotonic() > worker.deadline:
                    yield from self._lost(worker, f"timed out after {self.timeout:g} s", pending)

    def close(self) -> None:
        """Ask idle workers to stop, then kill whatever is left (idempotent)."""
        for worker in self._workers:
            if worker.ready and not worker.busy:
                try:
                    worker.conn.send(None)
                except OSError:
                    pass
        end = time.monotonic() + _STOP_GRACE_S
        for worker in list(self._workers):
            idle = worker.ready and not worker.busy
            self._drop(worker, grace=max(0.0, end - time.monotonic()) if idle else 0.0)
