"""The README's promises: one opening paragraph, exactly two set-up commands, and CI runs the second."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def setup_commands() -> list[str]:
    text = (ROOT / "README.md").read_text()
    # indented code lines before the first section heading are the set-up commands
    head = text.split("\n## ", 1)[0]
    return [line.strip() for line in head.splitlines() if line.startswith("    ") and line.strip()]


def test_readme_gives_exactly_two_setup_commands():
    commands = setup_commands()
    assert len(commands) == 2, commands
    install_and_check, install_and_test = commands
    assert "costcheck check catalog/" in install_and_check
    assert "pytest" in install_and_test


def test_ci_runs_the_readme_test_command_verbatim():
    ci = (ROOT / ".ci" / "run").read_text()
    test_command = setup_commands()[1]
    assert any(line.strip() == test_command for line in ci.splitlines()), test_command


def test_readme_opens_with_one_paragraph_stating_the_job():
    text = (ROOT / "README.md").read_text()
    body = text.split("\n", 1)[1].strip()
    first = body.split("\n\n", 1)[0]
    assert re.search(r"\btwist\b", first)
    assert "Ma–Trudinger–Wang" in first
    assert "witness" in first
