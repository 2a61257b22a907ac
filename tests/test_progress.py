"""Progress on stderr: plain lines off a terminal once a run is long, a bar on one, nothing with --quiet."""

from __future__ import annotations

import io

from rich.console import Console

from costcheck.cli.progress import Progress


class Clock:
    def __init__(self):
        self.now = 0.0

    def __call__(self):
        return self.now


def _progress(total, *, terminal=False, quiet=False):
    buffer = io.StringIO()
    console = Console(file=buffer, force_terminal=terminal, width=80, color_system=None)
    clock = Clock()
    return Progress(console, total, quiet=quiet, first=10.0, every=5.0, clock=clock), clock, buffer


def test_plain_lines_start_after_the_first_seconds_one_per_item_then():
    progress, clock, buffer = _progress(3)
    assert progress.mode == "lines"
    with progress.item("fast") as step:
        step("twist")
    progress.finished("fast", 1.0)
    assert buffer.getvalue() == ""  # a short run says nothing
    clock.now = 12.0
    with progress.item("slow"):
        progress.heartbeat()
    assert buffer.getvalue().splitlines() == ["costcheck: checking: 1/3 done, now slow · 12 s"]
    progress.finished("slow", 11.0)
    assert buffer.getvalue().splitlines()[-1] == "costcheck: checking: 2/3 done (slow, 11.0 s) · 12 s"
    with progress.item("long") as step:
        step("mtw: proof")
        clock.now = 14.0
        progress.heartbeat()  # less than 5 s since the last line: quiet
        clock.now = 17.5
        progress.heartbeat()
    assert buffer.getvalue().splitlines()[-1] == "costcheck: checking: 2/3 done, now long: mtw: proof · 18 s"
    assert len(buffer.getvalue().splitlines()) == 3


def test_quiet_writes_nothing_and_a_terminal_gets_a_transient_bar():
    progress, clock, buffer = _progress(2, quiet=True)
    with progress:
        clock.now = 100.0
        with progress.item("a"):
            progress.heartbeat()
        progress.finished("a", 1.0)
    assert progress.mode == "off" and buffer.getvalue() == ""
    bar, _, screen = _progress(2, terminal=True)
    with bar:
        with bar.item("a"):
            pass
        bar.finished("a", 1.0)
    assert bar.mode == "bar" and "costcheck:" not in screen.getvalue()


def test_a_sweep_advances_by_counts():
    progress, clock, buffer = _progress(10)
    clock.now = 20.0
    progress.advance_to(4)
    progress.advance_to(4)  # no new values: no line
    assert buffer.getvalue().splitlines() == ["costcheck: checking: 4/10 done · 20 s"]
