"""Plain-text listing of a policy (``stresscheck policy show NAME``).

One ``key: value`` line per property of the pack, then one line per rule starting with
``rule <id>``, fields separated by `` | ``: greppable, no layout to parse.
"""

from __future__ import annotations


def _one_line(text) -> str:
    return " ".join(str(text).split())


def rule_line(rule) -> str:
    tech = ",".join(rule.technology) if rule.technology else "all"
    kinds = ",".join(rule.stress_kinds) if rule.stress_kinds else "all"
    read = "from memory" if rule.from_memory else "read in a published copy"
    fields = [f"rule {rule.id}", rule.kind, f"technology {tech}", rule.quantity,
              f"stress kinds {kinds}", f"allowed = {rule.form()}", read]
    where = ", ".join(x for x in (rule.document, rule.table) if x)
    if where:
        fields.append(_one_line(where))
    fields.append("source: " + _one_line(rule.source))
    if rule.note:
        fields.append("note: " + _one_line(rule.note))
    return " | ".join(fields)


def show_policy(policy) -> str:
    """The policy as text: header lines, then one line per rule."""
    memory = [r for r in policy.rules if r.from_memory]
    lines = [f"policy: {policy.name}",
             f"title: {_one_line(policy.title) or '-'}",
             f"version: {_one_line(policy.version) or '-'}",
             f"source: {_one_line(policy.source) or '-'}",
             f"extends: {' -> '.join(policy.chain) if policy.chain else '-'}",
             f"marginal_above: {policy.marginal_above:g}",
             ("from_memory: yes, " + f"{len(memory)} of {len(policy.rules)} rules"
              if memory else "from_memory: no"),
             "uncovered: " + (", ".join(policy.uncovered_kinds()) or "none"),
             f"rules: {len(policy.rules)}"]
    lines += [rule_line(r) for r in policy.rules]
    return "\n".join(lines)
