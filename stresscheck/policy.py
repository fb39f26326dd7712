"""Derating policies: packs of rules that turn part ratings into allowed stresses.

A rule (rules.py) matches a part kind (and optionally technologies and stress kinds) and
a quantity. Where several rules match, the strictest (lowest allowed) governs. Built-in
packs live in ``stresscheck/policies/<name>.toml``, each rule with its source (document,
table, note) and whether its value was read in a published copy or is from memory.
A policy file may ``extends = "<pack>"``: its rules replace the pack's rules of the same
kind, technology filter and quantity, and add the rest.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field, replace
from importlib import resources
from pathlib import Path

from . import schema
from .errors import InputError
from .rules import TEMPERATURE_BASES, Rule
from .tomlio import (check_keys, optional_text, read_toml, require_str, shorten, suggest,
                     type_name)
from .units import parse_quantity

__all__ = ["Policy", "Rule", "builtin_names", "load_policy"]

POLICY_KEYS = ("schema", "name", "title", "version", "source", "description",
               "marginal_above", "extends", "rules")
RULE_KEYS = ("id", "kind", "technology", "quantity", "rating", "factor", "margin", "limit",
             "factor_vs_temperature", "temperature", "stress_kind", "source", "document",
             "table", "note", "from_memory", "minimum")
MAX_EXTENDS = 8  # depth of an extends chain


@dataclass
class Policy:
    name: str
    marginal_above: float
    rules: list[Rule]
    path: Path
    sha256: str
    title: str = ""
    version: str = ""
    source: str = ""
    extends: str | None = None
    description: str = ""
    chain: list[str] = field(default_factory=list)  # names of the packs extended

    def rules_for(self, part, quantity: str) -> list[Rule]:
        return [r for r in self.rules if r.matches(part, quantity)]

    def bind(self, design) -> "Policy":
        """This policy with every ``minimum = "<design key>"`` rule given the design's
        value of that key (e.g. ``[operating] required_life`` [s]); a design without
        the key leaves the rule unbound (its rows are info, with the reason)."""
        if not any(r.minimum_from for r in self.rules):
            return self
        rules = [replace(r, minimum=getattr(design, r.minimum_from, None))
                 if r.minimum_from else r for r in self.rules]
        return replace(self, rules=rules)

    @property
    def from_memory(self) -> bool:
        """True when any rule's value is from memory (not read in a published copy)."""
        return any(r.from_memory for r in self.rules)

    def uncovered_kinds(self) -> list[str]:
        """What no rule of the policy covers, independent of any design.

        ``"<kind>.<quantity>"`` where no rule covers the quantity for any technology;
        ``"<kind>.<quantity>[tech,...]"`` where only the technologies listed are left
        uncovered. A quantity that exists only for some technologies (capacitor ``life``,
        ``t_rise``: ``schema.QUANTITY_TECHNOLOGIES``) counts only those.
        """
        out = []
        for kind in schema.KINDS:
            for q in schema.KIND_QUANTITIES[kind]:
                rules = [r for r in self.rules if r.kind == kind and r.quantity == q]
                if any(r.technology is None for r in rules):
                    continue
                covered = {t for r in rules for t in r.technology}
                techs = schema.QUANTITY_TECHNOLOGIES.get((kind, q), schema.TECHNOLOGIES[kind])
                left = [t for t in techs if t not in covered]
                if not rules:
                    out.append(f"{kind}.{q}")
                elif left:
                    out.append(f"{kind}.{q}[{','.join(left)}]")
        return out

    def details(self) -> dict:
        """``policy_details`` of results.json."""
        return {"name": self.name, "title": self.title, "version": self.version,
                "source": self.source, "from_memory": self.from_memory,
                "uncovered_kinds": self.uncovered_kinds(),
                "extends": self.extends}


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
        path = _builtin_path(name_or_file)
    return _read_policy(path, ())


def _builtin_path(name: str) -> Path:
    return Path(str(resources.files("stresscheck.policies") / f"{name}.toml"))


def _resolve_extends(value, path: Path, seen) -> Policy:
    """The policy named by ``extends``: a built-in pack, or a policy file given relative
    to the extending file's folder."""
    if not isinstance(value, str) or not value.strip():
        raise InputError(path, "extends", "expected the name of a built-in policy ("
                         + ", ".join(builtin_names()) + ") or a policy file")
    if len(seen) >= MAX_EXTENDS:
        raise InputError(path, "extends", f"extends chain deeper than {MAX_EXTENDS}")
    if value in builtin_names() and not value.endswith(".toml"):
        base_path = _builtin_path(value)
    elif value.endswith(".toml"):
        base_path = (path.parent / value)
    else:
        raise InputError(path, "extends", f"no built-in policy {shorten(value)}"
                         + suggest(value, builtin_names()))
    try:
        resolved = base_path.resolve()
    except OSError:
        resolved = base_path
    if resolved in seen:
        raise InputError(path, "extends", f"policy {shorten(value)} extends itself "
                         "(directly or through another policy)")
    return _read_policy(base_path, seen)


def _text_key(doc, key, path, *, single_line=True, max_length=500) -> str:
    value = optional_text(doc, key, path, max_length=max_length, single_line=single_line)
    return value or ""


def _read_policy(path: Path, seen) -> Policy:
    doc = read_toml(path, "policy")
    check_keys(doc, POLICY_KEYS, path)
    version = require_str(doc, "schema", path)
    if version != schema.POLICY_SCHEMA:
        raise InputError(path, "schema", f"unknown schema version {shorten(version)}; "
                         f"expected '{schema.POLICY_SCHEMA}'")
    name = require_str(doc, "name", path)
    if not name.strip() or len(name) > 100 or not name.isprintable():
        raise InputError(path, "name", "expected one line of printable text, 1 to 100 "
                         "characters")
    description = optional_text(doc, "description", path) or ""
    title = _text_key(doc, "title", path, max_length=200)
    pack_version = _text_key(doc, "version", path, max_length=100)
    source = _text_key(doc, "source", path, single_line=False, max_length=2000)
    try:
        here = path.resolve()
    except OSError:
        here = path
    base = None
    if "extends" in doc:
        base = _resolve_extends(doc["extends"], path, tuple(seen) + (here,))
    marginal = doc.get("marginal_above", base.marginal_above if base else 0.9)
    if isinstance(marginal, bool) or not isinstance(marginal, (int, float)):
        raise InputError(path, "marginal_above", f"expected a number such as 0.9, got "
                         f"{type_name(marginal)}")
    marginal = float(marginal)
    if not 0 < marginal <= 1:
        raise InputError(path, "marginal_above", "must lie in (0, 1]")
    if "rules" not in doc and base is None:
        raise InputError(path, "rules", "a policy needs at least one [[rules]] entry "
                         "(or extends = \"<pack>\"); without rules every check would only "
                         "be information")
    raw_rules = doc.get("rules", [])
    if not isinstance(raw_rules, list) or not all(isinstance(r, dict) for r in raw_rules):
        raise InputError(path, "rules", "must be an array of tables [[rules]]")
    if not raw_rules and base is None:
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
    chain: list[str] = []
    if base is not None:
        rules = _merge(base, rules, path, first)
        chain = [base.name] + base.chain
        title = title or f"{base.title or base.name}, extended"
        source = source or f"extends {base.name}: {base.source}"
        pack_version = pack_version or base.version
    return Policy(name, marginal, rules, path, digest, title=title, version=pack_version,
                  source=source, extends=base.name if base else None,
                  description=description, chain=chain)


def _merge(base: Policy, rules: list[Rule], path: Path, index: dict[str, int]) -> list[Rule]:
    """The base's rules with every rule of the same kind, technology filter and quantity
    as a rule of ``rules`` replaced (all of them: a set of rules per stress kind is
    replaced as a whole), then ``rules`` added."""
    replaced = {r.identity for r in rules}
    kept = [r for r in base.rules if r.identity not in replaced]
    kept_ids = {r.id for r in kept}
    for rule in rules:
        if rule.id in kept_ids:
            raise InputError(path, f"rules[{index[rule.id]}].id", f"rule id '{rule.id}' is "
                             f"also the id of a rule of '{base.name}' that this rule does "
                             "not replace (a different technology filter or quantity); "
                             "give it its own id")
    return kept + rules


def _read_rule(raw: dict, i: int, path) -> Rule:
    key = f"rules[{i}]"
    check_keys(raw, RULE_KEYS, path, f"{key}.")
    kind = require_str(raw, "kind", path, f"{key}.", choices=schema.KINDS)
    quantity = require_str(raw, "quantity", path, f"{key}.",
                           choices=schema.KIND_QUANTITIES[kind])
    rule_id = raw.get("id", f"{kind}-{quantity}")
    if not isinstance(rule_id, str) or not rule_id or len(rule_id) > 100 \
            or not rule_id.isprintable():
        raise InputError(path, f"{key}.id", "expected one line of printable text, 1 to 100 "
                         "characters")
    named = f"rule '{rule_id}'"
    source = require_str(raw, "source", path, f"{key}.")
    if not source.strip():
        raise InputError(path, f"{key}.source", "every rule must say where it comes from")
    note = optional_text(raw, "note", path, f"{key}.")
    document = optional_text(raw, "document", path, f"{key}.", max_length=300)
    table = optional_text(raw, "table", path, f"{key}.", max_length=300)
    from_memory = raw.get("from_memory", False)
    if not isinstance(from_memory, bool):
        raise InputError(path, f"{key}.from_memory", f"{named}: expected true or false, "
                         f"got {type_name(from_memory)}")
    ratings = schema.PART_KEYS[kind]["ratings"]
    rating = require_str(raw, "rating", path, f"{key}.", optional=True, choices=ratings)
    tech = _str_list(raw, "technology", path, key, schema.TECHNOLOGIES[kind])
    kinds = _str_list(raw, "stress_kind", path, key, schema.STRESS_KINDS)
    factor = raw.get("factor")
    if factor is not None:
        factor = _factor(factor, path, f"{key}.factor", named)
    curve = _curve(raw, path, key, named)
    temperature = require_str(raw, "temperature", path, f"{key}.", optional=True,
                              choices=TEMPERATURE_BASES)
    if temperature is not None and curve is None:
        raise InputError(path, f"{key}.temperature", f"{named}: temperature says which "
                         "temperature a factor_vs_temperature curve reads; this rule has "
                         "no curve")
    if curve is not None and factor is not None:
        raise InputError(path, f"{key}.factor_vs_temperature", f"{named}: give factor or "
                         "factor_vs_temperature, not both")
    qdim = _quantity_dimension(quantity)
    margin = raw.get("margin")
    if margin is not None:
        mdim = "temperature_difference" if qdim == "temperature" else qdim
        margin = parse_quantity(margin, mdim, path, f"{key}.margin")
        if margin < 0:
            raise InputError(path, f"{key}.margin", f"{named}: must not be negative (a "
                             "negative margin allows a stress above the rating)")
    limit = raw.get("limit")
    if limit is not None:
        limit = parse_quantity(limit, qdim, path, f"{key}.limit")
        if qdim != "temperature" and limit <= 0:
            raise InputError(path, f"{key}.limit", "must be greater than zero (a stress "
                             "magnitude)")
    minimum, minimum_from = _minimum(raw, quantity, path, key, named)
    if minimum is not None or minimum_from is not None:
        other = [k for k in ("rating", "factor", "margin", "limit", "factor_vs_temperature")
                 if k in raw]
        if other:
            raise InputError(path, f"{key}.{other[0]}", f"{named}: {quantity} is a quantity "
                             "where more is better; its rule gives only minimum (no "
                             "rating, factor, margin or limit)")
        return Rule(rule_id, kind, quantity, source, technology=tech, stress_kinds=kinds,
                    document=document, table=table, note=note, from_memory=from_memory,
                    minimum=minimum, minimum_from=minimum_from)
    shaped = factor is not None or margin is not None or curve is not None
    if rating is None and shaped:
        which = ("factor" if factor is not None else "margin" if margin is not None
                 else "factor_vs_temperature")
        raise InputError(path, f"{key}.{which}", f"{which} applies to a rating, but the "
                         "rule names none; add rating = \"...\" or use only limit")
    if rating is None and limit is None:
        raise InputError(path, f"{key}.rating", "a rule needs a rating (with factor or "
                         "margin) or a fixed limit")
    if rating is not None and not shaped and limit is None:
        raise InputError(path, f"{key}.factor", "a rule on a rating needs factor, margin, "
                         "factor_vs_temperature or limit")
    if rating is not None:
        rdim = schema.PART_KEYS[kind]["ratings"][rating].dimension
        if rdim != qdim:
            raise InputError(path, f"{key}.rating", f"rating '{rating}' is a "
                             f"{rdim.replace('_', ' ')}, but quantity '{quantity}' is a "
                             f"{qdim.replace('_', ' ')}")
    return Rule(rule_id, kind, quantity, source, rating, factor, margin, limit, tech, kinds,
                curve=curve, temperature=temperature or "ambient", document=document,
                table=table, note=note, from_memory=from_memory)


def _minimum(raw, quantity, path, key, named):
    """(minimum [SI] or None, design key or None) of a rule.

    A quantity where more is better (``schema.MORE_IS_BETTER``) takes only ``minimum``:
    a value of the quantity's dimension (``"50000 h"``) or the name of the design key
    that gives it (``"required_life"``, ``schema.DESIGN_MINIMUMS``). Every other
    quantity refuses ``minimum``.
    """
    if quantity not in schema.MORE_IS_BETTER:
        if "minimum" in raw:
            raise InputError(path, f"{key}.minimum", f"{named}: minimum applies only to "
                             "quantities where more is better (" +
                             ", ".join(schema.MORE_IS_BETTER) + f"); {quantity} takes "
                             "rating with factor or margin, or limit")
        return None, None
    design_key = schema.DESIGN_MINIMUMS[quantity]
    if "minimum" not in raw:
        raise InputError(path, f"{key}.minimum", f"{named}: {quantity} is a quantity where "
                         f"more is better; give minimum = \"{design_key}\" (the design's "
                         "[operating] value) or a fixed value such as minimum = "
                         "\"50000 h\"")
    value = raw["minimum"]
    if value == design_key:
        return None, design_key
    minimum = parse_quantity(value, _quantity_dimension(quantity), path, f"{key}.minimum")
    if not minimum > 0:
        raise InputError(path, f"{key}.minimum", f"{named}: must be greater than zero")
    return minimum, None


def _factor(value, path, key, named) -> float:
    """A derating factor in (0, 1]: above 1 a rule would allow a stress beyond the
    absolute maximum rating, which no rule may do."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(path, key, f"{named}: expected a number such as 0.8, got "
                         f"{type_name(value)}")
    value = float(value)
    if value > 1:
        raise InputError(path, key, f"{named}: factor {value:g} would allow a stress "
                         "above the absolute maximum rating; a factor must lie in (0, 1]")
    if not value > 0:
        raise InputError(path, key, f"{named}: factor must lie in (0, 1]")
    return value


def _curve(raw, path, key, named):
    """``factor_vs_temperature = [{ temperature = "85 degC", factor = 0.5 }, ...]``:
    at least two points, temperatures strictly rising, factors in (0, 1]."""
    if "factor_vs_temperature" not in raw:
        return None
    full = f"{key}.factor_vs_temperature"
    points = raw["factor_vs_temperature"]
    if (not isinstance(points, list) or len(points) < 2
            or not all(isinstance(p, dict) for p in points)):
        raise InputError(path, full, f"{named}: expected at least two points "
                         "[{ temperature = \"85 degC\", factor = 0.5 }, ...]")
    out = []
    for j, point in enumerate(points):
        check_keys(point, ("temperature", "factor"), path, f"{full}[{j}].")
        if "temperature" not in point or "factor" not in point:
            raise InputError(path, f"{full}[{j}]", f"{named}: each point needs "
                             "temperature and factor")
        t = parse_quantity(point["temperature"], "temperature", path,
                           f"{full}[{j}].temperature")
        f = _factor(point["factor"], path, f"{full}[{j}].factor", named)
        if out and t <= out[-1][0]:
            raise InputError(path, f"{full}[{j}].temperature", f"{named}: temperatures "
                             "must rise from point to point")
        out.append((t, f))
    return tuple(out)


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
                        "T": "flux_density", "s": "time", "1": "fraction",
                        "K": "temperature_difference",
                        "J": "energy"}


def _quantity_dimension(quantity: str) -> str:
    return _QUANTITY_DIMENSIONS[schema.QUANTITIES[quantity].unit]
