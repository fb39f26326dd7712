"""The HTML report's added blocks: run id, sign-off, pictures, the sortable checks table's
filter options, rule sources and their notes, and the fields other parts of the tool add
(policy details, losses per ref, regimes). Each block is empty when its field is absent.
"""

from __future__ import annotations

import re

from markupsafe import Markup

from . import charts, sources
from .view import DASH, ROLE_ORDER, STATUS_ORDER, format_value, signoff

_RUN_ID = re.compile(r"[0-9a-f]{1,64}")


def _text(value) -> str:
    return DASH if value is None or value == "" else str(value)


def _pictures(results: dict) -> dict:
    """Inline SVG pictures (trusted markup: matplotlib escapes every text it draws)."""
    ratio = charts.ratio_bars(results)
    sweeps = []
    for group in charts.sweep_groups(results):
        refs = ", ".join(str(r) for r in group["refs"])
        sweeps.append({"title": f"{refs} · {_text(group['role'])} · {_text(group['part'])}",
                       "svg": Markup(charts.sweep_chart(group, results))})
    mc = []
    for check in results.get("checks") or ():
        svg = charts.monte_carlo_chart(check)
        if svg:
            mc.append({"title": f"{check.get('ref')} {check.get('quantity')}",
                       "svg": Markup(svg)})
    return {"ratio_chart": Markup(ratio) if ratio else None, "sweep_charts": sweeps,
            "mc_charts": mc}


def _options(checks, key, order=()) -> list[str]:
    seen = [str(c.get(key)) for c in checks if c.get(key) is not None]
    ranked = [x for x in order if x in seen]
    return ranked + sorted({x for x in seen if x not in ranked})


def _policy_details(results: dict) -> dict | None:
    details = results.get("policy_details")
    if not isinstance(details, dict) or not details:
        return None
    kinds = details.get("uncovered_kinds") or ()
    return {"name": _text(details.get("name")), "title": details.get("title") or "",
            "version": details.get("version") or "", "source": sources.name_notes(str(details.get("source") or "")),
            "from_memory": bool(details.get("from_memory")),
            "uncovered_kinds": [str(k) for k in kinds]}


def _losses(results: dict) -> list[dict]:
    """``losses = {ref: {term: W}}`` as rows; terms in first-seen order."""
    losses = results.get("losses")
    if not isinstance(losses, dict):
        return []
    rows = []
    for ref, terms in losses.items():
        if not isinstance(terms, dict):
            continue
        rows.append({"ref": _text(ref),
                     "terms": [{"name": _text(k), "value": format_value(v, "W")}
                               for k, v in terms.items()]})
    return rows


def _regimes(results: dict) -> list[dict]:
    regimes = results.get("regimes")
    if not isinstance(regimes, dict):
        return []
    return [{"regime": _text(k), "count": len(v or ()),
             "corners": ", ".join(str(x) for x in (v or ()))} for k, v in regimes.items()]


def _substitutions(results: dict) -> dict | None:
    """Parts replaced by a BOM or --swap, and the refs a BOM and the design do not share
    (CONTRACT.md, "BOM workflows"); None when the run made no substitution."""
    changes = results.get("substitutions")
    bom = results.get("bom") if isinstance(results.get("bom"), dict) else None
    if changes is None and bom is None:
        return None
    rows = [{"ref": _text(c.get("ref")), "before": _text(c.get("before")),
             "after": _text(c.get("after")), "source": _text(c.get("source"))}
            for c in changes or () if isinstance(c, dict)]
    out = {"changes": rows, "bom": None}
    if bom is not None:
        out["bom"] = {"name": _text(bom.get("name")),
                      "not_in_design": ", ".join(str(r) for r in bom.get("not_in_design") or ()),
                      "not_in_bom": ", ".join(str(r) for r in bom.get("not_in_bom") or ())}
    return out


def blocks(results: dict, context: dict) -> dict:
    """Template variables of the added blocks.

    Parameters
    ----------
    results
        The results dict.
    context
        Run information (unused here beyond what `view` reads).

    Returns
    -------
    dict
        ``run_id``, ``signoff``, ``losses_not``, pictures, filter options, ``rule_links``
        and ``source_notes``, ``policy_details``, ``losses_by_ref``, ``regimes``.
    """
    checks = results.get("checks") or []
    run_id = str(results.get("run_id") or "")
    appendix = sources.appendix(results.get("policy_rules") or ())
    available = {a["key"] for a in appendix}
    view = {
        "run_id": run_id if _RUN_ID.fullmatch(run_id) else "",
        "signoff": signoff(results),
        "losses_not": [str(x) for x in results.get("losses_not_included") or ()],
        "filter_statuses": _options(checks, "status", STATUS_ORDER + ("waived",)),
        "filter_roles": _options(checks, "role", ROLE_ORDER),
        "filter_kinds": _options(checks, "kind"),
        "rule_links": [sources.link_citations(str(r.get("source") or ""), available)
                       for r in results.get("policy_rules") or ()],
        "source_notes": appendix,
        "policy_details": _policy_details(results),
        "losses_by_ref": _losses(results),
        "regimes": _regimes(results),
        "substitutions": _substitutions(results),
    }
    view.update(_pictures(results))
    return view
