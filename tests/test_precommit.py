"""The pre-commit hook manifest, run through the pre-commit framework in a temporary repository.

``pre-commit try-repo`` reads this repository's ``.pre-commit-hooks.yaml`` (uncommitted
changes included) exactly as a consumer's ``.pre-commit-config.yaml`` would.  The suite runs
the ``costcheck-installed`` hook (``language: system``: the costcheck of the Python running
the tests, put first on PATH), which exercises the manifest's file selection, entry and
exit codes in about ten seconds.  The ``costcheck`` hook (``language: python``) differs only
in that pre-commit first builds an isolated environment and installs this package into it
with all its dependencies (JAX, SciPy, sympy): about 70 s with a warm pip cache on the
project's machine, too slow for every run, so it runs only with
``COSTCHECK_TEST_ISOLATED_HOOK=1``.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest
from small_costs import line_quadratic

ROOT = Path(__file__).resolve().parent.parent

pytestmark = pytest.mark.skipif(not (ROOT / ".git").exists() or shutil.which("git") is None,
                                reason="needs this project as a git checkout and git on PATH")


def _git(repo: Path, *args: str) -> None:
    subprocess.run(["git", "-c", "user.name=test", "-c", "user.email=test@example.invalid", *args], cwd=repo,
                   check=True, capture_output=True)


def _consumer_repo(tmp_path: Path) -> Path:
    repo = tmp_path / "consumer"
    (repo / "catalog").mkdir(parents=True)
    (repo / "config").mkdir()
    for name in ("line-a", "line-b"):
        (repo / "catalog" / f"{name}.yaml").write_text(line_quadratic(name))
    # a YAML file that is not a cost file: outside catalog/, the hook must not be given it
    (repo / "config" / "settings.yaml").write_text("retries: 3\n")
    _git(repo, "init", "-q")
    _git(repo, "add", "-A")
    return repo


def _try_repo(repo: Path, hook: str, tmp_path: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PRE_COMMIT_HOME"] = str(tmp_path / "pre-commit-home")
    env["PATH"] = os.path.dirname(sys.executable) + os.pathsep + env.get("PATH", "")
    return subprocess.run([sys.executable, "-m", "pre_commit", "try-repo", str(ROOT), hook, "--all-files",
                           "--verbose"], cwd=repo, env=env, capture_output=True, text=True, timeout=900)


def _exercise(hook: str, tmp_path: Path) -> None:
    repo = _consumer_repo(tmp_path)
    passed = _try_repo(repo, hook, tmp_path)
    assert passed.returncode == 0, passed.stdout + passed.stderr
    assert "Passed" in passed.stdout
    assert "2 costs: " in passed.stdout  # the two catalog files, not config/settings.yaml

    # a changed file whose expectation is not met fails the commit, naming the file
    (repo / "catalog" / "line-b.yaml").write_text(line_quadratic("line-b", expect="{twist: holds, nondegenerate: fails}"))
    _git(repo, "add", "-A")
    failed = _try_repo(repo, hook, tmp_path)
    assert failed.returncode == 1, failed.stdout + failed.stderr
    assert "Failed" in failed.stdout
    assert "line-b.yaml: nondegenerate: expected fails, got holds" in failed.stdout


def test_installed_hook_through_pre_commit(tmp_path):
    _exercise("costcheck-installed", tmp_path)


@pytest.mark.skipif(not os.environ.get("COSTCHECK_TEST_ISOLATED_HOOK"),
                    reason="builds an isolated environment with JAX and SciPy (~70 s); "
                           "set COSTCHECK_TEST_ISOLATED_HOOK=1 to run it")
def test_isolated_hook_through_pre_commit(tmp_path):
    _exercise("costcheck", tmp_path)
