"""Scoring a corpus's verdicts against its expectations: the held-out benchmark figure.

A *held-out corpus* is a folder of cost files that are not in the catalog, each with ``expect``
verdicts taken from a published result (``tests/heldout/`` in the repository). The tool is never
tuned on them; they measure how much of what is true the default ``check`` establishes
rigorously. The question (issue 17): of the true verdicts, what fraction does ``check`` *prove*,
and is any rigorous verdict wrong?

Counted per expected ``(file, condition)`` — a *true verdict*, since every expectation of the
corpus is a published one:

* ``proved``: the verdict equals the expectation and its evidence is rigorous — ``proved`` (a
  certificate over the whole declared domain) or ``refuted`` (a failure witness certified in
  ball arithmetic): :data:`RIGOROUS`;
* ``sampled``: the verdict equals the expectation on sampled evidence only;
* ``unanswered``: the check said ``undecided`` or ``not-applicable``, or did not run;
* ``wrong``: any other verdict word (it contradicts the published one), and among those
  ``proved_wrong``, a contradiction on rigorous evidence — which must never happen.

The target: ``proved_fraction = proved / true_verdicts`` at least :data:`TARGET_FRACTION` and
``proved_wrong == 0``. This module reads the ``check --json`` document only; running the check
is its caller's job (``costcheck.bench``, ``tests/test_heldout.py``).
"""

from __future__ import annotations

#: evidence kinds that establish a verdict on the whole declared domain (docs/evidence.md)
RIGOROUS = frozenset({"proved", "refuted"})
#: verdict words that neither agree with nor contradict an expectation
UNANSWERED = frozenset({"undecided", "not-applicable"})
#: the share of the true verdicts the default check should prove (issue 17's "done when")
TARGET_FRACTION = 0.90


def outcome(expected: str, check: dict | None) -> str:
    """``proved``, ``sampled``, ``unanswered``, ``wrong`` or ``proved_wrong`` for one expectation
    and the JSON verdict of its condition (``None`` when the condition was not checked)."""
    if check is None or check["verdict"] in UNANSWERED:
        return "unanswered"
    rigorous = check["evidence"]["kind"] in RIGOROUS
    if check["verdict"] == expected:
        return "proved" if rigorous else "sampled"
    return "proved_wrong" if rigorous else "wrong"


def why_not_proved(check: dict | None) -> str:
    """What the evidence's ``proof_attempt`` says stopped the proof (``""`` when it has none):
    the reason it was skipped, or the share of the domain covered and what stopped it."""
    attempt = (check or {}).get("evidence", {}).get("proof_attempt")
    if not attempt:
        return ""
    if attempt.get("skipped"):
        return f"; no proof attempted: {attempt['skipped']}"
    stopped = attempt.get("stopped_by") or "cells left undecided"
    coverage = attempt.get("coverage", 0.0)
    share = "over 99.9" if 0.999 < coverage < 1 else f"{100 * coverage:.1f}"  # never rounded up to 100
    return f"; proof covered {share} % of the domain, stopped by {stopped}"


def score(document: dict) -> dict:
    """The held-out figures of one ``check --json`` document (its costs' ``expect`` and ``checks``)."""
    counts = {"proved": 0, "sampled": 0, "unanswered": 0, "wrong": 0, "proved_wrong": 0}
    by_condition: dict[str, dict] = {}
    not_proved, wrong = [], []
    for cost in document["costs"]:
        for condition, expected in sorted(cost.get("expect", {}).items()):
            check = cost["checks"].get(condition)
            kind = outcome(expected, check)
            counts[kind] += 1
            row = by_condition.setdefault(condition, {"true_verdicts": 0, "proved": 0})
            row["true_verdicts"] += 1
            row["proved"] += kind == "proved"
            if kind == "proved":
                continue
            said = "not checked" if check is None else f"{check['verdict']} ({check['evidence']['kind']})"
            case = f"{cost['file']}::{condition}: expected {expected}, got {said}{why_not_proved(check)}"
            (wrong if kind in ("wrong", "proved_wrong") else not_proved).append(case)
    true_verdicts = sum(counts.values())
    fraction = counts["proved"] / true_verdicts if true_verdicts else 0.0
    # "wrong" counts every contradiction, rigorous or not; proved_wrong the rigorous ones among them
    result = {"files": len(document["costs"]), "errors": len(document.get("errors", [])),
              "true_verdicts": true_verdicts, "proved": counts["proved"], "proved_fraction": fraction,
              "sampled": counts["sampled"], "unanswered": counts["unanswered"],
              "wrong": counts["wrong"] + counts["proved_wrong"], "proved_wrong": counts["proved_wrong"],
              "by_condition": by_condition, "not_proved": not_proved, "wrong_cases": wrong}
    met = fraction >= TARGET_FRACTION and counts["proved_wrong"] == 0 and true_verdicts > 0
    result["target"] = {"proved_fraction": TARGET_FRACTION, "proved_wrong": 0, "met": met}
    result["line"] = (f"held-out target {'met' if met else 'NOT met'}: {counts['proved']}/{true_verdicts} true "
                      f"verdicts proved ({100 * fraction:.1f} %, target >= {100 * TARGET_FRACTION:.0f} %), "
                      f"{result['proved_wrong']} proved wrongly (target 0), {result['wrong']} wrong in all")
    return result
