"""HTML report: the view model (every number already formatted as text) and the template.

Autoescaping is always on, so no text from a design, part sheet or policy can inject
markup into the report. Formatting helpers shared with the spreadsheet are in `view`.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

import jinja2

from ..schema import KIND_QUANTITIES, QUANTITIES
from ..texts import CAUTIONS
from . import html_blocks
from .annotations import annotations, spikes_left_out
from .view import (DASH, FINDING_STATUSES, OTHER_COLOUR, ROLE_ORDER, STATUS_COLOURS,
                   STATUS_ORDER, _ratio_key, _status_rank, corner_columns, count_statuses,
                   format_number, format_ratio, format_stress, format_value, governing_corner_ids,
                   policy_label, revision, sort_findings, status_class, tool_version,
                   unit_label)

TEMPLATE_NAME = "report.html.j2"
MARKER = "<!-- stresscheck report -->"  # emitted by the template; see writer.py


# --------------------------------------------------------------------------- view model

def _text(value) -> str:
    return DASH if value is None or value == "" else str(value)


def _quantity_desc(quantity) -> str:
    q = QUANTITIES.get(quantity)
    return q.description if q else ""


def _check_view(check: dict, results: dict | None = None, spikes: bool = False) -> dict:
    unit = check.get("unit")
    quantity = check.get("quantity")
    rating = check.get("rating")
    rating_text = ""
    rating_key = check.get("rating_key")
    if rating is not None:
        rating_text = f"rating {format_value(rating, unit, quantity)}"
        if rating_key:
            rating_text += f" ({rating_key})"
    elif rating_key:
        rating_text = f"no {rating_key} rating"
    stress_kind = check.get("stress_kind")
    status = check.get("status")
    corner = check.get("corner")
    return {
        "ref": _text(check.get("ref")),
        "part": _text(check.get("part")),
        "kind": _text(check.get("kind")),
        "quantity": _text(quantity),
        "quantity_desc": _quantity_desc(quantity),
        "stress_kind": stress_kind if stress_kind and stress_kind != "steady" else "",
        "stress": format_stress(check),
        "allowed": format_value(check.get("allowed"), unit, quantity),
        "rating": rating_text,
        "ratio": format_ratio(check.get("ratio")),
        "status": _text(status),
        "cls": status_class(status),
        "rule": _text(check.get("rule")),
        "rule_source": check.get("rule_source") or "",
        "corner": _text(corner),
        "corner_link": bool(corner),
        "basis": check.get("basis") or "",
        "note": check.get("note") or "",
        "notes": annotations(check, results or {}, spikes),
        "role": _text(check.get("role")),
        "ratio_num": _ratio_attr(check.get("ratio")),
    }


def _ratio_attr(ratio) -> str:
    """The ratio for the sort script's data attribute ("" when there is none)."""
    if isinstance(ratio, (int, float)) and not isinstance(ratio, bool) and ratio == ratio \
            and abs(ratio) != float("inf"):
        return repr(float(ratio))
    return ""


def _role_rank(role) -> tuple:
    try:
        return (ROLE_ORDER.index(role), "")
    except ValueError:
        return (len(ROLE_ORDER), str(role))


def _matrix(checks, results: dict, spikes: bool) -> list[dict]:
    """One table per (role, kind): rows are refs, column groups the kind's quantities."""
    groups: dict[tuple, dict] = {}
    for check in checks or ():
        key = (check.get("role"), check.get("kind"))
        group = groups.setdefault(key, {"refs": {}, "quantities": []})
        ref = check.get("ref")
        row = group["refs"].setdefault(ref, {"part": check.get("part"), "cells": {}})
        quantity = check.get("quantity")
        row["cells"].setdefault(quantity, []).append(check)
        if quantity not in group["quantities"]:
            group["quantities"].append(quantity)
    tables = []
    for (role, kind), group in sorted(groups.items(), key=lambda kv: (_role_rank(kv[0][0]),
                                                                      str(kv[0][1]))):
        order = list(KIND_QUANTITIES.get(kind, ()))
        present = group["quantities"]
        quantities = [q for q in order if q in present] + [q for q in present if q not in order]
        rows = []
        for ref, row in group["refs"].items():
            cells = []
            for q in quantities:
                found = row["cells"].get(q)
                if not found:
                    cells.append(None)
                    continue
                # Several rows (stress kinds) for one quantity: show the worst.
                worst = sorted(found, key=lambda c: (_status_rank(c.get("status")),
                                                     _ratio_key(c)))[0]
                cell = _check_view(worst, results, spikes)
                cell["count"] = len(found)
                cell["kinds"] = ", ".join(_text(c.get("stress_kind")) for c in found)
                cells.append(cell)
            rows.append({"ref": _text(ref), "part": _text(row["part"]), "cells": cells})
        tables.append({
            "role": _text(role), "kind": _text(kind),
            "quantities": [{"code": _text(q), "desc": _quantity_desc(q)} for q in quantities],
            "rows": rows,
        })
    return tables


def _corner_table(results: dict, ids=None) -> dict:
    units = results.get("corner_units") or {}
    columns = corner_columns(results)
    corners = results.get("corners") or []
    by_id = {c.get("id"): c for c in corners}
    selected = corners if ids is None else [by_id.get(i, {"id": i}) for i in ids]
    counts: dict = {}
    findings: dict = {}
    for check in results.get("checks") or ():
        cid = check.get("corner")
        counts[cid] = counts.get(cid, 0) + 1
        if check.get("status") in FINDING_STATUSES:
            findings[cid] = findings.get(cid, 0) + 1
    rows = []
    for corner in selected:
        values = []
        for key in columns:
            value = corner.get(key)
            if key in ("id", "kind"):
                values.append({"text": _text(value), "num": False})
            else:
                values.append({"text": format_value(value, units.get(key)), "num": True})
        cid = corner.get("id")
        rows.append({"id": _text(cid), "cells": values, "checks": counts.get(cid, 0),
                     "findings": findings.get(cid, 0), "known": cid in by_id})
    return {"columns": [{"key": k, "unit": unit_label(units.get(k)),
                         "text": k in ("id", "kind")} for k in columns],
            "rows": rows}


def _rule_view(rule: dict) -> dict:
    quantity = rule.get("quantity")
    q = QUANTITIES.get(quantity)
    unit = q.unit if q else None
    rating = rule.get("rating") or "rating"
    factor, margin, limit = rule.get("factor"), rule.get("margin"), rule.get("limit")

    def amount(value, u):
        return value if isinstance(value, str) else format_value(value, u, quantity)

    parts = []
    base = rating
    if factor is not None:
        base = f"{format_number(factor)} \u00d7 {rating}"
    if margin is not None:
        base = f"{base} \u2212 {amount(margin, 'K' if unit == 'degC' else unit)}"
    if factor is not None or margin is not None or limit is None:
        parts.append(base)
    if limit is not None:
        parts.append(f"at most {amount(limit, unit)}")
    if rule.get("factor_vs_temperature"):  # a curve: the rule's own wording
        parts = [_text(rule.get("form"))]

    def listing(value):
        if value is None or value == [] or value == "":
            return "all"
        if isinstance(value, (list, tuple)):
            return ", ".join(str(v) for v in value)
        return str(value)

    return {"id": _text(rule.get("id")), "kind": _text(rule.get("kind")),
            "technology": listing(rule.get("technology")), "quantity": _text(quantity),
            "allowed": ", ".join(parts), "stress_kinds": listing(rule.get("stress_kinds")),
            "source": _text(rule.get("source"))}


def _verdict(counts: dict) -> dict:
    bad = counts.get("fail", 0) + counts.get("unrated", 0)
    if bad:
        return {"cls": "fail", "text": "Does not meet the policy: "
                f"{counts.get('fail', 0)} failing and {counts.get('unrated', 0)} unrated "
                "check(s)."}
    if counts.get("not-computed", 0):
        return {"cls": "not-computed", "text": "Incomplete: "
                f"{counts['not-computed']} stress(es) could not be computed."}
    if counts.get("marginal", 0):
        return {"cls": "marginal", "text": "Every covered check is within the policy; "
                f"{counts['marginal']} marginal check(s) are close to their limit."}
    return {"cls": "pass", "text": "Every covered check is within the policy."}


def build_view(results: dict, context: dict) -> dict:
    """Everything the template shows, as text.

    Parameters
    ----------
    results
        The results dict (content of results.json).
    context
        Run information: ``date`` and ``tool_version``; optional ``revision`` (design
        revision or commit) is shown in the header when given.

    Returns
    -------
    dict
        The template's variables.
    """
    context = context or {}
    converter = results.get("converter") or {}
    checks = results.get("checks") or []
    counts = count_statuses(results)
    statuses = list(STATUS_ORDER) + [s for s in counts if s not in STATUS_ORDER]
    statuses = [s for s in statuses if s in STATUS_ORDER or counts.get(s)]
    header = [("Topology", _text(converter.get("topology"))),
              ("Rectifier", _text(converter.get("rectifier"))),
              ("Modulation", _text(converter.get("modulation"))),
              ("Policy", policy_label(results)),
              ("Tool", f"{(results.get('tool') or {}).get('name') or 'stresscheck'} "
                       f"{tool_version(results, context)}"),
              ("Date", _text(context.get("date")))]
    if revision(results, context):
        header.insert(0, ("Design revision", revision(results, context)))
    if results.get("run_id"):
        header.append(("Run id", str(results["run_id"])))
    header = [(k, v) for k, v in header
              if not (k in ("Rectifier", "Modulation") and v == DASH)]
    gov_ids = governing_corner_ids(results)
    notes = []
    for note in results.get("notes") or ():
        if isinstance(note, dict):
            notes.append({"level": _text(note.get("level") or "note"),
                          "text": _text(note.get("text"))})
        else:
            notes.append({"level": "note", "text": _text(note)})
    spikes = spikes_left_out(results)
    view = {
        "design": _text(results.get("design")),
        "schema": _text(results.get("schema")),
        "header": header,
        "inputs": [{"role": _text(i.get("role")), "name": _text(i.get("name")),
                    "sha256": _text(i.get("sha256")), "path": i.get("path") or "",
                    "shadowed": [str(s) for s in i.get("shadowed") or ()]}
                   for i in results.get("inputs") or ()],
        "cautions": CAUTIONS,
        "summary": [{"status": s, "cls": status_class(s), "count": counts.get(s, 0)}
                    for s in statuses],
        "total": len(checks),
        "verdict": _verdict(counts),
        "findings": [_check_view(c, results, spikes) for c in sort_findings(checks)],
        "findings_have_notes": True,
        "matrix": _matrix(checks, results, spikes),
        "all_checks": [_check_view(c, results, spikes) for c in checks],
        "rule_link_by_id": {},
        "governing": _corner_table(results, gov_ids),
        "corners": _corner_table(results),
        "losses": [str(x) for x in results.get("losses_included") or ()],
        "conventions": [str(x) for x in results.get("conventions") or ()],
        "notes": notes,
        "rules": [_rule_view(r) for r in results.get("policy_rules") or ()],
        "uncovered": [str(x) for x in results.get("uncovered_quantities") or ()],
        "colours": {**STATUS_COLOURS, "other": OTHER_COLOUR},
    }
    view.update(html_blocks.blocks(results, context))
    rules = results.get("policy_rules") or ()
    view["rule_link_by_id"] = {str(r.get("id")): link for r, link in
                               zip(rules, view["rule_links"]) if r.get("id")}
    view["annotated"] = [c for c in view["all_checks"]
                         if any(a["cls"] != "excl" for a in c["notes"])]
    return view


# --------------------------------------------------------------------------- rendering

def _template_source(name: str) -> str | None:
    """Template text from the installed package, else from the repository's templates/."""
    try:
        return resources.files("stresscheck.templates").joinpath(name).read_text(
            encoding="utf-8")
    except (ModuleNotFoundError, FileNotFoundError, NotADirectoryError, TypeError):
        pass
    fallback = Path(__file__).resolve().parents[2] / "templates" / name
    if fallback.is_file():
        return fallback.read_text(encoding="utf-8")
    return None


def _environment() -> jinja2.Environment:
    # autoescape=True unconditionally: select_autoescape would not cover a ".j2" name.
    return jinja2.Environment(loader=jinja2.FunctionLoader(_template_source),
                              autoescape=True, undefined=jinja2.StrictUndefined,
                              trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)


def render_html(results: dict, context: dict) -> str:
    """Render the HTML report.

    Parameters
    ----------
    results
        The results dict (what results.json holds). Missing lists are treated as empty
        and None values are shown as "—".
    context
        Run information: ``date`` (shown as given), ``tool_version``; optional
        ``revision``.

    Returns
    -------
    str
        A self-contained HTML document (inline CSS, no scripts, no external resources)
        that starts with the stresscheck report marker comment.
    """
    template = _environment().get_template(TEMPLATE_NAME)
    return template.render(**build_view(results, context or {}))
