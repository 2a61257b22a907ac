"""Hardening (issue 19) beyond the hostile corpus: the expanded-expression limits, the locator of
an undefined cost, the wall-time bounds turning into honest "undecided" verdicts, the CLI's
guard for internal errors, and the Markdown report's escaping of user strings."""

from __future__ import annotations

import re
import time
from pathlib import Path

import pytest
import sympy as sp

from costcheck import defaults
from costcheck.cli import main
from costcheck.errors import EXIT_INTERNAL_ERROR, ExpressionError
from costcheck.numerics.bounded import within
from costcheck.spec.expression import check_expanded, locate_undefined, parse_expression
from costcheck.spec.loader import load_cost

x, y = sp.Symbol("x1", real=True), sp.Symbol("y1", real=True)

LINE = """\
id: {id}
title: {title}
x: [x1]
y: [y1]
expr: (x1 - y1)**2 / 2
domain:
  x: {{box: [[-1, 1]]}}
  y: {{box: [[-1, 1]]}}
"""


def test_expanded_size_is_measured_on_shared_structure_quickly():
    # 40 helpers, each using the one before twice: 2**41 nodes written out, 40 steps to measure
    a = x - y
    start = time.perf_counter()
    with pytest.raises(ExpressionError, match="more than 5000 nodes"):
        for _ in range(40):
            a = sp.sin(a) + sp.cos(a)
            check_expanded(a)
    assert time.perf_counter() - start < 5  # a ceiling against exponential work, not a speed target


def test_expanded_limits_allow_the_ordinary():
    check_expanded(parse_expression("sqrt(1 + (x1 - y1)**2) * exp(-x1*y1) + 10**12 * x1**64", {"x1": x, "y1": y}))


@pytest.mark.parametrize("text, phrase", [
    ("x1 + sqrt(-1)", "not a real number"),
    ("x1 * exp(800)", "not finite"),
    ("x1 * exp(exp(exp(exp(10))))", "not finite"),
    ("x1 ** sin(exp(exp(exp(10))))", "exponent"),
    ("x1 * asin(2)", "not a real number"),
])
def test_constants_must_be_finite_and_real(text, phrase):
    with pytest.raises(ExpressionError, match=phrase):
        parse_expression(text, {"x1": x})


def test_locate_undefined_names_the_innermost_part_and_the_reason():
    expr = sp.exp(x) + sp.log(x - y - 5)
    part, reason = locate_undefined(expr, {x: 0.5, y: 0.25})
    assert part == "log(x1 - y1 - 5)" and reason == "log of the negative number -4.75"
    assert locate_undefined(sp.Abs(x - y), {x: 0.5, y: 0.5}) is None


def test_within_returns_a_timeout_instead_of_hanging():
    def spin():
        while True:
            pass

    start = time.perf_counter()
    assert within(0.2, "spinning", spin) == ("timeout", None)
    assert within(1.0, "adding", lambda: 1 + 1) == ("ok", 2)
    # an inner bound's timeout stays inner; the outer work carries on
    assert within(5.0, "outer", lambda: (within(0.1, "inner", spin), 3)) == ("ok", (("timeout", None), 3))
    assert time.perf_counter() - start < 4


def _check(tmp_path, monkeypatch, **bounds):
    from costcheck.run.runner import run_checks

    for name, value in bounds.items():
        monkeypatch.setattr(defaults, name, value)
    path = tmp_path / "line.yaml"
    path.write_text(LINE.format(id="line", title="t"), encoding="utf-8")
    return run_checks(load_cost(path), budget=64, conditions=["twist", "nondegenerate"])


def test_a_derivative_stage_past_its_bound_makes_every_verdict_undecided(tmp_path, monkeypatch):
    report = _check(tmp_path, monkeypatch, DERIVATIVE_SECONDS=1e-6)
    for v in report.verdicts.values():
        assert v.verdict == "undecided"
        assert "did not finish within" in v.evidence.summary and "derivatives" in v.evidence.summary


def test_a_condition_past_its_bound_is_undecided_and_says_so(tmp_path, monkeypatch):
    import importlib

    from costcheck.conditions import REGISTRY

    # the line's checks can finish inside the timer's 1 ms floor (the sample and derivatives
    # are computed before the bound): make each take 50 ms, in an interruptible sleep
    for name in ("twist", "nondegenerate"):
        module = importlib.import_module(f"costcheck.conditions.{REGISTRY[name]}")
        monkeypatch.setattr(module, "check", lambda ctx, check=module.check: (time.sleep(0.05), check(ctx))[1])
    report = _check(tmp_path, monkeypatch, CONDITION_SECONDS=1e-6)
    for v in report.verdicts.values():
        assert v.verdict == "undecided"
        assert "stopped: the check did not finish within" in v.evidence.summary


def test_an_internal_error_is_one_line_with_exit_status_3_and_a_traceback_file(tmp_path, monkeypatch, capsys):
    import costcheck.cli.commands as commands

    monkeypatch.setenv("TMPDIR", str(tmp_path))
    monkeypatch.setattr("tempfile.tempdir", None)

    def broken(*args, **kwargs):
        raise ZeroDivisionError("a planted bug")

    monkeypatch.setattr(commands, "cmd_schema", broken)
    code = main(["schema"])
    err = capsys.readouterr().err
    assert code == EXIT_INTERNAL_ERROR == 3
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("costcheck: internal error: ZeroDivisionError: a planted bug")
    path = Path(re.search(r"traceback in (\S+?)\)", lines[0]).group(1))
    assert path.parent == tmp_path
    text = path.read_text(encoding="utf-8")
    assert "Traceback" in text and "a planted bug" in text and "cmd_schema" not in lines[0]


HOSTILE_TITLE = '"<script>alert(1)</script> [click](javascript:alert(2)) <img src=x onerror=alert(3)> | `x` *b*"'


def test_markdown_report_escapes_every_user_string(tmp_path):
    good = tmp_path / "line.yaml"
    text = LINE.format(id="line", title=HOSTILE_TITLE)
    text += 'source: "<a href=\\"javascript:alert(4)\\">paper</a> ![i](javascript:alert(5))"\n'
    text += 'notes: "# heading\\n\\n<iframe src=evil>\\n\\n- [x](javascript:alert(6))"\n'
    good.write_text(text, encoding="utf-8")
    bad = tmp_path / "<img src=y onerror=alert(7)>.yaml"
    bad.write_text("id: [broken\n", encoding="utf-8")
    out = tmp_path / "review"
    code = main(["report", str(good), str(bad), "--out", str(out), "--budget", "64", "--only", "twist", "--no-cache"])
    assert code == 2  # the broken file; the report is written all the same
    markdown = (out / "report.md").read_text(encoding="utf-8")
    for raw in ("<script", "<img", "<iframe", "<a href", "](javascript:", "\n# heading"):
        assert raw not in markdown, f"{raw!r} reached report.md unescaped"
    assert "&lt;script&gt;alert\\(1\\)&lt;/script&gt;" in markdown
    assert "&lt;img src=y onerror=alert\\(7\\)&gt;" in markdown
