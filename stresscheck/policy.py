"""Derating policies: rules that turn a part rating into an allowed stress.

A rule matches a part kind (and optionally technologies and stress kinds) and a
quantity. It sets ``allowed`` either as ``factor × rating`` or, for temperatures, as
``rating − margin`` capped at ``limit`` (either may be given alone). Where several rules
match, the strictest (lowest allowed) governs. Built-in packs live in
``stresscheck/policies/<name>.toml``, each rule with its source.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

from . import schema
from .errors import InputError
from .tomlio import (check_keys, optional_text, read_toml, require_str, shorten, suggest,
                     type_name)
from .units import parse_quantity

RULE_KEYS = ("id", "kind", "technology", "quantity", "rating", "factor", "margin", "limit",
             "stress_kind", "source", "note")


@dataclass(frozen=True)
class Rule:
    id: str
    kind: str
    quantity: str
    source: str
    rating: str | None = None
    factor: float | None = None
    margin: float | None = None  # [K] (temperatures) or quantity units
    limit: float | None = None  # [SI of the quantity]
    technology: tuple[str, ...] | None = None
    stress_kinds: tuple[str, ...] | None = None

    def matches(self, part, quantity: str) -> bool:
        return (self.kind == part.kind and self.quantity == quantity
                and (self.technology is None or part.technology in self.technology))

    def allowed(self, part) -> float | None:
        """Allowed stress for ``part`` [SI], or None when the rating is missing."""
        if self.rating is None:
            return self.limit
        rating = part.ratings.get(self.rating)
        if rating is None:
            return None
        value = rating
        if self.factor is not None:
            value = value * self.factor
        if self.margin is not None:
            value = value - self.margin
        if self.limit is not None:
            value = min(value, self.limit)
        return value

    def as_dict(self) -> dict:
        return {"id": self.id, "kind": self.kind, "quantity": self.quantity,
                "rating": self.rating, "factor": self.factor, "margin": self.margin,
                "limit": self.limit,
                "technology": list(self.technology) if self.technology else None,
                "stress_kinds": list(self.stress_kinds) if self.stress_kinds else None,
                "source": self.source}


@dataclass
class Policy:
    name: str
    marginal_above: float
    rules: list[Rule]
    path: Path
    sha256: str

    def rules_for(self, part, quantity: str) -> list[Rule]:
        return [r for r in self.rules if r.matches(part, quantity)]


def builtin_names() -> list[str]:
    folder = resources.files("stresscheck.policies")
    return sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".toml"))


def load_policy(name_or_file: str | None) -> Policy:
    """A built-in policy by name, or a policy file by path (default: commercial)."""
    if name_or_file is None:
        name_or_file = "commercial"
    name_or_file = str(name_or_file)
    if not name_or_file.strip():
        raise InputError("--policy", None, "empty policy name; give a built-in policy ("
                         + ", ".join(builtin_names()) + ") or a policy file")
    path = Path(name_or_file)
    if not name_or_file.endswith(".toml") and not path.exists():
        names = builtin_names()
        if name_or_file not in names:
            raise InputError(shorten(name_or_file).strip("'"), None, "no such policy file "
                             "or built-in policy" + suggest(name_or_file, names))
        path = Path(str(resources.files("stresscheck.policies") / f"{name_or_file}.toml"))
    return _read_policy(path)


def _read_policy(path: Path) -> Policy:
    doc = read_toml(path, "policy")
    check_keys(doc, ("schema", "name", "marginal_above", "rules", "description"), path)
    version = require_str(doc, "schema", path)
    if version != schema.POLICY_SCHEMA:
        raise InputError(path, "schema", f"unknown schema version {shorten(version)}; "
                         f"expected '{schema.POLICY_SCHEMA}'")
    name = require_str(doc, "name", path)
    if not name.strip() or len(name) > 100 or not name.isprintable():
        raise InputError(path, "name", "expected one line of printable text, 1 to 100 "
                         "characters")
    optional_text(doc, "description", path)
    marginal = doc.get("marginal_above", 0.9)
    if isinstance(marginal, bool) or not isinstance(marginal, (int, float)):
        raise InputError(path, "marginal_above", f"expected a number such as 0.9, got "
                         f"{type_name(marginal)}")
    marginal = float(marginal)
    if not 0 < marginal <= 1:
        raise InputError(path, "marginal_above", "must lie in (0, 1]")
    if "rules" not in doc:
        raise InputError(path, "rules", "a policy needs at least one [[rules]] entry; "
                         "without rules every check would only be information")
    raw_rules = doc["rules"]
    if not isinstance(raw_rules, list) or not all(isinstance(r, dict) for r in raw_rules):
        raise InputError(path, "rules", "must be an array of tables [[rules]]")
    if not raw_rules:
        raise InputError(path, "rules", "a policy needs at least one [[rules]] entry")
    rules = [_read_rule(r, i, path) for i, r in enumerate(raw_rules)]
    first: dict[str, int] = {}
    for i, rule in enumerate(rules):
        if rule.id in first:
            raise InputError(path, f"rules[{i}].id", f"rule id '{rule.id}' is used twice "
                             f"(also by rules[{first[rule.id]}]); ids default to "
                             "<kind>-<quantity>, so give each rule on the same quantity "
                             "its own id")
        first[rule.id] = i
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    return Policy(name, marginal, rules, path, digest)


def _read_rule(raw: dict, i: int, path) -> Rule:
    key = f"rules[{i}]"
    check_keys(raw, RULE_KEYS, path, f"{key}.")
    kind = require_str(raw, "kind", path, f"{key}.", choices=schema.KINDS)
    quantity = require_str(raw, "quantity", path, f"{key}.",
                           choices=schema.KIND_QUANTITIES[kind])
    if quantity == "life":
        raise InputError(path, f"{key}.quantity", "rules on capacitor life (a required "
                         "minimum life) are not supported yet; life is reported as info")
    source = require_str(raw, "source", path, f"{key}.")
    if not source.strip():
        raise InputError(path, f"{key}.source", "every rule must say where it comes from")
    optional_text(raw, "note", path, f"{key}.")
    ratings = schema.PART_KEYS[kind]["ratings"]
    rating = require_str(raw, "rating", path, f"{key}.", optional=True, choices=ratings)
    tech = _str_list(raw, "technology", path, key, schema.TECHNOLOGIES[kind])
    kinds = _str_list(raw, "stress_kind", path, key, schema.STRESS_KINDS)
    factor = raw.get("factor")
    if factor is not None:
        if isinstance(factor, bool) or not isinstance(factor, (int, float)):
            raise InputError(path, f"{key}.factor", f"expected a number such as 0.8, got "
                             f"{type_name(factor)}")
        factor = float(factor)
        if not 0 < factor <= 1.5:
            raise InputError(path, f"{key}.factor", "must lie in (0, 1.5]")
    qdim = _quantity_dimension(quantity)
    margin = raw.get("margin")
    if margin is not None:
        mdim = "temperature_difference" if qdim == "temperature" else qdim
        margin = parse_quantity(margin, mdim, path, f"{key}.margin")
        if margin < 0:
            raise InputError(path, f"{key}.margin", "must not be negative")
    limit = raw.get("limit")
    if limit is not None:
        limit = parse_quantity(limit, qdim, path, f"{key}.limit")
        if qdim != "temperature" and limit <= 0:
            raise InputError(path, f"{key}.limit", "must be greater than zero (a stress "
                             "magnitude)")
    if rating is None and (factor is not None or margin is not None):
        which = "factor" if factor is not None else "margin"
        raise InputError(path, f"{key}.{which}", f"{which} applies to a rating, but the "
                         "rule names none; add rating = \"...\" or use only limit")
    if rating is None and limit is None:
        raise InputError(path, f"{key}.rating", "a rule needs a rating (with factor or "
                         "margin) or a fixed limit")
    if rating is not None and factor is None and margin is None and limit is None:
        raise InputError(path, f"{key}.factor", "a rule on a rating needs factor, margin "
                         "or limit")
    if rating is not None:
        rdim = schema.PART_KEYS[kind]["ratings"][rating].dimension
        if rdim != qdim:
            raise InputError(path, f"{key}.rating", f"rating '{rating}' is a "
                             f"{rdim.replace('_', ' ')}, but quantity '{quantity}' is a "
                             f"{qdim.replace('_', ' ')}")
    rule_id = raw.get("id", f"{kind}-{quantity}")
    if not isinstance(rule_id, str) or not rule_id or len(rule_id) > 100 \
            or not rule_id.isprintable():
        raise InputError(path, f"{key}.id", "expected one line of printable text, 1 to 100 "
                         "characters")
    return Rule(rule_id, kind, quantity, source, rating, factor, margin, limit, tech, kinds)


def _str_list(raw, name, path, key, choices):
    if name not in raw:
        return None
    value = raw[name]
    values = [value] if isinstance(value, str) else value
    if not isinstance(values, list) or not values or not all(isinstance(v, str) for v in values):
        raise InputError(path, f"{key}.{name}", "expected a name or a list of names")
    for v in values:
        if v not in choices:
            raise InputError(path, f"{key}.{name}", f"unknown value {shorten(v)}"
                             + suggest(v, choices))
    return tuple(values)


_QUANTITY_DIMENSIONS = {"V": "voltage", "A": "current", "W": "power", "degC": "temperature",
                        "T": "flux_density", "s": "time", "1": "fraction"}


def _quantity_dimension(quantity: str) -> str:
    return _QUANTITY_DIMENSIONS[schema.QUANTITIES[quantity].unit]
