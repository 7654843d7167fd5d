"""Feedback on long work: tqdm bars on a terminal; elsewhere (CI, a log) a plain line every few seconds."""

from __future__ import annotations

import sys
import threading
import time
from typing import TextIO

#: Seconds between lines when standard error is not a terminal (common practice for CI logs: often enough to
#: show life, rare enough to stay readable).
INTERVAL_S = 5.0


class Feedback:
    """``feedback(stage, done, total)`` as the benchmark's progress callback; a context manager.

    On a terminal each stage gets a tqdm bar. Otherwise, from a background thread, a line ``hearnav: STAGE:
    done/total (N s)`` every ``interval`` seconds while a stage runs, and one when a stage that was reported on
    ends: a log never goes quiet for long, and work shorter than ``interval`` prints nothing (so a command's
    error stays its first line).
    """

    def __init__(self, stream: TextIO | None = None, interval: float = INTERVAL_S, tty: bool | None = None):
        self.stream = stream if stream is not None else sys.stderr
        self.tty = bool(tty if tty is not None else getattr(self.stream, "isatty", lambda: False)())
        self.interval = interval
        self.bar = None
        self.stage: str | None = None
        self.done = self.total = 0
        self.started = time.monotonic()
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        self._last = 0.0
        self._stage_started = 0.0
        self._printed = False

    def __call__(self, stage: str, done: int, total: int) -> None:
        if self.tty:
            self._bar(stage, done, total)
            return
        with self._lock:
            if stage != self.stage:
                self.stage, self._stage_started, self._printed = stage, time.monotonic(), False
            self.done, self.total = done, total
            if done >= total and self._printed:  # a stage that was reported on says when it ends
                self._line()
        if self._thread is None:
            self._thread = threading.Thread(target=self._beat, daemon=True)
            self._thread.start()

    def note(self, message: str) -> None:
        """One line of its own (``hearnav: message``), between bars."""
        with self._lock:
            if self.bar is not None:
                self.bar.write(f"hearnav: {message}", file=self.stream)
            else:
                print(f"hearnav: {message}", file=self.stream, flush=True)
            self._last = time.monotonic()

    def _bar(self, stage: str, done: int, total: int) -> None:
        from tqdm import tqdm

        if self.bar is None or stage != self.stage:
            self.close_bar()
            self.stage = stage
            self.bar = tqdm(total=total, desc=stage, file=self.stream, leave=True)
        self.bar.total = total
        self.bar.update(done - self.bar.n)

    def _line(self) -> None:
        elapsed = time.monotonic() - self.started
        print(f"hearnav: {self.stage}: {self.done}/{self.total} ({elapsed:.0f} s)", file=self.stream, flush=True)
        self._last = time.monotonic()
        self._printed = True

    def _beat(self) -> None:
        while not self._stop.wait(self.interval / 5):
            with self._lock:
                quiet_since = max(self._last, self._stage_started)
                if self.stage is not None and self.done < self.total and time.monotonic() - quiet_since >= self.interval:
                    self._line()

    def close_bar(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None

    def close(self) -> None:
        """Close the bar and stop the background lines (idempotent)."""
        self._stop.set()
        if self._thread is not None:
            self._thread.join()
            self._thread = None
        self.close_bar()

    def __enter__(self) -> Feedback:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
