"""Progress of long work on stderr: a live bar on a terminal, plain lines elsewhere, or nothing.

On a terminal, rich draws a bar that disappears when the work is done.  Elsewhere (a CI log,
a pipe) a run that has lasted ``first`` seconds starts writing plain lines: one per item
finished, and one every ``every`` seconds naming what is running, so a long proof is never
silent; a short run writes nothing, and stdout (tables, JSON) is never touched.
"""

from __future__ import annotations

import threading
import time
from contextlib import contextmanager

from rich.console import Console

#: seconds of silence before plain progress lines start, and between two lines while an item runs
FIRST_LINE_SECONDS = 10.0
LINE_EVERY_SECONDS = 10.0


class Progress:
    """Progress over ``total`` items (cost files, sweep values); ``mode`` is bar, lines or off."""

    def __init__(self, err: Console, total: int, *, quiet: bool = False, what: str = "checking",
                 first: float = FIRST_LINE_SECONDS, every: float = LINE_EVERY_SECONDS, clock=time.monotonic):
        self.err, self.total, self.what = err, total, what
        self.mode = "off" if quiet else ("bar" if err.is_terminal else "lines")
        self.first, self.every, self.clock = first, every, clock
        self.started = self.last = clock()
        self.done, self.current = 0, ""
        self._bar = self._task = None
        self._stop = threading.Event()
        self._lock = threading.Lock()
        self._thread = None

    # ------------------------------------------------------------------ lifetime
    def __enter__(self) -> "Progress":
        if self.mode == "bar":
            from rich.progress import BarColumn, MofNCompleteColumn, Progress as Bar, TextColumn, TimeElapsedColumn

            self._bar = Bar(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                            TimeElapsedColumn(), console=self.err, transient=True)
            self._bar.__enter__()
            self._task = self._bar.add_task(self.what, total=self.total)
        elif self.mode == "lines":
            self._thread = threading.Thread(target=self._beat, daemon=True, name="costcheck-progress")
            self._thread.start()
        return self

    def __exit__(self, *exc) -> bool:
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout=1.0)
        if self._bar is not None:
            self._bar.__exit__(*exc)
        return False

    # ------------------------------------------------------------------ events
    def running(self, label: str) -> None:
        """What is being worked on now (a cost id, ``cost: condition``)."""
        with self._lock:
            self.current = label
        if self._bar is not None:
            self._bar.update(self._task, description=f"{self.what} {label}")

    def finished(self, label: str | None, seconds: float | None = None, *, count: int = 1) -> None:
        """``count`` more items done; a plain line names ``label`` once the run is no longer short."""
        with self._lock:
            self.done = min(self.total, self.done + count)
            self.current = ""
        if self._bar is not None:
            self._bar.update(self._task, completed=self.done)
        elif self.mode == "lines" and self.total > 1 and self.clock() - self.started >= self.first:
            took = "" if seconds is None else f", {seconds:.1f} s"
            self._line(f"{self.done}/{self.total} done" + (f" ({label}{took})" if label else ""))

    def advance_to(self, done: int, label: str = "") -> None:
        if done > self.done:
            self.finished(label or None, count=done - self.done)

    @contextmanager
    def item(self, label: str):
        """Around one item: yields a callback for its steps (a condition's name)."""
        self.running(label)
        yield lambda step: self.running(f"{label}: {step}")

    # ------------------------------------------------------------------ plain lines
    def _line(self, text: str) -> None:
        with self._lock:
            self.last = self.clock()
            elapsed = self.last - self.started
        self.err.print(f"costcheck: {self.what}: {text} · {elapsed:.0f} s", markup=False, highlight=False,
                       soft_wrap=True)

    def heartbeat(self) -> None:
        """A line naming the current item, if the run is past ``first`` and quiet for ``every`` seconds."""
        if self.mode != "lines":
            return
        now = self.clock()
        with self._lock:
            current, due = self.current, now - self.started >= self.first and now - self.last >= self.every
        if current and due:
            self._line(f"{self.done}/{self.total} done, now {current}")

    def _beat(self) -> None:
        while not self._stop.wait(1.0):
            self.heartbeat()
