"""Alternates: rank every library part that could sit at one designator of a design.

Each candidate is put in place (``substitution.apply``) and the whole design is evaluated
again at every corner under the policy, so the candidate's own electrical values (R_DS(on),
forward drop, ESR, capacitance, inductance) set the stresses it sees. Candidates are ranked
by their worst ratio (stress / allowed) over the checks of that designator, best first; a
candidate the design cannot use at all (wrong layout, cannot regulate) is ranked last with
the reason.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import schema
from .errors import InputError
from .substitution import Substitution, apply

# Statuses that reject a candidate (they set a non-zero exit status for a check).
REJECTING = ("fail", "unrated", "not-computed")
_RANK = {"pass": 0, "info": 0, "waived": 0, "marginal": 1, "unrated": 2, "not-computed": 2,
         "fail": 3, "refused": 4}


@dataclass
class Candidate:
    part: str
    description: str
    worst_ratio: float | None
    status: str
    rejected_by: list[str] = field(default_factory=list)
    needed: list[dict] = field(default_factory=list)
    reason: str = ""

    def as_dict(self) -> dict:
        return {"part": self.part, "worst_ratio": self.worst_ratio, "status": self.status,
                "rejected_by": list(self.rejected_by), "description": self.description,
                "needed": list(self.needed), "reason": self.reason}


def _refs_to_swap(design, ref: str) -> list[str]:
    """``ref`` alone, or its whole bank where a role is one bank of identical parts."""
    from .topologies import layout_for

    comp = next(c for c in design.components if ref in c.refs)
    spec = layout_for(design).roles.get(comp.role)
    if spec is not None and spec.count is None:
        return list(comp.refs)
    return [ref]


def evaluate_candidate(design, ref: str, part, library, policy) -> Candidate:
    """Check ``part`` at ``ref`` (its bank where the role is a bank) at every corner."""
    from .checks import run_checks
    from .engine import run

    refs = _refs_to_swap(design, ref)
    subs = [Substitution(r, part.id, "alternates", "part") for r in refs]
    try:
        try:
            trial, _ = apply(design, subs, library)
        except InputError:
            if len(refs) > 1:
                raise
            comp = next(c for c in design.components if ref in c.refs)
            subs = [Substitution(r, part.id, "alternates", "part") for r in comp.refs]
            trial, _ = apply(design, subs, library)
        with np.errstate(all="ignore"):
            checks = run_checks(run(trial), policy)
    except InputError as exc:
        return Candidate(part.id, part.description, None, "refused", reason=exc.detail)
    mine = [c for c in checks if c.ref == ref]
    ratios = [c.ratio for c in mine if c.ratio is not None and np.isfinite(c.ratio)]
    status = max((c.status for c in mine), key=lambda s: _RANK.get(s, 0), default="info")
    rejected = sorted({c.quantity for c in mine if c.status in REJECTING})
    needed = []
    for c in sorted(mine, key=lambda c: -(c.ratio or 0.0))[:3]:
        value = getattr(c, "rating_needed", None)
        if value is not None and np.isfinite(value):
            needed.append({"quantity": c.quantity, "rating_key": c.rating_key,
                           "rating_needed": float(value), "unit": c.unit})
    return Candidate(part.id, part.description, max(ratios) if ratios else None, status,
                     rejected, needed)


def rank_alternates(design, ref: str, library, policy) -> dict:
    """Every part of the kinds ``ref``'s role takes, checked in place and ranked.

    Returns
    -------
    dict
        ``{"design", "ref", "role", "current", "policy", "alternates": [Candidate dict…]}``,
        alternates sorted by worst ratio (lowest first), refused and unratable last.

    Raises
    ------
    InputError
        ``ref`` is not in the design.
    """
    comp = next((c for c in design.components if ref in c.refs), None)
    if comp is None:
        known = ", ".join(r for c in design.components for r in c.refs)
        raise InputError(design.path, None, f"ref '{ref}' is not in the design (refs: {known})")
    kinds = schema.ROLE_KINDS[comp.role]
    candidates = [evaluate_candidate(design, ref, part, library, policy)
                  for part in library.all_parts() if part.kind in kinds]

    def order(c: Candidate):
        unusable = c.status == "refused" or c.worst_ratio is None
        return (unusable, c.worst_ratio if c.worst_ratio is not None else np.inf, c.part)

    candidates.sort(key=order)
    return {"design": design.name, "ref": ref, "role": comp.role, "current": comp.part.id,
            "policy": policy.name, "alternates": [c.as_dict() for c in candidates]}


def alternates_json(report: dict) -> list[dict]:
    """What alternates.json holds (CONTRACT.md): ``[{part, worst_ratio, status,
    rejected_by}, …]`` best first, plus the reason a refused part could not be used."""
    return [{"part": a["part"], "worst_ratio": a["worst_ratio"], "status": a["status"],
             "rejected_by": a["rejected_by"], "reason": a["reason"] or None}
            for a in report["alternates"]]
