"""``costcheck check`` and ``costcheck report``: find the files, check them with progress, print."""

from __future__ import annotations

import errno
import os
import stat
import sys
from pathlib import Path

from rich.console import Console

from ..errors import EXIT_BAD_INPUT, EXIT_EXPECTATION_FAILED, EXIT_OK
from .progress import Progress

#: ``check`` options that only choose where results go; every other option reaches the checks
#: and therefore the cache key (so a new option is part of the key unless listed here)
OUTPUT_ONLY_OPTIONS = {"command", "paths", "json", "junit", "quiet", "no_cache", "out", "plots", "verbose",
                       "failures", "workers"}


#: an error line longer than this is cut: the messages quote the input, and a quoted 100 kB
#: CSV cell or expression would not be a line a reader can use
MAX_ERROR_CHARS = 600


def one_line(problem) -> str:
    """``problem`` as one printable line of at most :data:`MAX_ERROR_CHARS` characters."""
    text = " ".join(str(problem).split())
    # a file name or a quoted value may hold an escape sequence or a lone surrogate: print its code
    text = "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)
    if len(text) > MAX_ERROR_CHARS:  # keep both ends: the file comes first, what is wrong with it last
        half = MAX_ERROR_CHARS // 2
        text = text[:half - 1] + "…" + text[-half:]
    return text


def refuse_unread_pipe(path, option: str) -> None:
    """Refuse an output that is a named pipe nobody reads: writing would wait for ever.

    A pipe someone reads (``--junit /dev/stdout`` into ``| tee``) is fine: the probe opens it
    without blocking, which fails with ENXIO only when there is no reader.
    """
    try:
        if not stat.S_ISFIFO(os.stat(path).st_mode):
            return
        os.close(os.open(path, os.O_WRONLY | os.O_NONBLOCK))
    except OSError as exc:
        if exc.errno == errno.ENXIO:
            from ..errors import UsageError
            raise UsageError(f"{path} is a named pipe that nothing reads; writing to it would wait for ever "
                             f"(option {option})") from None
        # anything else (no such file yet, no permission) the writer itself reports


def error_line(problem) -> None:
    """One line on stderr (never wrapped, never a traceback, no raw control characters)."""
    sys.stderr.write(f"costcheck: error: {one_line(problem)}\n")
    sys.stderr.flush()


def add_view_options(command) -> None:
    """How ``check`` prints: the compact grid, with details, or only what fails."""
    command.add_argument("--verbose", "-v", action="store_true",
                         help="under each condition: the evidence in words, the full witness and the notes; "
                              "also list the conditions that do not apply")
    command.add_argument("--failures", action="store_true",
                         help="show only conditions that fail, are undecided or miss their expectation")


def add_level_options(command, whole) -> None:
    """Nestedness's ``--levels`` and ``--grid`` (``check``, ``report`` and ``nested`` alike); ``whole``
    makes the argparse type of a whole number in a range."""
    from ..defaults import DEFAULT_LEVELS, MAX_GRID, MAX_LEVELS

    command.add_argument("--levels", type=whole(2, MAX_LEVELS, " levels"), default=DEFAULT_LEVELS, metavar="N",
                         help=f"nestedness: levels of y on which k(y) is computed (default {DEFAULT_LEVELS})")
    command.add_argument("--grid", type=whole(2, MAX_GRID, " cells per axis"), default=None, metavar="N",
                         help="nestedness: midpoint-rule cells per axis for a source density (default: about "
                              "40,000 nodes in all, 200 × 200 in two dimensions)")


def run_options(args) -> dict:
    """The options handed to ``run_checks``: all of ``check``'s options but the output-only ones."""
    options = {k: v for k, v in vars(args).items() if k not in OUTPUT_ONLY_OPTIONS}
    options["conditions"] = options.pop("only")
    # the proof budget travels as one JSON-able mapping (part of the cache key), or None
    seconds, cells, long = options.pop("prove_seconds"), options.pop("prove_cells"), options.pop("prove")
    if options.pop("quick"):
        options["prove"] = None
    else:
        from ..defaults import DEFAULT_PROOF_SECONDS, LONG_PROOF_SECONDS
        seconds = seconds or (LONG_PROOF_SECONDS if long else DEFAULT_PROOF_SECONDS)
        options["prove"] = {"seconds": seconds, "cells": cells}
    return options


def checked(args, err: Console, *, full_costs: bool = False, on_report=None, files=None):
    """Find (unless ``files`` are given) and check ``args.paths`` (through the cache unless
    ``--no-cache``); ``None`` if no files."""
    from ..run.batch import check_files
    from ..run.cache import ResultCache
    from ..spec.reading import find_cost_files

    files = find_cost_files(args.paths) if files is None else files
    if not files:
        error_line(f"no cost files (*.yaml, *.yml) under {' '.join(args.paths)}")
        return None
    with Progress(err, len(files), quiet=getattr(args, "quiet", False)) as progress:
        def reported(report):
            progress.finished(report.cost.id, report.seconds)
            if on_report:
                on_report(report)

        def refused(problem):
            progress.finished(problem.file or "a file")
            error_line(problem)

        return check_files(files, run_options(args), cache=None if args.no_cache else ResultCache(),
                           full_costs=full_costs, progress=progress.item, on_report=reported, on_error=refused,
                           workers=args.workers)


def exit_code(result) -> int:
    if result.errors:
        return EXIT_BAD_INPUT
    if any(r.mismatches for r in result.reports):
        return EXIT_EXPECTATION_FAILED
    return EXIT_OK


def view_width(out: Console) -> int:
    return out.width if out.is_terminal else 80


def cmd_check(args, out: Console, err: Console) -> int:
    from ..render.terminal import TerminalView
    from ..spec.reading import find_cost_files

    files = find_cost_files(args.paths)
    if len(files) > 1 and not args.verbose:
        from ..render.terminal_grid import GridView  # many files: one line per cost

        view = GridView(out, failures=args.failures, width=view_width(out))
    else:
        view = TerminalView(out, verbose=args.verbose, failures=args.failures, width=view_width(out))

    def show(report):
        if not args.json and not (args.quiet and not report.mismatches):
            view.report(report)
        if args.plots:
            write_plots(report, args.plots, err)

    result = checked(args, err, full_costs=bool(args.plots), on_report=show, files=files)
    if result is None:
        return EXIT_BAD_INPUT
    code = exit_code(result)
    if args.junit:
        from ..render.junit import run_to_junit
        refuse_unread_pipe(args.junit, "--junit")
        try:
            Path(args.junit).write_text(run_to_junit(result.reports, result.errors), encoding="utf-8")
        except OSError as exc:
            error_line(f"{args.junit}: cannot write the JUnit file: {exc.strerror}")
            code = EXIT_BAD_INPUT
    if args.json:
        from ..render import json_out
        options = {"seed": args.seed, "budget": args.budget, "backend": args.backend, "only": args.only,
                   "prove": run_options(args)["prove"], "levels": args.levels, "grid": args.grid}
        print(json_out.run_to_json(result.reports, result.errors, options, code))
    else:
        view.summary(result.reports, result.errors)
    if result.cached and err.is_terminal:  # said on the terminal only: the outputs stay identical
        err.print(f"{result.cached} of {len(result.reports)} result(s) from the cache; --no-cache recomputes",
                  style="dim", markup=False)
    return code


def cmd_report(args, out: Console, err: Console) -> int:
    from ..render.report import write_report

    result = checked(args, err, full_costs=True)
    if result is None:
        return EXIT_BAD_INPUT
    for name in ("index.html", "report.md"):
        refuse_unread_pipe(Path(args.out) / name, "--out")
    try:
        written = write_report(result.reports, result.errors, args.out, options=run_options(args))
    except OSError as exc:
        from ..errors import UsageError
        raise UsageError(f"cannot write the report into {args.out}: {exc.strerror or exc} (option --out)") from None
    for path in written:
        out.print(f"wrote {path}", markup=False)
    return exit_code(result)


def write_plots(report, directory: str, err: Console) -> None:
    """Every maker's pictures of one cost into ``directory/<cost id>/``, listed on stderr."""
    from ..errors import UsageError
    from ..render.plots import write_figures

    target = Path(directory) / report.cost.id
    try:
        target.mkdir(parents=True, exist_ok=True)
        figures = write_figures(report, target)
    except OSError as exc:
        raise UsageError(f"cannot write pictures into {target}: {exc.strerror or exc} (option --plots)") from None
    if figures:
        err.print(f"pictures of {report.cost.id} in {target}: " + ", ".join(f.png.stem for f in figures)
                  + " (PNG and SVG)", markup=False, highlight=False, soft_wrap=True)
    else:
        err.print(f"no pictures for {report.cost.id} (they need n = m = 2 or a recorded configuration)",
                  markup=False, highlight=False)
