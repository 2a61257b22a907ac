"""Numbers and witnesses in a few characters, for every output a person reads.

Plain Python floats only (a NumPy scalar's ``repr`` is ``np.float64(…)``, never shown), a
fixed number of significant digits, and a value whose error bound is at least as large as
itself said as what it is: zero to within that bound, not "1.05e-81 ± 1.7e-51".
"""

from __future__ import annotations

import math
from typing import Sequence

#: display labels of a witness's extra vectors
VECTOR_LABELS = {"y_prime": "y'", "xi": "ξ", "eta": "η"}


def number(value, digits: int = 4) -> str:
    """``value`` with ``digits`` significant digits; ``-0`` is ``0``; NaN and infinities in words."""
    if value is None:
        return ""
    value = float(value)
    if math.isnan(value):
        return "nan"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    text = f"{value:.{digits}g}"
    return "0" if text in ("-0", "0") else text


def with_error(value, error, digits: int = 6) -> str:
    """``value ± error``, or ``≈ 0 (|·| ≤ bound)`` when the error bound is not smaller than the value.

    The bound said in the second form is ``|value| + error``: the largest magnitude the
    quantity can have given what was computed.
    """
    if error is None or float(error) == 0.0:
        return number(value, digits)
    value, error = float(value), abs(float(error))
    if error >= abs(value):
        return f"≈ 0 (|·| ≤ {number(abs(value) + error, 2)})"
    return f"{number(value, digits)} ± {number(error, 2)}"


def vector(values: Sequence[float], digits: int = 3) -> str:
    """``(a,b,c)``: coordinates without names and without spaces (the compact witness)."""
    return "(" + ",".join(number(v, digits) for v in values) + ")"


def named_vector(names: Sequence[str], values: Sequence[float], digits: int = 6) -> str:
    return "(" + ", ".join(f"{n}={number(v, digits)}" for n, v in zip(names, values)) + ")"


def short_witness(witness) -> str:
    """The witness's points in a few characters: ``x=(…) y=(…)`` and ``y'=(…)`` if it has one."""
    parts = [f"x={vector(witness.x)}", f"y={vector(witness.y)}"]
    if "y_prime" in witness.vectors:
        parts.append(f"y'={vector(witness.vectors['y_prime'])}")
    return " ".join(parts)


def full_witness(witness, x_names: Sequence[str], y_names: Sequence[str]) -> str:
    """Every coordinate and vector of the witness, its value with its error, and how it was confirmed."""
    parts = [f"x={named_vector(x_names, witness.x)}", f"y={named_vector(y_names, witness.y)}"]
    for name, vec in witness.vectors.items():
        label = VECTOR_LABELS.get(name, name)
        if name in ("xi", "eta"):  # directions: unnamed, fewer digits
            parts.append(f"{label}=({', '.join(number(v, 4) for v in vec)})")
        else:
            names = x_names if witness.vector_sides.get(name, "x") == "x" else y_names
            parts.append(f"{label}={named_vector(names, vec)}")
    parts.append(f"value {with_error(witness.value, witness.error_bound)}")
    if witness.confirmation:
        parts.append(f"[{witness.confirmation}]")
    return " ".join(parts)
