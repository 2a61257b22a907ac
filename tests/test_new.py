"""``costcheck new``: a commented template that loads and checks cleanly, never overwriting."""

from __future__ import annotations

from costcheck.cli import main
from costcheck.spec.loader import load_cost


def test_new_writes_a_template_that_checks_cleanly(tmp_path, capsys):
    target = tmp_path / "my-cost"
    assert main(["new", str(target)]) == 0
    path = tmp_path / "my-cost.yaml"
    text = path.read_text()
    assert text.count("#") >= 10, "the template explains its fields in comments"
    cost = load_cost(path)
    assert cost.id == "my-cost" and cost.n == 2
    capsys.readouterr()
    # the template's expectations are the squared distance's textbook verdicts
    # (Ma, Trudinger, Wang 2005: A3w holds, A3s does not), so the check must meet them
    assert main(["check", str(path), "--budget", "256"]) == 0, capsys.readouterr().out


def test_new_refuses_to_overwrite(tmp_path, capsys):
    path = tmp_path / "taken.yaml"
    path.write_text("keep me\n")
    assert main(["new", str(path)]) == 2
    err = capsys.readouterr().err
    assert "already exists" in err and len(err.strip().splitlines()) == 1
    assert path.read_text() == "keep me\n"
