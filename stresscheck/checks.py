"""Checks: each stress under the policy -> worst corner, allowed, ratio and status.

Allowed may differ between corners (rules limited to a stress kind: steady, overload,
transient), so the governing corner is the one with the highest ratio = stress/allowed;
``stress`` is the value at that corner. For a quantity with no rule (status ``info``) the
governing corner is the one with the highest stress.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from . import schema

ROLE_ORDER = {role: i for i, role in enumerate(schema.ROLES)}


@dataclass
class Check:
    ref: str
    role: str
    part: str
    kind: str
    quantity: str
    unit: str
    stress: float | None
    corner: str | None
    rating: float | None
    rating_key: str | None
    allowed: float | None
    ratio: float | None
    status: str
    rule: str | None
    rule_source: str | None
    stress_kind: str | None
    basis: str = "computed"
    note: str = ""

    def as_dict(self) -> dict:
        return {k: getattr(self, k) for k in (
            "ref", "role", "part", "kind", "quantity", "unit", "stress", "corner", "rating",
            "rating_key", "allowed", "ratio", "status", "rule", "rule_source", "stress_kind",
            "basis", "note")}


def _f(x) -> float | None:
    return None if x is None or not np.isfinite(x) else float(x)


def check_stress(stress, policy, corners) -> Check:
    comp, part, q = stress.component, stress.component.part, stress.quantity
    base = dict(ref=stress.ref, role=comp.role, part=part.id, kind=part.kind, quantity=q,
                unit=schema.QUANTITIES[q].unit)
    idx = np.flatnonzero(stress.applicable)
    values = stress.values[idx]
    kinds = corners.kind[idx]
    rules = policy.rules_for(part, q)

    def empty(status, note, rule=None, stress_value=None, corner=None):
        return Check(**base, stress=stress_value, corner=corner, rating=None,
                     rating_key=rule.rating if rule else None, allowed=None, ratio=None,
                     status=status, rule=rule.id if rule else None,
                     rule_source=rule.source if rule else None,
                     stress_kind=None, note=note)

    if np.isnan(values).any():
        bad = idx[np.isnan(values)][0]
        return empty("not-computed", stress.reason or "not computed",
                     rules[0] if rules else None, corner=corners.ids[bad])
    if np.isposinf(values).any():
        bad = idx[np.isposinf(values)][0]
        return empty("fail", "thermal runaway: the electro-thermal loop does not converge",
                     rules[0] if rules else None, corner=corners.ids[bad])
    worst = int(np.argmax(values))
    if not rules:
        return empty("info", "no rule of the policy covers this quantity", None,
                     _f(values[worst]), corners.ids[idx[worst]])
    missing = [r for r in rules if r.rating is not None and r.rating not in part.ratings]
    if missing:
        r = missing[0]
        return empty("unrated", f"part sheet gives no '{r.rating}' rating", r,
                     _f(values[worst]), corners.ids[idx[worst]])

    # allowed per corner kind: the strictest rule that applies to that kind
    allowed = np.full(values.shape, np.nan)
    governing: dict[str, object] = {}
    for kind in np.unique(kinds):
        applying = [r for r in rules if r.stress_kinds is None or kind in r.stress_kinds]
        if not applying:
            continue
        best = min(applying, key=lambda r: r.allowed(part))
        governing[kind] = best
        allowed[kinds == kind] = best.allowed(part)
    covered = ~np.isnan(allowed)
    if not covered.any():
        return empty("info", "no rule for these stress kinds", None,
                     _f(values[worst]), corners.ids[idx[worst]])
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(covered & (allowed > 0), values / np.where(allowed > 0, allowed, 1),
                         np.where(covered, np.inf, -np.inf))
    g = int(np.argmax(ratio))
    rule = governing[kinds[g]]
    r_val = ratio[g]
    if not np.isfinite(r_val) or r_val > 1:
        status = "fail"
    elif r_val > policy.marginal_above:
        status = "marginal"
    else:
        status = "pass"
    note = "" if np.isfinite(r_val) else "allowed value is zero or negative"
    return Check(**base, stress=_f(values[g]), corner=corners.ids[idx[g]],
                 rating=_f(part.ratings.get(rule.rating)) if rule.rating else None,
                 rating_key=rule.rating, allowed=_f(allowed[g]), ratio=_f(r_val),
                 status=status, rule=rule.id, rule_source=rule.source,
                 stress_kind=str(kinds[g]), note=note)


def run_checks(evaluation, policy) -> list[Check]:
    runaway = runaway_by_ref(evaluation)
    return [_check_converged(s, policy, evaluation.corners, runaway)
            for s in evaluation.stresses]


def runaway_by_ref(evaluation) -> dict[str, np.ndarray]:
    """Corners where each device's electro-thermal loop ran away or did not converge,
    ``{ref: (N,) bool}``, from the engine's per-position ``runaway`` flags (keyed by
    ``(role, index)`` or by ref)."""
    from .devices import positions
    runaway = getattr(evaluation, "runaway", None) or {}
    refs = {p.key: p.refs for p in positions(evaluation.design)} if runaway else {}
    out: dict[str, np.ndarray] = {}
    for key, mask in runaway.items():
        for ref in ([key] if isinstance(key, str) else refs[key]):
            out[ref] = np.asarray(mask, bool)
    return out


def _check_converged(stress, policy, corners, runaway: dict[str, np.ndarray]) -> Check:
    """The check of one stress, with the corners of an unconverged electro-thermal loop
    taken out.

    Where some device's loop ran away, the whole operating point there (duty, currents,
    drops, losses, hence every stress of every ref, voltages included) comes from an
    unconverged loop. The runaway device's own t_j stays the fail it is. Any other row
    counting such a corner is not-computed with the reason, unless the corners that did
    converge already make it fail (more corners can only raise the worst ratio).
    """
    full = check_stress(stress, policy, corners)
    ran = np.zeros(corners.size, bool)
    for mask in runaway.values():
        ran |= mask
    hit = ran & stress.applicable
    if not hit.any() or (stress.quantity == "t_j" and stress.ref in runaway
                         and runaway[stress.ref][hit].any()):
        return full
    refs = sorted(ref for ref, mask in runaway.items() if (mask & hit).any())
    first = int(np.flatnonzero(hit)[0])
    why = (f"thermal runaway of {', '.join(refs)} (first at corner {corners.ids[first]}): "
           f"the electro-thermal loop did not converge at {int(hit.sum())} of the corners "
           "this row counts, so its values there are not computed")
    kept = replace(stress, applicable=stress.applicable & ~ran)
    if kept.applicable.any():
        partial = check_stress(kept, policy, corners)
        if partial.status == "fail":
            return replace(partial, note="; ".join(n for n in (partial.note, why) if n))
    return replace(full, stress=None, corner=corners.ids[first], rating=None,
                   allowed=None, ratio=None, status="not-computed", stress_kind=None,
                   note=why)


def summarise(checks: list[Check]) -> dict[str, int]:
    summary = {s: 0 for s in ("pass", "marginal", "fail", "unrated", "info", "not-computed")}
    for c in checks:
        summary[c.status] = summary.get(c.status, 0) + 1
    return summary


def uncovered(checks: list[Check]) -> list[str]:
    return sorted({f"{c.kind}.{c.quantity}" for c in checks if c.status == "info"})


def exit_status(checks: list[Check]) -> int:
    """0 nothing fails; 1 a check fails, is unrated or could not be computed."""
    bad = {"fail", "unrated", "not-computed"}
    return 1 if any(c.status in bad for c in checks) else 0
