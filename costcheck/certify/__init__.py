"""Certified verdicts: proofs over the whole domain, and refutations with enclosures.

The last step of a condition check (sampler → search → refinement → **certificate**):

- :func:`certify_refutation` (always run) turns a failure witness into a rigorous refutation
  with a ball enclosure, or marks it as not certified;
- :func:`strengthen` (by default, within a few seconds per condition; ``--prove`` allows more,
  ``--quick`` skips it) tries to upgrade a sampled "holds" to **proved**: by
  branch and bound in ball arithmetic (:mod:`.proofs`) or, for a tensor that vanishes, by
  identity (:mod:`.identity`).  A failed attempt leaves the sampled verdict and reports the
  coverage reached.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from ..defaults import DEFAULT_PROOF_CELLS, DEFAULT_PROOF_SECONDS
from ..model.verdict import Evidence, Verdict
from . import generating, identity, proofs
from .branch_bound import Budget
from .preparation import ProofPreparation
from .witnesses import certify_refutation

__all__ = ["ProofOptions", "certify_refutation", "strengthen"]


@dataclass(frozen=True)
class ProofOptions:
    #: seconds and cells allowed for each condition's branch and bound
    seconds: float = DEFAULT_PROOF_SECONDS
    cells: int = DEFAULT_PROOF_CELLS
    #: seconds sympy may spend showing the MTW tensor is identically zero
    identity_seconds: float = 10.0

    def budget(self) -> Budget:
        return Budget(seconds=self.seconds, cells=self.cells)

    def to_json(self) -> dict:
        return dataclasses.asdict(self)


_WHAT = {
    "nondegenerate": "det D²_xy c is enclosed away from 0 on every cell of a cover of the domain",
    "twist": "a sufficient condition for twist (c_xy ≠ 0 for n = 1; a definite symmetric part of D²_xy c on "
             "convex y-slices for n ≥ 2) is enclosed on every cell of a cover of the domain",
    "mtw": "S(ξ, η) on orthogonal unit pairs is enclosed above a positive κ on every cell of a cover of the domain",
    "nncc": "A(ξ) = Σ T_ijkl ξ_i ξ_j is enclosed positive definite for all unit ξ on every cell of a cover of "
            "the domain",
}


def _attempt(cost, verdict: Verdict, options: ProofOptions, derivs, prep: ProofPreparation | None = None):
    """``(outcome or None, method, reason)`` for the proof that fits this verdict; ``prep`` shares the proof
    spaces between the conditions of one cost."""
    budget = options.budget()
    condition, verdict_word = verdict.condition, verdict.verdict
    if condition == "nondegenerate" and verdict_word == "holds":
        return (*proofs.nondegenerate(cost, budget, prep), "branch and bound")
    if condition == "twist" and verdict_word == "holds":
        return (*proofs.twist(cost, budget, prep), "branch and bound")
    if condition == "mtw" and verdict_word == "strong":
        return (*proofs.mtw_strong(cost, budget, prep), "branch and bound")
    if (condition == "mtw" and verdict_word == "weak") or (condition == "nncc" and verdict_word == "holds"):
        ok, text = identity.tensor_vanishes(cost, options.identity_seconds, derivs)
        if ok:
            return "identity", text, "identity"
        if condition == "nncc":
            outcome, why = proofs.nncc_positive(cost, budget, prep, sampled_margin=_sampled_margin(verdict))
            return outcome, why or text, "branch and bound"
        return None, text, "identity"
    return None, "", ""


def _sampled_margin(verdict: Verdict) -> tuple[float, float] | None:
    """``(smallest scale-free margin found, the check's tolerance)`` of a sampled verdict, when it has them."""
    tolerance = verdict.evidence.details.get("tolerance")
    if verdict.value is None or tolerance is None:
        return None
    return float(verdict.value), float(tolerance)


#: where a generating function's proof ran, when it is a reduced cost (certify.reduced)
_OF_C = " on the reduced cost c (G = −c − z, G_z ≡ −1 exactly)"


def _names(cost):
    return list(cost.x_names) + list(cost.y_names)


def strengthen(ctx, verdict: Verdict, options: ProofOptions) -> Verdict:
    """``verdict`` upgraded to proved evidence when a certificate is found; otherwise annotated."""
    if verdict.evidence.kind != "sampled" or verdict.verdict in ("fails", "undecided", "not-applicable"):
        return verdict
    if verdict.condition in generating.CONDITIONS:
        outcome, reason, method, lead, condition = generating.attempt(
            ctx, verdict.condition, verdict.verdict, options.budget(), options.identity_seconds)
    else:
        derivs = ctx.derivs if ctx.cost.n == ctx.cost.m and ctx.order >= 4 else None
        outcome, reason, method = _attempt(ctx.cost, verdict, options, derivs, ctx.proof_preparation)
        lead, condition = "", verdict.condition
    old = verdict.evidence
    if outcome == "identity" and condition == "z_monotone":
        summary = f"proved by identity: {reason}, so G decreases in z on the whole domain, wherever G is defined"
        details = {**old.details, "proof": {"method": "identity", "text": reason}}
        return dataclasses.replace(verdict, evidence=Evidence("proved", summary, old.samples, old.resolution, details))
    if outcome == "identity":
        summary = (f"{lead}proved by identity: {reason}, so S(ξ, η) = 0 for all ξ, η wherever M is invertible "
                   f"({'A3w holds, A3s fails' if condition == 'mtw' else 'NNCC holds with equality'})")
        details = {**old.details, "proof": {"method": "identity", "text": reason}}
        return dataclasses.replace(verdict, evidence=Evidence("proved", summary, old.samples, old.resolution, details))
    if outcome is None:
        if not reason:
            return verdict
        details = {**old.details, "proof_attempt": {"method": method or None, "skipped": reason}}
        return dataclasses.replace(verdict, evidence=dataclasses.replace(
            old, summary=f"{old.summary}; no proof attempted{_OF_C if lead else ''}: {reason}", details=details))
    proof = {"method": method, **outcome.to_json(_names(ctx.cost)), "budget": options.to_json()}
    if outcome.proved:
        # the time taken stays in the details: the sentence is the same on every run of a seed
        summary = (f"{lead}proved on the whole domain: {outcome.what or _WHAT[condition]} "
                   f"({outcome.proved_cells} cells proved, {outcome.outside_cells} outside the domain, over "
                   f"{outcome.space}; ball arithmetic, arb); certified lower bound {outcome.bound:.3g}")
        return dataclasses.replace(verdict, evidence=Evidence("proved", summary, old.samples, old.resolution,
                                                              {**old.details, "proof": proof}))
    summary = (f"{old.summary}; proof attempted{_OF_C if lead else ''}: {outcome.coverage:.1%} of the domain's "
               "volume proved "
               f"({outcome.cells} cells, stopped by "
               f"{outcome.exhausted or 'cells too small to decide'}); the rest is undecided, so the verdict "
               "stays sampled")
    return dataclasses.replace(verdict, evidence=dataclasses.replace(
        old, summary=summary, details={**old.details, "proof_attempt": proof}))
