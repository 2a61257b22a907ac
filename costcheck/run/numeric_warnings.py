"""Warnings of numerical libraries (NumPy's "overflow encountered in exp" …) caught, counted and said.

A check evaluates the cost in float64 on many points; where that overflows or divides by zero,
NumPy warns once per operation.  Printed raw, such a line means nothing to a reader and gets
mixed into the output; here it is recorded while a check runs and becomes one note of the
verdict when the verdict rests on float64 values (``sampled`` or ``undecided`` evidence).  A
``proved`` verdict rests on ball or interval arithmetic and a ``refuted`` one on a witness
re-evaluated in high precision, so the float64 warnings met on the way are not part of their
evidence and are not repeated there.
"""

from __future__ import annotations

import warnings
from collections import Counter
from contextlib import contextmanager
from dataclasses import replace
from typing import Iterable

from ..model.verdict import Verdict

#: evidence kinds whose verdicts rest on float64 evaluation
FLOAT_EVIDENCE = {"sampled", "undecided"}


@contextmanager
def recorded():
    """Record every warning raised inside (in any thread: the filters are process-wide)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield caught


def summary(caught: Iterable[warnings.WarningMessage]) -> str:
    """``overflow encountered in exp (12×), invalid value encountered in multiply (3×)``; '' if none.

    Only arithmetic warnings (``RuntimeWarning`` and its kinds) count: a library's deprecation
    notice says nothing about the numbers.
    """
    counts = Counter(" ".join(str(w.message).split())[:120] for w in caught
                     if issubclass(w.category, RuntimeWarning))
    return ", ".join(f"{message} ({n}×)" for message, n in counts.most_common(4)) + (
        f" and {len(counts) - 4} more kinds" if len(counts) > 4 else "")


def with_note(verdict: Verdict, caught: Iterable[warnings.WarningMessage]) -> Verdict:
    """``verdict`` with a note naming the arithmetic warnings met, if its evidence rests on float64."""
    said = summary(caught)
    if not said or verdict.evidence.kind not in FLOAT_EVIDENCE:
        return verdict
    note = (f"float64 evaluation reported {said} during this check: at the points concerned the "
            "values computed were infinite or not a number")
    return replace(verdict, notes=tuple(verdict.notes) + (note,))
