"""Verdicts with their evidence: what every condition check returns and every renderer reads.

The evidence vocabulary (``docs/evidence.md``); the three kinds are never blurred:

- ``proved``: a certificate over the whole declared domain;
- ``refuted``: a witness re-evaluated in high precision (or exactly), with its error bound;
- ``sampled``: no witness among N points at a stated resolution — evidence, not proof.

Two more kinds say honestly that no verdict was reached: ``not_applicable`` (the
condition is not defined for this cost, e.g. MTW when ``n != m``) and
``undecided`` (the check ran but could not decide, e.g. the cost is undefined
on every sample).

Each outcome carries a stable ``code`` (see :data:`CODES`), so scripts can match on it across
versions; :data:`CODE_MEANINGS` says each in words and :func:`docs_links` points to its entry in
the repository's ``docs/`` (``docs/evidence.md`` for the evidence kinds, ``docs/codes.md`` for
the codes), which ``costcheck explain`` prints.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping, Sequence

EVIDENCE_KINDS = ("proved", "refuted", "sampled", "not_applicable", "undecided")

#: Stable codes: the condition and its verdict word, readable without a table.  Never rename; only add.
CODES: dict[tuple[str, str], str] = {
    ("twist", "holds"): "twist-holds",
    ("twist", "fails"): "twist-fails",
    ("twist", "undecided"): "twist-undecided",
    ("nondegenerate", "holds"): "nondegenerate-holds",
    ("nondegenerate", "fails"): "nondegenerate-fails",
    ("nondegenerate", "undecided"): "nondegenerate-undecided",
    ("mtw", "strong"): "mtw-strong",
    ("mtw", "weak"): "mtw-weak",
    ("mtw", "fails"): "mtw-fails",
    ("mtw", "not-applicable"): "mtw-not-applicable",
    ("mtw", "undecided"): "mtw-undecided",
    ("nncc", "holds"): "nncc-holds",
    ("nncc", "fails"): "nncc-fails",
    ("nncc", "not-applicable"): "nncc-not-applicable",
    ("nncc", "undecided"): "nncc-undecided",
    ("target_c_convex", "holds"): "target_c_convex-holds",
    ("target_c_convex", "fails"): "target_c_convex-fails",
    ("target_c_convex", "not-applicable"): "target_c_convex-not-applicable",
    ("target_c_convex", "undecided"): "target_c_convex-undecided",
    ("source_c_convex", "holds"): "source_c_convex-holds",
    ("source_c_convex", "fails"): "source_c_convex-fails",
    ("source_c_convex", "not-applicable"): "source_c_convex-not-applicable",
    ("source_c_convex", "undecided"): "source_c_convex-undecided",
    ("loeper", "holds"): "loeper-holds",
    ("loeper", "fails"): "loeper-fails",
    ("loeper", "not-applicable"): "loeper-not-applicable",
    ("loeper", "undecided"): "loeper-undecided",
    ("index_form", "holds"): "index_form-holds",
    ("index_form", "fails"): "index_form-fails",
    ("index_form", "not-applicable"): "index_form-not-applicable",
    ("index_form", "undecided"): "index_form-undecided",
    ("nested", "holds"): "nested-holds",
    ("nested", "fails"): "nested-fails",
    ("nested", "not-applicable"): "nested-not-applicable",
    ("nested", "undecided"): "nested-undecided",
    ("z_monotone", "holds"): "z_monotone-holds",
    ("z_monotone", "fails"): "z_monotone-fails",
    ("z_monotone", "not-applicable"): "z_monotone-not-applicable",
    ("z_monotone", "undecided"): "z_monotone-undecided",
    ("g_twist", "holds"): "g_twist-holds",
    ("g_twist", "fails"): "g_twist-fails",
    ("g_twist", "not-applicable"): "g_twist-not-applicable",
    ("g_twist", "undecided"): "g_twist-undecided",
    ("g_dual_twist", "holds"): "g_dual_twist-holds",
    ("g_dual_twist", "fails"): "g_dual_twist-fails",
    ("g_dual_twist", "not-applicable"): "g_dual_twist-not-applicable",
    ("g_dual_twist", "undecided"): "g_dual_twist-undecided",
    ("g_nondegenerate", "holds"): "g_nondegenerate-holds",
    ("g_nondegenerate", "fails"): "g_nondegenerate-fails",
    ("g_nondegenerate", "not-applicable"): "g_nondegenerate-not-applicable",
    ("g_nondegenerate", "undecided"): "g_nondegenerate-undecided",
    ("g_mtw", "strong"): "g_mtw-strong",
    ("g_mtw", "weak"): "g_mtw-weak",
    ("g_mtw", "fails"): "g_mtw-fails",
    ("g_mtw", "not-applicable"): "g_mtw-not-applicable",
    ("g_mtw", "undecided"): "g_mtw-undecided",
}


#: the code given to an outcome missing from :data:`CODES` (a bug: every outcome a check returns has one)
UNLISTED_CODE = "unlisted-outcome"

#: each code in words, so that a reader of the JSON needs no table; ``docs/codes.md`` opens each
#: code's entry with exactly this text (``tests/test_docs.py`` keeps the two equal)
CODE_MEANINGS: dict[str, str] = {
    "twist-holds": "twist holds: y ↦ D_x c(x, y) is one-to-one on Y for every x",
    "twist-fails": "twist fails: two targets y ≠ y' with D_x c(x, y) = D_x c(x, y')",
    "twist-undecided": "twist undecided: the check could not reach a verdict",
    "nondegenerate-holds": "non-degeneracy holds: the mixed Hessian D²_xy c has full rank",
    "nondegenerate-fails": "non-degeneracy fails: the mixed Hessian D²_xy c loses rank at a point",
    "nondegenerate-undecided": "non-degeneracy undecided: the check could not reach a verdict",
    "mtw-strong": "MTW strong (A3s): S(ξ, η) > 0 for every ξ ⊥ η",
    "mtw-weak": "MTW weak (A3w), not strong: S(ξ, η) ≥ 0 for ξ ⊥ η, with minimum 0 in tolerance",
    "mtw-fails": "MTW fails: S(ξ, η) < 0 for some ξ ⊥ η",
    "mtw-not-applicable": "MTW not applicable: n ≠ m, or n = m = 1",
    "mtw-undecided": "MTW undecided: the check could not reach a verdict",
    "nncc-holds": "non-negative cross-curvature holds: S(ξ, η) ≥ 0 for all ξ, η",
    "nncc-fails": "non-negative cross-curvature fails: S(ξ, η) < 0 for some ξ, η",
    "nncc-not-applicable": "cross-curvature not applicable: n ≠ m",
    "nncc-undecided": "cross-curvature undecided: the check could not reach a verdict",
    "target_c_convex-holds": "the target domain Y is c-convex with respect to X",
    "target_c_convex-fails": "the target domain Y is not c-convex: a c-segment leaves it",
    "target_c_convex-not-applicable": "c-convexity of Y not applicable: n ≠ m, or c-segments are not defined",
    "target_c_convex-undecided": "c-convexity of Y undecided: the check could not reach a verdict",
    "source_c_convex-holds": "the source domain X is c-convex with respect to Y",
    "source_c_convex-fails": "the source domain X is not c-convex: a c-segment leaves it",
    "source_c_convex-not-applicable": "c-convexity of X not applicable: n ≠ m, or c-segments are not defined",
    "source_c_convex-undecided": "c-convexity of X undecided: the check could not reach a verdict",
    "loeper-holds": "Loeper's maximum principle holds: f(t) ≤ max(f(0), f(1)) on every c-segment",
    "loeper-fails": "Loeper's maximum principle fails: f rises above both ends of a c-segment",
    "loeper-not-applicable": "Loeper's maximum principle not applicable: n ≠ m, or c-segments are not defined",
    "loeper-undecided": "Loeper's maximum principle undecided: the check could not reach a verdict",
    "index_form-holds": "index form holds: the kernel of D²_xy cᵀ does not depend on y",
    "index_form-fails": "index form fails: the kernel of D²_xy cᵀ moves with y",
    "index_form-not-applicable": "index form not applicable: it is asked only when n > m",
    "index_form-undecided": "index form undecided: the check could not reach a verdict",
    "nested-holds": "the model is nested: the sets X≤(y, k(y)) grow strictly with y",
    "nested-fails": "the model is not nested: two level curves cross",
    "nested-not-applicable": "nestedness not applicable: it needs m = 1 and both distributions",
    "nested-undecided": "nestedness undecided: the check could not reach a verdict",
    "z_monotone-holds": "G decreases in z: G_z < 0 on the domain",
    "z_monotone-fails": "G does not decrease in z: G_z > 0 at a certified point",
    "z_monotone-not-applicable": "monotonicity in z not applicable: it is stated for a generating function",
    "z_monotone-undecided": "monotonicity in z undecided: the check could not reach a verdict",
    "g_twist-holds": "generating twist holds: (y, z) ↦ (G_x, G) is one-to-one at every x",
    "g_twist-fails": "generating twist fails: two points (y, z) with the same (G_x, G) at one x",
    "g_twist-not-applicable": "generating twist not applicable: it is stated for a generating function",
    "g_twist-undecided": "generating twist undecided: the check could not reach a verdict",
    "g_dual_twist-holds": "generating dual twist holds: x ↦ G_y / G_z is one-to-one at every (y, z)",
    "g_dual_twist-fails": "generating dual twist fails: two points x with the same G_y / G_z at one (y, z)",
    "g_dual_twist-not-applicable": "generating dual twist not applicable: it is stated for a generating function",
    "g_dual_twist-undecided": "generating dual twist undecided: the check could not reach a verdict",
    "g_nondegenerate-holds": "extended non-degeneracy holds: det(G_xy − G_xz ⊗ G_y / G_z) ≠ 0 on the domain",
    "g_nondegenerate-fails": "extended non-degeneracy fails: the extended mixed Hessian is singular somewhere",
    "g_nondegenerate-not-applicable": "extended non-degeneracy not applicable: it is stated for a generating function",
    "g_nondegenerate-undecided": "extended non-degeneracy undecided: the check could not reach a verdict",
    "g_mtw-strong": "G3s holds: the generating MTW form is positive on orthogonal pairs",
    "g_mtw-weak": "G3w holds, G3s not seen: the generating MTW form is non-negative on orthogonal pairs",
    "g_mtw-fails": "G3w fails: the generating MTW form is negative on an orthogonal pair",
    "g_mtw-not-applicable": "G3 not applicable: it needs a generating function with n ≥ 2",
    "g_mtw-undecided": "G3 undecided: the check could not reach a verdict",
    UNLISTED_CODE: "an outcome with no code of its own (a defect of costcheck: please report it)",
}


def code_for(condition: str, verdict: str) -> str:
    return CODES.get((condition, verdict), UNLISTED_CODE)


def docs_links(condition: str, code: str) -> dict[str, str]:
    """Where the condition and the code are explained: repository paths with anchors (stable)."""
    return {"condition": f"docs/conditions.md#{condition}", "code": f"docs/codes.md#{code.lower()}"}


@dataclass(frozen=True)
class Evidence:
    """How a verdict was established, in numbers and in plain words."""

    kind: str
    summary: str
    samples: int | None = None
    resolution: float | None = None
    details: Mapping = field(default_factory=dict)

    def __post_init__(self):
        if self.kind not in EVIDENCE_KINDS:
            raise ValueError(f"unknown evidence kind {self.kind!r}")

    def to_json(self) -> dict:
        out = {"kind": self.kind, "summary": self.summary}
        if self.samples is not None:
            out["samples"] = self.samples
        if self.resolution is not None:
            out["resolution"] = self.resolution
        out.update(dict(self.details))
        return out

    @classmethod
    def from_json(cls, data: Mapping) -> "Evidence":
        """The inverse of :meth:`to_json`: every key besides the four named ones is a detail,
        carried through untouched (checks and certificates add their own)."""
        details = {k: v for k, v in data.items() if k not in ("kind", "summary", "samples", "resolution")}
        return cls(data["kind"], data["summary"], data.get("samples"), data.get("resolution"), details)


@dataclass(frozen=True)
class Witness:
    """A point a reader can re-check: ``x``, ``y`` and the condition's extra vectors.

    ``vectors`` maps a name (``y_prime``, ``xi``, ``eta``, ``segment_end`` …) to its
    coordinates; ``value`` is the condition's quantity there and ``error_bound`` a bound
    on its error from the confirming evaluation described by ``confirmation``.
    """

    x: Sequence[float]
    y: Sequence[float]
    value: float
    error_bound: float | None = None
    confirmation: str = ""
    vectors: Mapping[str, Sequence[float]] = field(default_factory=dict)
    #: for each entry of ``vectors``, which side's coordinate names label it ("x" or "y")
    vector_sides: Mapping[str, str] = field(default_factory=dict)
    #: a certified lower bound on how far D²_xy c is from singular at the witness (set by
    #: :mod:`costcheck.certify` for conditions stated only where D²_xy c is invertible)
    nondegeneracy: Mapping = field(default_factory=dict)

    def to_json(self, x_names: Sequence[str], y_names: Sequence[str]) -> dict:
        named = lambda names, values: {n: float(v) for n, v in zip(names, values)}  # noqa: E731
        out = {"x": named(x_names, self.x), "y": named(y_names, self.y)}
        for name, vec in self.vectors.items():
            side = self.vector_sides.get(name, "x")
            out[name] = named(x_names if side == "x" else y_names, vec)
        out["value"] = float(self.value)
        out["error_bound"] = None if self.error_bound is None else float(self.error_bound)
        out["confirmation"] = self.confirmation
        if self.nondegeneracy:
            out["nondegeneracy"] = dict(self.nondegeneracy)
        return out

    @classmethod
    def from_json(cls, data: Mapping, x_names: Sequence[str], y_names: Sequence[str]) -> "Witness":
        """The inverse of :meth:`to_json`; a vector's side is the side whose names label it."""
        def coords(named: Mapping, names: Sequence[str]) -> tuple[float, ...]:
            if list(named) != list(names):
                raise ValueError(f"coordinates {list(named)} are not labelled {list(names)}")
            return tuple(float(named[n]) for n in names)

        fixed = ("x", "y", "value", "error_bound", "confirmation", "nondegeneracy")
        vectors, sides = {}, {}
        for name, named in data.items():
            if name in fixed:
                continue
            side = "x" if list(named) == list(x_names) else "y"
            vectors[name] = coords(named, x_names if side == "x" else y_names)
            if side == "y":
                sides[name] = "y"
        return cls(coords(data["x"], x_names), coords(data["y"], y_names), _number(data["value"]),
                   _number(data.get("error_bound")), data.get("confirmation", ""), vectors, sides,
                   dict(data.get("nondegeneracy") or {}))


@dataclass(frozen=True)
class Verdict:
    """One condition's outcome for one cost."""

    condition: str
    verdict: str
    evidence: Evidence
    value: float | None = None
    value_meaning: str = ""
    witness: Witness | None = None
    notes: tuple[str, ...] = ()
    #: where the verdict holds when that is less than the declared domain: ``{"part": ..., "text":
    #: "on the non-degenerate part", ...}``; empty when it was decided on the whole domain
    scope: Mapping = field(default_factory=dict)

    @property
    def words(self) -> str:
        """The verdict word with its scope, as a reader should see it ("fails on the non-degenerate part")."""
        return f"{self.verdict} {self.scope['text']}" if self.scope.get("text") else self.verdict

    @property
    def code(self) -> str:
        return code_for(self.condition, self.verdict)

    def to_json(self, x_names: Sequence[str], y_names: Sequence[str]) -> dict:
        return {
            "verdict": self.verdict,
            "code": self.code,
            "code_meaning": CODE_MEANINGS[self.code],
            "docs": docs_links(self.condition, self.code),
            "evidence": self.evidence.to_json(),
            "value": None if self.value is None else float(self.value),
            "value_meaning": self.value_meaning,
            "witness": None if self.witness is None else self.witness.to_json(x_names, y_names),
            "notes": list(self.notes),
            **({"scope": dict(self.scope)} if self.scope else {}),
        }

    @classmethod
    def from_json(cls, condition: str, data: Mapping, x_names: Sequence[str], y_names: Sequence[str]) -> "Verdict":
        """The inverse of :meth:`to_json` (which does not repeat the condition's name).

        Raises ``KeyError``/``ValueError``/``TypeError`` on a document of the wrong shape,
        and ``ValueError`` when its stored code disagrees with :data:`CODES`.
        """
        witness = data.get("witness")
        verdict = cls(condition, data["verdict"], Evidence.from_json(data["evidence"]), _number(data.get("value")),
                      data.get("value_meaning", ""),
                      None if witness is None else Witness.from_json(witness, x_names, y_names),
                      tuple(data.get("notes", ())), dict(data.get("scope") or {}))
        if "code" in data and data["code"] != verdict.code:
            raise ValueError(f"stored code {data['code']} is not {verdict.code} for {condition}: {verdict.verdict}")
        return verdict


def _number(value) -> float | None:
    """A JSON number back as a float (``None`` stays ``None``)."""
    return None if value is None else float(value)


def not_applicable(condition: str, reason: str) -> Verdict:
    return Verdict(condition, "not-applicable", Evidence("not_applicable", reason))


def undecided(condition: str, reason: str, **details) -> Verdict:
    return Verdict(condition, "undecided", Evidence("undecided", reason, details=details))
