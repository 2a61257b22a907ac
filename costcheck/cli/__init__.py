"""The ``costcheck`` command line.

Exit codes, like a linter's: 0 all fine; 1 an expectation written in a cost file
was not met; 2 bad input or usage (a one-line message naming the file and the
field; never a traceback); 3 an internal error (a bug: one line, the traceback in a
file the line names).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from typing import Sequence

from rich.console import Console

from .. import __version__
from ..errors import EXIT_BAD_INPUT, EXIT_INTERNAL_ERROR, CostcheckError
from . import check as check_command
from . import commands


class _Parser(argparse.ArgumentParser):
    """argparse, but usage errors are one line plus a hint, with exit status 2."""

    def error(self, message: str):  # noqa: D401 - argparse hook
        message = check_command.one_line(message)  # an unknown argument is quoted back: keep it one short line
        sys.stderr.write(f"costcheck: usage error: {message} (try 'costcheck {self.prog.split()[-1]} --help')\n"
                         if " " in self.prog else f"costcheck: usage error: {message} (try 'costcheck --help')\n")
        raise SystemExit(EXIT_BAD_INPUT)


def _whole(low: int, high: int, what: str = ""):
    """An argparse type: a whole number in [low, high]; the message names the limit."""
    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a whole number, got {text[:40]!r}") from None
        if value < low:
            raise argparse.ArgumentTypeError(
                f"expected {'a positive number' if low == 1 else f'at least {low}'}, got {value}")
        if value > high:
            raise argparse.ArgumentTypeError(f"at most {high}{what} (got {value})")
        return value
    return parse


def _real(low: float, high: float, *, allow_low: bool = False, what: str = ""):
    """An argparse type: a finite number above ``low`` (or equal, with ``allow_low``), at most ``high``."""
    def parse(text: str) -> float:
        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a number, got {text[:40]!r}") from None
        if not (value >= low if allow_low else value > low):
            raise argparse.ArgumentTypeError(
                f"expected a {'non-negative' if allow_low and low == 0 else 'positive'} number, got {text[:40]}")
        if not value <= high:  # also refuses nan and inf
            raise argparse.ArgumentTypeError(f"at most {high:g}{what} (got {text[:40]})")
        return value
    return parse


def _seed_option(command, default_seed: int) -> None:
    from ..defaults import MAX_SEED
    command.add_argument("--seed", type=_whole(0, MAX_SEED), default=default_seed,
                         help=f"random seed, 0 to {MAX_SEED} (default {default_seed})")


def _budget_type():
    from ..defaults import MAX_BUDGET
    return _whole(1, MAX_BUDGET, " sampled pairs per cost")


def _add_check_options(command, conditions, default_seed: int, default_budget: int) -> None:
    """The options ``check`` and ``report`` share: which files, and how they are checked."""
    from ..defaults import (DEFAULT_PROOF_CELLS, DEFAULT_PROOF_SECONDS, LONG_PROOF_SECONDS, MAX_PROVE_CELLS,
                            MAX_STAGE_SECONDS, MAX_WORKERS)

    command.add_argument("paths", nargs="+", metavar="PATH")
    _seed_option(command, default_seed)
    command.add_argument("--budget", type=_budget_type(), default=default_budget,
                         help=f"sampled (x, y) pairs per cost; more is slower and more thorough "
                              f"(default {default_budget})")
    command.add_argument("--backend", choices=["sympy", "jax"], default="sympy",
                         help="derivative backend (default sympy; jax compiles slower, runs faster on large budgets)")
    command.add_argument("--only", action="append", choices=list(conditions), metavar="CONDITION",
                         help=f"run only this condition (repeatable): {', '.join(conditions)}")
    command.add_argument("--no-cache", action="store_true",
                         help="recompute every result; neither read nor write the result cache")
    command.add_argument("--workers", type=_whole(1, MAX_WORKERS, " workers"), default=None,
                         help="local worker processes for the files not in the cache (default: the number "
                              "of CPUs; 1 runs in this process); the output is the same for any number")
    proofs = command.add_mutually_exclusive_group()
    proofs.add_argument("--prove", action="store_true",
                        help=f"spend up to {LONG_PROOF_SECONDS:g} s per condition proving sampled verdicts on the "
                             f"whole domain (default {DEFAULT_PROOF_SECONDS:g} s; ball arithmetic, branch and bound, "
                             "MTW identities); an unfinished attempt reports the coverage reached")
    proofs.add_argument("--quick", action="store_true",
                        help="sampling only: attempt no proofs (every 'holds' stays sampled evidence)")
    command.add_argument("--prove-seconds", type=_real(0.0, MAX_STAGE_SECONDS, what=" seconds"), default=None,
                         metavar="S",
                         help=f"time for each condition's proof attempt (default {DEFAULT_PROOF_SECONDS:g}, "
                              f"or {LONG_PROOF_SECONDS:g} with --prove)")
    command.add_argument("--prove-cells", type=_whole(1, MAX_PROVE_CELLS, " cells"), default=DEFAULT_PROOF_CELLS, metavar="N",
                         help=f"cells (boxes) for each condition's proof attempt (default {DEFAULT_PROOF_CELLS})")


def _build_parser() -> argparse.ArgumentParser:
    from ..defaults import DEFAULT_BUDGET, DEFAULT_SEED
    from ..conditions import REGISTRY

    parser = _Parser(prog="costcheck", description="Check transport costs and matching surpluses for twist, "
                     "non-degeneracy, MTW, cross-curvature and related conditions, with witnesses.")
    parser.add_argument("--version", action="version", version=f"costcheck {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    check = sub.add_parser("check", help="check cost files (files or folders, searched recursively)")
    check.add_argument("--json", action="store_true", help="print one JSON document instead of tables")
    check.add_argument("--junit", metavar="FILE", default=None,
                       help="also write JUnit XML to FILE: one test case per cost and condition")
    check.add_argument("--quiet", action="store_true",
                       help="print only costs with an unmet expectation, then the summary line; no progress")
    check_command.add_view_options(check)
    report = sub.add_parser("report", help="write a design-review report (HTML page and Markdown) of cost files")
    report.add_argument("--out", metavar="DIR", required=True, help="folder for index.html, report.md, figures/")
    report.add_argument("--quiet", action="store_true", help="no progress on stderr")
    check.add_argument("--plots", metavar="DIR", default=None,
                       help="also write every picture of each cost (PNG and SVG) into DIR/<cost id>/")
    for command in (check, report):
        _add_check_options(command, REGISTRY, DEFAULT_SEED, DEFAULT_BUDGET)
        check_command.add_level_options(command, _whole)

    explain = sub.add_parser("explain", help="explain a condition, a code or a term (the entry of docs/)")
    explain.add_argument("name", nargs="?", metavar="CONDITION|CODE", help="e.g. mtw, mtw-fails, sampled; none: list all")
    schema = sub.add_parser("schema", help="print the JSON Schema of cost files (draft 2020-12)")
    schema.add_argument("--results", action="store_true",
                        help="print the JSON Schema of the results document (check --json) instead")
    new = sub.add_parser("new", help="write a commented template cost file NAME.yaml to start from")
    new.add_argument("name", metavar="NAME", help="file to write (.yaml is added if missing); its stem is the id")

    show = sub.add_parser("show", help="show a parsed cost file: expression, domain, derivative sizes")
    show.add_argument("file", metavar="FILE")
    show.add_argument("--json", action="store_true")

    tensor = sub.add_parser("tensor", help="print the MTW tensor T_ijkl and S(ξ, η) on ξ ⊥ η in closed form")
    tensor.add_argument("file", metavar="FILE")
    tensor.add_argument("--latex", action="store_true", help="print LaTeX instead of plain text")
    tensor.add_argument("--json", action="store_true")
    from ..defaults import MAX_STAGE_SECONDS, MAX_WORKERS
    tensor.add_argument("--simplify-seconds", type=_real(0.0, MAX_STAGE_SECONDS, allow_low=True, what=" seconds"),
                        default=10.0,
                        help="time allowed for factoring the expressions, in total (default 10; 0 skips it)")

    sweep = sub.add_parser("sweep", help="check a cost over a range (or grid) of parameter values and "
                           "locate where verdicts change")
    sweep.add_argument("file", metavar="FILE")
    sweep.add_argument("--vary", action="append", metavar="NAME=SPEC", required=True,
                       help="NAME=start:stop:count (inclusive) or NAME=v1,v2,...; twice for a grid")
    sweep.add_argument("--only", action="append", choices=list(REGISTRY), metavar="CONDITION",
                       help=f"run only this condition (repeatable): {', '.join(REGISTRY)}")
    sweep.add_argument("--json", action="store_true", help="print one JSON document instead of tables")
    _seed_option(sweep, DEFAULT_SEED)
    sweep.add_argument("--budget", type=_budget_type(), default=DEFAULT_BUDGET,
                       help=f"sampled (x, y) pairs per value (default {DEFAULT_BUDGET})")
    sweep.add_argument("--workers", type=_whole(1, MAX_WORKERS, " workers"), default=None,
                       help="local worker processes (default: the number of CPUs; 1 runs in this process)")
    sweep.add_argument("--scheduler", metavar="ADDRESS", default=None,
                       help="run on a Dask distributed scheduler at ADDRESS instead of local processes")
    sweep.add_argument("--tolerance", type=_real(0.0, 1e6), default=1e-3,
                       help="bisect verdict boundaries to this width (default 1e-3)")
    sweep.add_argument("--no-bisect", action="store_true", help="report grid changes only, no bisection")
    sweep.add_argument("--quick", action="store_true",
                       help="check each value as 'check --quick' does: sampling only, no proof attempts")
    sweep.add_argument("--plots", metavar="DIR", default=None, help="write PNG and SVG pictures into DIR")
    sweep.add_argument("--quiet", action="store_true", help="no progress on stderr")

    nested = sub.add_parser("nested", help="decide nestedness of a model with a one-dimensional target (m = 1) "
                            "on its data, and build the matching map")
    nested.add_argument("file", metavar="FILE")
    nested.add_argument("--source", metavar="CSV", default=None,
                        help="weighted source points (columns: the x names, optional weight) instead of the file's data")
    nested.add_argument("--target", metavar="CSV", default=None,
                        help="weighted target points (columns: the y name, optional weight) instead of the file's data")
    nested.add_argument("--at", metavar="CSV", default=None, help="evaluate the map T at the points of this CSV")
    check_command.add_level_options(nested, _whole)
    nested.add_argument("--out", metavar="DIR", default=None,
                        help="write nested.json, levels.csv (k(y)), map-on-source.csv (T with each point's mass) "
                             "and, with --at, map-at.csv into DIR")
    nested.add_argument("--json", action="store_true", help="print one JSON document instead of text")
    nested.add_argument("--plots", metavar="DIR", default=None, help="write PNG and SVG pictures into DIR")
    sweep.add_argument("--no-cache", action="store_true",
                       help="recompute every value; neither read nor write the result cache")
    return parser


OUTPUT_ONLY_OPTIONS = check_command.OUTPUT_ONLY_OPTIONS  # kept here: DEVELOPERS.md names it cli.OUTPUT_ONLY_OPTIONS


def _cmd_nested(args, out: Console) -> int:
    from . import nested as command

    document, result, _ = command.run(args)
    if args.json:
        print(json.dumps(document, indent=2, ensure_ascii=False))
    else:
        command.render(out, document, result)
    return document["exit_code"]


_error = check_command.error_line

#: the commands whose work a cost file decides: their process gets the memory bound of run.memory
MEMORY_BOUND_COMMANDS = {"check", "report", "sweep", "nested", "tensor", "show"}


def main(argv: Sequence[str] | None = None) -> int:
    """The command line; an exception nobody expected becomes one line and exit status 3."""
    from ..run import numeric_warnings

    try:
        with numeric_warnings.recorded() as caught:  # never printed raw; the checks turn theirs into notes
            code = _main(argv)
        said = numeric_warnings.summary(caught)
        if said:
            sys.stderr.write(f"costcheck: note: float64 evaluation outside the checks (pictures, reports) "
                             f"reported {said}\n")
        return code
    except (SystemExit, KeyboardInterrupt):
        raise
    except BrokenPipeError:
        # the reader of our output went away (``costcheck check ... | head``): nothing to report
        try:
            sys.stdout = open(os.devnull, "w")  # noqa: SIM115 - Python flushes stdout at exit
        except OSError:
            pass
        return 128 + 13  # the shell's status for a process ended by SIGPIPE
    except BaseException as exc:  # noqa: BLE001 - the guard: whatever it is, one line, never 0/1/2
        return _internal_error(exc, argv)


def _internal_error(exc: BaseException, argv) -> int:
    """Write the traceback to a file and say where, in one line (a bug, not bad input)."""
    import tempfile
    import traceback

    kind = type(exc).__name__
    text = " ".join(str(exc).split())[:160]
    try:
        fd, path = tempfile.mkstemp(prefix="costcheck-internal-error-", suffix=".txt")
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(f"costcheck {__version__}\nargv: {list(sys.argv if argv is None else argv)!r}\n\n")
            handle.write("".join(traceback.format_exception(exc)))
        where = f"traceback in {path}"
    except OSError as write_error:
        where = f"the traceback could not be written ({write_error.strerror or write_error})"
    sys.stderr.write(f"costcheck: internal error: {kind}{': ' + text if text else ''} (a bug in costcheck, "
                     f"not a problem with the input; {where})\n")
    sys.stderr.flush()
    return EXIT_INTERNAL_ERROR


def _main(argv: Sequence[str] | None = None) -> int:
    # the check view keeps to 80 columns itself; other commands' tables are wider: off a terminal a fixed width
    out = Console(highlight=False, width=None if sys.stdout.isatty() else 150)
    err = Console(stderr=True, highlight=False)
    parser = _build_parser()
    args = parser.parse_args(argv)
    if argv is None and args.command in MEMORY_BOUND_COMMANDS:  # the process is the command (not a test)
        from ..run.memory import bound_memory
        bound_memory()
    if args.command is None:
        parser.print_help()
        sys.stderr.write("costcheck: usage error: give a command, such as 'costcheck check FILE' (the list is above)\n")
        return EXIT_BAD_INPUT
    try:
        if args.command == "check":
            return check_command.cmd_check(args, out, err)
        if args.command == "show":
            return commands.cmd_show(args, out)
        if args.command == "tensor":
            return commands.cmd_tensor(args, out)
        if args.command == "sweep":
            return commands.cmd_sweep(args, out, err)
        if args.command == "nested":
            return _cmd_nested(args, out)
        if args.command == "report":
            return check_command.cmd_report(args, out, err)
        if args.command == "schema":
            return commands.cmd_schema(args)
        if args.command == "new":
            return commands.cmd_new(args, out)
        if args.command == "explain":
            from .explain import run as explain

            return explain(args.name)
    except CostcheckError as exc:
        _error(exc)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        _error("interrupted")
        return 130
    parser.error(f"unknown command {args.command!r}")
    return EXIT_BAD_INPUT

