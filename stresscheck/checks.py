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
    rating_needed: float | None = None  # [SI of the quantity] see _rating_needed
    waiver: dict | None = None  # {reason, approved_by, date, expires} when waived
    waived_status: str | None = None  # the status a waiver replaced
    # which method set ``stress``: "corners" or "monte-carlo" (a sample beyond the corners)
    method: str = "corners"
    # filled by sampling.py and sensitivity.py when they run; absent from as_dict if None
    monte_carlo: dict | None = None
    rss: dict | None = None
    sensitivity: list | None = None
    measured: dict | None = None  # {value, instrument, probe_point, date, mode}
    margin_k: float | None = None  # temperature checks: allowed − stress [K]
    # capped quantities (life): True when ``stress`` is the model's cap (schema.LIFE_CAP),
    # the computed value being larger; None on every other quantity (left out of as_dict)
    capped: bool | None = None

    def as_dict(self) -> dict:
        out = {k: getattr(self, k) for k in (
            "ref", "role", "part", "kind", "quantity", "unit", "stress", "corner", "rating",
            "rating_key", "allowed", "ratio", "status", "rule", "rule_source", "stress_kind",
            "basis", "note", "rating_needed", "method")}
        if self.waiver is not None:
            out["waiver"] = dict(self.waiver)
            out["waived_status"] = self.waived_status
        out.update({k: getattr(self, k) for k in ("monte_carlo", "rss", "sensitivity")
                    if getattr(self, k) is not None})
        if self.measured is not None:
            out["measured"] = self.measured
        if self.margin_k is not None:
            out["margin_k"] = self.margin_k
        if self.capped is not None:
            out["capped"] = self.capped
        return out


TEMPERATURE_QUANTITIES = ("t_j", "t_hotspot")
# Quantities whose model is credible only up to a cap [SI]: a value at the cap is
# reported with ``capped = True`` and shown as "> 15 years".
CAPS = {"life": schema.LIFE_CAP}


def is_capped(quantity: str, value) -> bool | None:
    """True where ``value`` [SI] of ``quantity`` is at its cap, False below it, None
    for a quantity without a cap or an unknown value."""
    cap = CAPS.get(quantity)
    if cap is None or value is None or not np.isfinite(value):
        return None
    return bool(value >= cap * (1 - 1e-9))


class _RatedAt:
    """A part whose ratings hold per corner where the stress carries them (a current
    rating derated with the case temperature), for ``Rule.allowed``."""

    def __init__(self, part, ratings: dict, idx):
        self.__dict__.update(vars(part))
        self.ratings = {**part.ratings, **{k: np.asarray(v, float)[idx]
                                           for k, v in ratings.items()}}


def _f(x) -> float | None:
    return None if x is None or not np.isfinite(x) else float(x)


def check_stress(stress, policy, corners, temperatures=None) -> Check:
    """One stress of one ref under ``policy``.

    ``temperatures`` maps a temperature basis ("ambient", "device") to an (N,) array
    [degC] over all corners; needed only by ``factor_vs_temperature`` rules.
    A capped quantity (``CAPS``) gets ``capped``.
    """
    check = _check_stress(stress, policy, corners, temperatures)
    if check.quantity in CAPS:
        check.capped = bool(is_capped(check.quantity, check.stress))
    return check


def _check_stress(stress, policy, corners, temperatures=None) -> Check:
    comp, part, q = stress.component, stress.component.part, stress.quantity
    base = dict(ref=stress.ref, role=comp.role, part=part.id, kind=part.kind, quantity=q,
                unit=schema.QUANTITIES[q].unit)
    idx = np.flatnonzero(stress.applicable)
    values = stress.values[idx]
    kinds = corners.kind[idx]
    rules = policy.rules_for(part, q)

    extra_note = getattr(stress, "note", "")  # what the value includes or leaves out

    def with_note(note):
        return "; ".join(t for t in (note, extra_note) if t)

    def empty(status, note, rule=None, stress_value=None, corner=None, needed=None):
        return Check(**base, stress=stress_value, corner=corner, rating=None,
                     rating_key=rule.rating if rule else None, allowed=None, ratio=None,
                     status=status, rule=rule.id if rule else None,
                     rule_source=rule.source if rule else None,
                     stress_kind=None, note=with_note(note), rating_needed=needed)

    if np.isnan(values).any():
        bad = idx[np.isnan(values)][0]
        return empty("not-computed", stress.reason or "not computed",
                     rules[0] if rules else None, corner=corners.ids[bad])
    if np.isposinf(values).any():
        bad = idx[np.isposinf(values)][0]
        return empty("fail", "thermal runaway: the electro-thermal loop does not converge",
                     rules[0] if rules else None, corner=corners.ids[bad])
    more = q in schema.MORE_IS_BETTER  # the worst corner has the lowest value
    worst = int(np.argmin(values) if more else np.argmax(values))
    if not rules:
        return empty("info", "no rule of the policy covers this quantity", None,
                     _f(values[worst]), corners.ids[idx[worst]])
    if more:
        return _check_minimum(base, stress, rules, values, idx, kinds, corners, policy,
                              empty, with_note)

    def temps(rule):
        if rule.curve is None:
            return None
        arr = (temperatures or {}).get(rule.temperature)
        if arr is None:
            return np.full(values.shape, np.nan)
        return np.asarray(arr, dtype=float)[idx]

    def applies(rule):
        if rule.stress_kinds is None:
            return np.ones(values.shape, bool)
        return np.isin(kinds, rule.stress_kinds)

    missing = [r for r in rules if r.rating is not None and r.rating not in part.ratings]
    if missing and getattr(stress, "zero_needs_no_rating", False) and not values.any():
        return Check(**base, stress=0.0, corner=corners.ids[idx[worst]], rating=None,
                     rating_key=missing[0].rating_key, allowed=None, ratio=0.0,
                     status="pass", rule=missing[0].id, rule_source=missing[0].source,
                     stress_kind=str(kinds[worst]),
                     note=with_note(f"zero at every corner: no '{missing[0].rating}' "
                                    "rating needed"), rating_needed=0.0)
    if missing:
        r = missing[0]
        needed, _ = _rating_needed(rules, r.rating_key, values, applies, temps)
        return empty("unrated", f"part sheet gives no '{r.rating}' rating", r,
                     _f(values[worst]), corners.ids[idx[worst]], needed)
    for r in rules:
        t = temps(r)
        if t is not None and (np.isnan(t) & applies(r)).any():
            bad = idx[np.isnan(t) & applies(r)][0]
            return empty("not-computed", f"rule '{r.id}' reads the {r.temperature} "
                         "temperature, which is not computed for this part", r,
                         corner=corners.ids[bad])

    # allowed per corner: the strictest rule that applies there (first one on a tie)
    allowed = np.full(values.shape, np.nan)
    governing = np.full(values.shape, -1)
    derated = {k: v for k, v in (getattr(stress, "ratings", None) or {}).items()}
    rated = _RatedAt(part, derated, idx) if derated else part
    for j, r in enumerate(rules):
        mask = applies(r)
        # a per-corner rating (derated) where the rule is a plain factor or margin form
        use = rated if (r.rating in derated and (r.limit is None or r.curve is not None)) \
            else part
        a = np.broadcast_to(np.asarray(r.allowed(use, temps(r)), dtype=float),
                            values.shape)
        take = mask & (np.isnan(allowed) | (a < allowed))
        allowed = np.where(take, a, allowed)
        governing = np.where(take, j, governing)
    # a rating that depends on the corner's temperature (ratings.py): scaled per corner
    scales = getattr(stress, "rating_scale", None) or {}
    for j, r in enumerate(rules):
        if r.rating_key in scales:
            sel = governing == j
            allowed = np.where(sel, allowed * scales[r.rating_key][idx], allowed)
    covered = ~np.isnan(allowed)
    if not covered.any():
        return empty("info", "no rule for these stress kinds", None,
                     _f(values[worst]), corners.ids[idx[worst]])
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(covered & (allowed > 0), values / np.where(allowed > 0, allowed, 1),
                         np.where(covered, np.inf, -np.inf))
    g = int(np.argmax(ratio))
    rule = rules[int(governing[g])]
    r_val = ratio[g]
    status = status_of(r_val, policy)
    notes = []  # the stress's own note (e.g. a leakage spike) is added by with_note
    if not np.isfinite(r_val):
        notes.append("allowed value is zero or negative")
        if rule.curve is not None:
            notes.append(f"the {rule.temperature} temperature is above the last point "
                         f"of rule '{rule.id}'")
    needed, why = _rating_needed(rules, rule.rating_key, values, applies, temps)
    if why:
        notes.append(why)
    rating = part.ratings.get(rule.rating_key) if rule.rating_key else None
    if rule.rating_key in scales and rating is not None:
        rating = rating * scales[rule.rating_key][idx[g]]
        t_rating = stress.rating_temperature[idx[g]]
        notes.append(f"{rule.rating_key} at {t_rating:.4g} °C: {rating:.4g} (the sheet's "
                     "rating at the corner)")
    if rule.rating in derated and (rule.limit is None or rule.curve is not None):
        rating = derated[rule.rating][idx[g]]
        notes.append(f"{rule.rating} derated with the case temperature at this corner")
    margin = _f(allowed[g] - values[g]) if q in TEMPERATURE_QUANTITIES else None
    return Check(**base, stress=_f(values[g]), corner=corners.ids[idx[g]],
                 rating=_f(rating) if rating is not None else None,
                 rating_key=rule.rating_key,
                 allowed=_f(allowed[g]), ratio=_f(r_val),
                 status=status, rule=rule.id, rule_source=rule.source,
                 stress_kind=str(kinds[g]), note=with_note("; ".join(notes)),
                 rating_needed=needed, margin_k=margin)


def _check_minimum(base, stress, rules, values, idx, kinds, corners, policy, empty,
                   with_note):
    """A quantity where more is better (life) under ``minimum`` rules.

    allowed = the strictest (largest) minimum of the rules applying at each corner;
    ratio = allowed / value, so above 1 fails as everywhere. ``rating_needed`` is the
    rating (rated life at t_max) times the worst ratio: life is proportional to its
    rating below the cap, so that rating just passes (an upper bound where the life
    shown is the cap). No rating passes when the minimum is above the cap.
    """
    part, q = stress.component.part, stress.quantity
    worst = int(np.argmin(values))
    bound = [r for r in rules if r.minimum is not None]
    if not bound:
        keys = sorted({r.minimum_from for r in rules if r.minimum_from})
        return empty("info", f"the design gives no [operating] {', '.join(keys)}: {q} is "
                     f"information only (rule '{rules[0].id}' compares with it)", None,
                     _f(values[worst]), corners.ids[idx[worst]])
    allowed = np.full(values.shape, np.nan)
    governing = np.full(values.shape, -1)
    for j, r in enumerate(bound):
        mask = np.ones(values.shape, bool) if r.stress_kinds is None \
            else np.isin(kinds, r.stress_kinds)
        take = mask & (np.isnan(allowed) | (r.minimum > allowed))
        allowed = np.where(take, r.minimum, allowed)
        governing = np.where(take, j, governing)
    covered = ~np.isnan(allowed)
    if not covered.any():
        return empty("info", "no rule for these stress kinds", None,
                     _f(values[worst]), corners.ids[idx[worst]])
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(covered, np.where(values > 0, allowed / np.where(values > 0, values,
                                                                          1), np.inf),
                         -np.inf)
    g = int(np.argmax(ratio))
    rule = bound[int(governing[g])]
    rating = part.ratings.get(rule.rating_key) if rule.rating_key else None
    notes, needed = [], None
    cap = CAPS.get(q)
    if cap is not None and np.nanmax(allowed) > cap:
        notes.append(f"no {rule.rating_key} rating passes: the minimum is beyond the "
                     f"{schema.LIFE_CAP_YEARS}-year cap of the life model")
    elif rating is not None and np.isfinite(ratio[g]):
        needed = _f(rating * ratio[g])
    if is_capped(q, values[g]):
        notes.append(f"the computed {q} is beyond the model's credible range: shown as "
                     f"the {schema.LIFE_CAP_YEARS}-year cap")
    return Check(**base, stress=_f(values[g]), corner=corners.ids[idx[g]],
                 rating=_f(rating) if rating is not None else None,
                 rating_key=rule.rating_key, allowed=_f(allowed[g]), ratio=_f(ratio[g]),
                 status=status_of(ratio[g], policy), rule=rule.id,
                 rule_source=rule.source, stress_kind=str(kinds[g]),
                 note=with_note("; ".join(notes)), rating_needed=needed)


def _rating_needed(rules, key, values, applies, temps):
    """(rating_needed, note): the smallest ``key`` rating with which every rule on that
    rating passes at every corner it applies to [SI], by each rule's inverse (rules.py
    ``Rule.rating_needed``). None with a note where no rating can pass."""
    if key is None:
        return None, ""
    need = -np.inf
    for r in rules:
        if r.rating_key != key:
            continue
        mask = applies(r)
        if not mask.any():
            continue
        n = r.rating_needed(values, temps(r))[mask]
        if np.isnan(n).any():
            return None, ""
        need = max(need, float(np.max(n)))
    if need == np.inf:
        return None, f"no {key} rating passes: the stress is above a fixed limit of the " \
                     "policy"
    return (_f(need) if np.isfinite(need) else None), ""


def device_temperatures(stresses) -> dict[str, np.ndarray]:
    """Each ref's own computed temperature [degC] over all corners: junction for
    semiconductors, hot spot for capacitors and magnetics."""
    return {s.ref: s.values for s in stresses if s.quantity in ("t_j", "t_hotspot")}


def governing_rule(rules, part, kind: str):
    """The strictest of ``rules`` that applies to corners of ``kind`` with a fixed
    allowed value, or None. A rule whose allowed value depends on temperature
    (``factor_vs_temperature``) has no single value here: when one applies, None is
    returned and the caller compares stresses only (Monte Carlo, sampling.py)."""
    applying = [r for r in rules if r.stress_kinds is None or kind in r.stress_kinds]
    if any(r.curve is not None for r in applying):
        return None
    # a rating read from a table (the SOA lines) holds per corner only
    if any(r.rating is not None and not isinstance(part.ratings.get(r.rating, 0.0),
                                                   (int, float)) for r in applying):
        return None
    applying = [r for r in applying if r.allowed(part) is not None]
    if not applying:
        return None
    if all(r.is_minimum for r in applying):  # more is better: the largest minimum
        return max(applying, key=lambda r: r.allowed(part))
    return min(applying, key=lambda r: r.allowed(part))


def status_of(ratio: float, policy) -> str:
    """fail above 1 (or not finite), marginal above the policy's ``marginal_above``."""
    if not np.isfinite(ratio) or ratio > 1:
        return "fail"
    return "marginal" if ratio > policy.marginal_above else "pass"


def run_checks(evaluation, policy) -> list[Check]:
    policy = policy.bind(evaluation.design)  # minimum = "required_life" and the like
    runaway = runaway_by_ref(evaluation)
    corners = evaluation.corners
    ambient = (corners["ambient_temperature"] if "ambient_temperature" in corners.columns
               else None)
    device = device_temperatures(evaluation.stresses)
    checks = [_check_converged(s, policy, corners, runaway,
                               {"ambient": ambient, "device": device.get(s.ref)})
              for s in evaluation.stresses]
    for c, s in zip(checks, evaluation.stresses):
        if getattr(s, "basis", "computed") != "computed":  # e.g. a [[measured]] value
            c.basis, c.measured = s.basis, s.measured
    return checks


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


def _check_converged(stress, policy, corners, runaway: dict[str, np.ndarray],
                     temperatures=None) -> Check:
    """The check of one stress, with the corners of an unconverged electro-thermal loop
    taken out.

    Where some device's loop ran away, the whole operating point there (duty, currents,
    drops, losses, hence every stress of every ref, voltages included) comes from an
    unconverged loop. The runaway device's own t_j stays the fail it is. Any other row
    counting such a corner is not-computed with the reason, unless the corners that did
    converge already make it fail (more corners can only raise the worst ratio).
    """
    full = check_stress(stress, policy, corners, temperatures)
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
        partial = check_stress(kept, policy, corners, temperatures)
        if partial.status == "fail":
            return replace(partial, note="; ".join(n for n in (partial.note, why) if n))
    return replace(full, stress=None, corner=corners.ids[first], rating=None,
                   allowed=None, ratio=None, status="not-computed", stress_kind=None,
                   note=why, rating_needed=None)


def summarise(checks: list[Check]) -> dict[str, int]:
    summary = {s: 0 for s in ("pass", "marginal", "fail", "unrated", "info", "not-computed",
                              "waived")}
    for c in checks:
        summary[c.status] = summary.get(c.status, 0) + 1
    return summary


def uncovered(checks: list[Check]) -> list[str]:
    return sorted({f"{c.kind}.{c.quantity}" for c in checks if c.status == "info"})


FAIL_ON = ("fail", "marginal")


def exit_status(checks: list[Check], fail_on: str = "fail") -> int:
    """0 nothing fails; 1 a check fails, is unrated or could not be computed (or, with
    ``fail_on="marginal"``, is marginal). Waived checks never set it."""
    bad = {"fail", "unrated", "not-computed"}
    if fail_on == "marginal":
        bad.add("marginal")
    return 1 if any(c.status in bad for c in checks) else 0
