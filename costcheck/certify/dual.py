"""Ball-valued dual numbers: a value and its gradient, both enclosed over a box.

Running the conditions' algebra (determinants, the MTW tensor, its forms) on duals gives
an enclosure of each final quantity's gradient over the cell, for the mean-value form
``q(B) ⊂ q(m) + ∇q(B)·(B − m)`` at the level of the quantity itself: the dependency between
the many derivative entries a determinant or a tensor combines is then second order.
"""

from __future__ import annotations

from flint import arb


class Dual:
    __slots__ = ("value", "grad")

    def __init__(self, value: arb, grad: list):
        self.value = value
        self.grad = grad

    @staticmethod
    def _lift(other, size):
        if isinstance(other, Dual):
            return other
        return Dual(arb(other) if not isinstance(other, arb) else other, [arb(0)] * size)

    def __add__(self, other):
        o = self._lift(other, len(self.grad))
        return Dual(self.value + o.value, [a + b for a, b in zip(self.grad, o.grad)])

    __radd__ = __add__

    def __neg__(self):
        return Dual(-self.value, [-a for a in self.grad])

    def __sub__(self, other):
        return self + (-self._lift(other, len(self.grad)))

    def __rsub__(self, other):
        return self._lift(other, len(self.grad)) - self

    def __mul__(self, other):
        o = self._lift(other, len(self.grad))
        return Dual(self.value * o.value, [self.value * b + o.value * a for a, b in zip(self.grad, o.grad)])

    __rmul__ = __mul__

    def __truediv__(self, other):
        o = self._lift(other, len(self.grad))
        inv = 1 / o.value
        return Dual(self.value * inv, [(a - self.value * inv * b) * inv for a, b in zip(self.grad, o.grad)])

    def __rtruediv__(self, other):
        return self._lift(other, len(self.grad)) / self

    # the tests the algebra makes (is a determinant surely non-zero?) read the value's ball
    def is_finite(self) -> bool:
        return self.value.is_finite() and all(g.is_finite() for g in self.grad)

    def lower(self):
        return self.value.lower()

    def upper(self):
        return self.value.upper()


def tighten(over_box: Dual, at_middle: arb, offsets: list) -> arb:
    """``(q(m) + ∇q(B)·(B − m)) ∩ q(B)``: both contain the range of ``q`` over the box."""
    natural = over_box.value
    if not (at_middle.is_finite() and all(g.is_finite() for g in over_box.grad)):
        return natural
    mean_value = at_middle
    for g, o in zip(over_box.grad, offsets):
        mean_value = mean_value + g * o
    return mean_value.intersection(natural) if natural.is_finite() else mean_value
