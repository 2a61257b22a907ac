"""One substitution applied to many expressions, each shared subexpression rewritten once.

``expr.xreplace(mapping)`` walks the expression as a tree: a subexpression that occurs in
several places (the same ``√(1 + |u|²)`` throughout a chart cost's fourth derivatives) is
rebuilt at every occurrence, and again in every other derivative entry.  On the sphere's
charts that repeated rebuilding was most of a proof's preparation.  :class:`Substitution`
does exactly what ``xreplace`` does — the same rule, the same rebuilt nodes, so the same
results — but remembers each subexpression's image for the substitution's lifetime.
"""

from __future__ import annotations

from typing import Mapping

import sympy as sp


class Substitution:
    """``substitution(expr) == expr.xreplace(mapping)``, memoised over subexpressions."""

    def __init__(self, mapping: Mapping):
        self.mapping = dict(mapping)
        self._images: dict = {}

    def __call__(self, expr):
        if not self.mapping:
            return expr
        return self._image(expr)[0]

    def _image(self, node):
        """``(image, changed)`` as ``sympy.Basic._xreplace`` returns them."""
        known = self._images.get(node)
        if known is not None:
            return known
        if node in self.mapping:
            result = (self.mapping[node], True)
        elif type(node)._xreplace is not sp.Basic._xreplace:
            result = node._xreplace(self.mapping)  # a class with its own rule: let it apply it
        else:
            args, changed = [], False
            for a in node.args:
                if isinstance(a, sp.Basic):
                    image, moved = self._image(a)
                    args.append(image)
                    changed |= moved
                else:
                    args.append(a)
            result = (node.func(*args), True) if changed else (node, False)
        self._images[node] = result
        return result


def as_substitution(substitution) -> Substitution:
    """``substitution`` itself if it is a :class:`Substitution`, else one of the mapping."""
    return substitution if isinstance(substitution, Substitution) else Substitution(substitution or {})
