"""Compare two results.json documents check by check (ref and quantity).

Used after a part substitution or a design change: which checks changed status (worse
first), which ratios moved by more than a threshold, which parts changed, which refs and
checks appeared or vanished. Computes only; rendering is in ``report/pages.py``.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

from .errors import InputError
from .fsio import NotRegularFile, read_regular

# How bad a status is for the exit status and for ordering: a change to a higher rank is
# "worse". Waived rows and info rows do not set the exit status, like a pass.
STATUS_RANK = {"pass": 0, "info": 0, "waived": 0, "marginal": 1, "unrated": 2,
               "not-computed": 2, "fail": 3}
DEFAULT_THRESHOLD = 0.01  # ratio change reported from 1 % of allowed up


@dataclass
class Change:
    ref: str
    quantity: str
    status_before: str | None
    status_after: str | None
    ratio_before: float | None
    ratio_after: float | None
    part_before: str | None
    part_after: str | None
    unit: str | None

    @property
    def worse(self) -> bool:
        return _rank(self.status_after) > _rank(self.status_before)

    @property
    def delta(self) -> float | None:
        if self.ratio_before is None or self.ratio_after is None:
            return None
        return self.ratio_after - self.ratio_before

    def as_dict(self) -> dict:
        return {"ref": self.ref, "quantity": self.quantity, "unit": self.unit,
                "status_before": self.status_before, "status_after": self.status_after,
                "ratio_before": self.ratio_before, "ratio_after": self.ratio_after,
                "ratio_change": self.delta, "part_before": self.part_before,
                "part_after": self.part_after, "worse": self.worse}


@dataclass
class Comparison:
    old: str
    new: str
    design_old: str
    design_new: str
    threshold: float
    status_changes: list[Change] = field(default_factory=list)
    ratio_changes: list[Change] = field(default_factory=list)
    part_changes: list[dict] = field(default_factory=list)
    refs_added: list[str] = field(default_factory=list)
    refs_removed: list[str] = field(default_factory=list)
    checks_added: list[str] = field(default_factory=list)
    checks_removed: list[str] = field(default_factory=list)

    @property
    def got_worse(self) -> bool:
        return any(c.worse for c in self.status_changes)

    def as_dict(self) -> dict:
        return {"old": self.old, "new": self.new, "design_old": self.design_old,
                "design_new": self.design_new, "threshold": self.threshold,
                "got_worse": self.got_worse,
                "status_changes": [c.as_dict() for c in self.status_changes],
                "ratio_changes": [c.as_dict() for c in self.ratio_changes],
                "part_changes": self.part_changes, "refs_added": self.refs_added,
                "refs_removed": self.refs_removed, "checks_added": self.checks_added,
                "checks_removed": self.checks_removed}


def _rank(status) -> int:
    return STATUS_RANK.get(status, 0) if status is not None else 0


def load_results(path) -> dict:
    """A results.json document, checked enough to compare; InputError names the file."""
    path = Path(path)
    try:
        doc = json.loads(read_regular(path).decode("utf-8"))
    except NotRegularFile as exc:
        raise InputError(path, None, f"results file is {exc.describe()}, not a regular "
                         "file") from None
    except FileNotFoundError:
        raise InputError(path, None, "results file does not exist") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(path, None, f"cannot read the results file: {exc}") from None
    except ValueError as exc:
        raise InputError(path, None, f"not a JSON document ({exc})") from None
    schema = doc.get("schema") if isinstance(doc, dict) else None
    if not isinstance(schema, str) or not schema.startswith("stresscheck.results/"):
        raise InputError(path, "schema", "not a stresscheck results.json (schema "
                         "'stresscheck.results/…' expected)")
    checks = doc.get("checks")
    if not isinstance(checks, list):
        raise InputError(path, "checks", "expected a list of checks")
    for i, check in enumerate(checks):
        if not isinstance(check, dict) or not isinstance(check.get("ref"), str) \
                or not isinstance(check.get("quantity"), str):
            raise InputError(path, f"checks[{i}]", "each check needs 'ref' and 'quantity'")
        ratio = check.get("ratio")
        if ratio is not None and (isinstance(ratio, bool) or not isinstance(ratio, (int, float))):
            raise InputError(path, f"checks[{i}].ratio", "must be a number or null")
    return doc


def _index(doc) -> dict[tuple[str, str], dict]:
    return {(c["ref"], c["quantity"]): c for c in doc["checks"]}


def compare(old_path, new_path, threshold: float = DEFAULT_THRESHOLD) -> Comparison:
    """Compare two results files; see the module docstring.

    Parameters
    ----------
    threshold : smallest change of ratio (stress / allowed) reported [1]
    """
    old, new = load_results(old_path), load_results(new_path)
    a, b = _index(old), _index(new)
    cmp = Comparison(str(old_path), str(new_path), str(old.get("design", "")),
                     str(new.get("design", "")), threshold)
    parts_a = {c["ref"]: c.get("part") for c in old["checks"]}
    parts_b = {c["ref"]: c.get("part") for c in new["checks"]}
    cmp.refs_added = sorted(set(parts_b) - set(parts_a))
    cmp.refs_removed = sorted(set(parts_a) - set(parts_b))
    cmp.part_changes = [{"ref": r, "before": parts_a[r], "after": parts_b[r]}
                        for r in sorted(set(parts_a) & set(parts_b))
                        if parts_a[r] != parts_b[r]]
    cmp.checks_added = [f"{r} {q}" for r, q in sorted(set(b) - set(a))]
    cmp.checks_removed = [f"{r} {q}" for r, q in sorted(set(a) - set(b))]
    for key in sorted(set(a) & set(b)):
        x, y = a[key], b[key]
        change = Change(key[0], key[1], x.get("status"), y.get("status"), x.get("ratio"),
                        y.get("ratio"), x.get("part"), y.get("part"), y.get("unit"))
        if change.status_before != change.status_after:
            cmp.status_changes.append(change)
        elif change.delta is not None and abs(change.delta) >= threshold:
            cmp.ratio_changes.append(change)
        elif (change.ratio_before is None) != (change.ratio_after is None):
            cmp.ratio_changes.append(change)
    cmp.status_changes.sort(key=lambda c: (-(_rank(c.status_after) - _rank(c.status_before)),
                                           c.ref, c.quantity))
    cmp.ratio_changes.sort(key=lambda c: (-abs(c.delta or 0.0), c.ref, c.quantity))
    return cmp


def format_text(cmp: Comparison) -> list[str]:
    """Plain lines for the terminal: status changes first (worse first), then ratios."""
    def pct(x):
        return "—" if x is None else f"{100 * x:.1f} %"

    def parts(c):
        return (f"  [{c.part_before} -> {c.part_after}]" if c.part_before != c.part_after
                else "")

    lines = [f"old: {cmp.old} ({cmp.design_old})", f"new: {cmp.new} ({cmp.design_new})"]
    if cmp.design_old != cmp.design_new:
        lines.append("the two results are of different designs: compared by ref and quantity")
    for p in cmp.part_changes:
        lines.append(f"  part  {p['ref']}: {p['before']} -> {p['after']}")
    for label, refs in (("refs only in new", cmp.refs_added),
                        ("refs only in old", cmp.refs_removed)):
        if refs:
            lines.append(f"  {label}: " + ", ".join(refs))
    lines.append(f"{len(cmp.status_changes)} status change(s)"
                 + (", some worse" if cmp.got_worse else ""))
    for c in cmp.status_changes:
        word = "WORSE " if c.worse else "better"
        lines.append(f"  {word} {c.ref:6s} {c.quantity:15s} {c.status_before} -> "
                     f"{c.status_after}  ({pct(c.ratio_before)} -> {pct(c.ratio_after)} of "
                     f"allowed){parts(c)}")
    lines.append(f"{len(cmp.ratio_changes)} ratio change(s) of at least "
                 f"{100 * cmp.threshold:g} % of allowed")
    for c in cmp.ratio_changes:
        lines.append(f"         {c.ref:6s} {c.quantity:15s} {pct(c.ratio_before)} -> "
                     f"{pct(c.ratio_after)} ({c.status_after}){parts(c)}")
    if cmp.checks_added or cmp.checks_removed:
        lines.append(f"checks only in new: {len(cmp.checks_added)}, only in old: "
                     f"{len(cmp.checks_removed)}")
    return lines
