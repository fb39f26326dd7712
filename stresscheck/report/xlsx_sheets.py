"""Cells and the spreadsheet's smaller sheets: summary with the sign-off block, matrix,
corners in engineering units, parts with the ratings used, policy, inputs, assumptions.

Every string goes through `put` (stored as text, never as a formula).
"""

from __future__ import annotations

import math

from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter

from ..schema import KIND_QUANTITIES
from ..texts import CAUTIONS
from . import sources
from .view import (OTHER_COLOUR, ROLE_ORDER, STATUS_COLOURS, STATUS_ORDER, corner_columns,
                   count_statuses, display_value, eng_scale, policy_label, revision,
                   round_sig, signoff, tool_version, unit_label)

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_MAX_CELL_TEXT = 32767  # Excel's limit for one cell
BOLD = Font(bold=True)
TITLE = Font(bold=True, size=13)
WRAP = Alignment(wrap_text=True, vertical="top")
RATIO_FORMAT = "0.00%"
_UNDERLINE = Border(bottom=Side(style="thin"))


def _clean_text(text: str) -> str:
    text = ILLEGAL_CHARACTERS_RE.sub("\ufffd", text)  # control characters openpyxl refuses
    return text[:_MAX_CELL_TEXT]


def put(ws, row: int, column: int, value):
    """Write one cell; strings are always stored as text, never as a formula.

    Parameters
    ----------
    ws
        Worksheet.
    row, column
        1-based cell position.
    value
        str, number, None or anything else (stored as its ``str``).

    Returns
    -------
    openpyxl.cell.Cell
    """
    cell = ws.cell(row=row, column=column)
    if value is None or isinstance(value, bool):
        cell.value = value
    elif isinstance(value, (int, float)):
        if math.isfinite(value):
            cell.value = value
        else:
            cell.value = str(value)
            cell.data_type = "s"
    else:
        text = _clean_text(str(value))
        cell.value = text
        cell.data_type = "s"  # openpyxl would store "=..." as a formula otherwise
        if text.startswith(_FORMULA_START):
            cell.quotePrefix = True  # stays text when a user edits the cell
    return cell


def fill(status) -> PatternFill:
    colour = STATUS_COLOURS.get(status, OTHER_COLOUR)
    return PatternFill(fill_type="solid", start_color=colour, end_color=colour)


def header(ws, names) -> None:
    """Bold header in row 1, frozen, repeated on every printed page."""
    for col, name in enumerate(names, start=1):
        put(ws, 1, col, name).font = BOLD
    ws.freeze_panes = "A2"
    ws.print_title_rows = "1:1"


def _hf_text(text: str) -> str:
    return _clean_text(text).replace("&", "&&")[:80]


def finish(ws, n_columns: int, n_rows: int, *, table_: bool = True, max_width: int = 60,
           page: dict | None = None) -> None:
    """Autofilter (for tables), column widths from content, print setup."""
    if table_:
        ws.auto_filter.ref = f"A1:{get_column_letter(max(n_columns, 1))}{max(n_rows, 1)}"
    for col in range(1, n_columns + 1):
        longest = 0
        for row in ws.iter_rows(min_row=1, max_row=max(n_rows, 1), min_col=col, max_col=col):
            value = row[0].value
            if value is not None:
                longest = max(longest, len(f"{value:.4g}" if isinstance(value, float)
                                           else str(value)))
        ws.column_dimensions[get_column_letter(col)].width = min(max(longest + 3, 8),
                                                                 max_width)
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    page = page or {}
    ws.oddHeader.left.text = _hf_text(page.get("design", ""))
    ws.oddHeader.right.text = _hf_text(f"revision {page['revision']}"
                                       if page.get("revision") else "")
    ws.oddFooter.left.text = _hf_text(f"run {page.get('run_id') or ''}")
    ws.oddFooter.center.text = "&A"
    ws.oddFooter.right.text = "page &P of &N"




class _Lines:
    """Writes label/value lines and section titles down a sheet."""

    def __init__(self, ws):
        self.ws, self.row = ws, 1

    def line(self, *values, bold=False, wrap=False):
        for col, value in enumerate(values, start=1):
            cell = put(self.ws, self.row, col, value)
            if bold:
                cell.font = BOLD
            if wrap:
                cell.alignment = WRAP
        self.row += 1

    def section(self, title):
        self.row += 1
        put(self.ws, self.row, 1, title).font = TITLE
        self.row += 1

    def items(self, texts, wrap=False):
        for text in texts or ():
            if isinstance(text, dict):
                self.line(text.get("level"), text.get("text"), wrap=wrap)
            else:
                self.line(text, wrap=wrap)


def summary_sheet(ws, results: dict, context: dict, page: dict) -> None:
    converter = results.get("converter") or {}
    tool = results.get("tool") or {}
    out = _Lines(ws)
    put(ws, 1, 1, "Component stress and derating report").font = TITLE
    out.row = 3
    for label, value in (("design", results.get("design")),
                         ("revision", revision(results, context)),
                         ("topology", converter.get("topology")),
                         ("rectifier", converter.get("rectifier")),
                         ("modulation", converter.get("modulation")),
                         ("policy", policy_label(results)),
                         ("tool", f"{tool.get('name') or 'stresscheck'} "
                                  f"{tool_version(results, context)}"),
                         ("date", context.get("date")),
                         ("run id", results.get("run_id")),
                         ("schema", results.get("schema"))):
        if value not in (None, ""):
            out.line(label, value)
    out.line("ratio", "stress / allowed, as percent of allowed (100 % = the policy limit)")

    out.section("Summary")
    counts = count_statuses(results)
    for status in list(STATUS_ORDER) + [s for s in counts if s not in STATUS_ORDER]:
        if status in STATUS_ORDER or counts[status]:
            out.line(status, counts[status])
            ws.cell(row=out.row - 1, column=1).fill = fill(status)

    out.section("Sign-off")
    out.line("", "name", "date", "signature", bold=True)
    for sig in signoff(results):
        out.line(sig["role"], sig["name"] or None, sig["date"] or None, None)
        for col in (2, 3, 4):
            ws.cell(row=out.row - 1, column=col).border = _UNDERLINE

    out.section("Losses and effects included")
    out.items(results.get("losses_included"))
    out.section("Not included")
    out.items(results.get("losses_not_included"))
    out.section("Safety and scope")
    out.items(CAUTIONS)
    for letter, width in {"A": 30, "B": 60, "C": 16, "D": 30}.items():
        ws.column_dimensions[letter].width = width
    finish(ws, 0, out.row, table_=False, page=page)


def matrix_sheet(ws, results: dict, page: dict) -> None:
    """Ratio (percent of allowed) per ref and quantity; the cell fill is the status."""
    checks = results.get("checks") or ()
    quantities = []
    for kind in sorted({c.get("kind") for c in checks if c.get("kind")}):
        for q in KIND_QUANTITIES.get(kind, ()):
            if q not in quantities and any(c.get("quantity") == q for c in checks):
                quantities.append(q)
    for c in checks:
        if c.get("quantity") not in quantities:
            quantities.append(c.get("quantity"))
    rows: dict = {}
    for c in checks:
        row = rows.setdefault(c.get("ref"), {"role": c.get("role"), "kind": c.get("kind"),
                                             "part": c.get("part"), "cells": {}})
        best = row["cells"].get(c.get("quantity"))
        if best is None or (c.get("ratio") or -1) > (best.get("ratio") or -1):
            row["cells"][c.get("quantity")] = c
    order = {role: i for i, role in enumerate(ROLE_ORDER)}
    header(ws, ["ref", "role", "kind", "part"] + [f"{q} [% of allowed]" for q in quantities])
    ranked = sorted(rows.items(), key=lambda kv: (order.get(kv[1]["role"], len(order)),
                                                 str(kv[1]["role"])))
    for r, (ref, row) in enumerate(ranked, start=2):
        for col, value in enumerate((ref, row["role"], row["kind"], row["part"]), start=1):
            put(ws, r, col, value)
        for j, q in enumerate(quantities, start=5):
            check = row["cells"].get(q)
            if check is None:
                continue
            ratio = check.get("ratio")
            cell = put(ws, r, j, round(ratio, 4) if isinstance(ratio, float)
                       else check.get("status"))
            cell.number_format = RATIO_FORMAT
            cell.fill = fill(check.get("status"))
    finish(ws, 4 + len(quantities), len(rows) + 1, page=page)


def corners_sheet(ws, results: dict, page: dict) -> None:
    units = results.get("corner_units") or {}
    columns = corner_columns(results)
    corners = results.get("corners") or []
    scales = {k: eng_scale([c.get(k) for c in corners], units.get(k)) for k in columns}
    names = [f"{k} [{scales[k][1]}]" if scales[k][1] else k for k in columns]
    header(ws, names)
    for r, corner in enumerate(corners, start=2):
        for c, key in enumerate(columns, start=1):
            value = corner.get(key)
            if isinstance(value, (int, float)) and not isinstance(value, bool):
                value = round_sig(value / scales[key][0])
            put(ws, r, c, value)
    finish(ws, len(columns), len(corners) + 1, max_width=30, page=page)


def parts_sheet(ws, results: dict, page: dict) -> None:
    """Each part with each rating the checks used, and the refs that use it."""
    hashes = {i.get("name"): i.get("sha256") for i in results.get("inputs") or ()
              if i.get("role") == "part"}
    used: dict = {}
    for c in results.get("checks") or ():
        key = (c.get("part"), c.get("kind"), c.get("rating_key"))
        entry = used.setdefault(key, {"check": c, "refs": []})
        if c.get("ref") not in entry["refs"]:
            entry["refs"].append(c.get("ref"))
    header(ws, ["part", "kind", "rating key", "rating", "unit", "used by", "sha256"])
    r = 1
    for (part, kind, key), entry in sorted(used.items(), key=lambda kv: tuple(
            str(x) for x in kv[0])):
        c = entry["check"]
        value, label = display_value(c.get("rating"), c.get("unit"), c.get("quantity"))
        r += 1
        for col, v in enumerate((part, kind, key, round_sig(value) if key else None,
                                 label if key else None, ", ".join(map(str, entry["refs"])),
                                 hashes.get(part)), start=1):
            put(ws, r, col, v)
    finish(ws, 7, r, page=page)


def policy_sheet(ws, results: dict, page: dict) -> None:
    keys = ("id", "kind", "technology", "quantity", "rating", "factor", "margin", "limit",
            "stress_kinds", "source")
    header(ws, list(keys))
    r = 1
    for rule in results.get("policy_rules") or ():
        r += 1
        for col, key in enumerate(keys, start=1):
            value = rule.get(key)
            if isinstance(value, (list, tuple)):
                value = ", ".join(str(v) for v in value)
            elif key == "source":
                value = sources.plain_citations(str(value or ""))
            put(ws, r, col, value)
    finish(ws, len(keys), r, page=page)
    details = results.get("policy_details") or {}
    i = r + 2
    for i, (key, value) in enumerate(sorted(details.items()), start=r + 3):
        if isinstance(value, (list, tuple)):
            value = ", ".join(map(str, value))
        elif key == "source" and value:
            value = sources.plain_citations(str(value))
        put(ws, i, 1, f"policy {key}").font = BOLD
        put(ws, i, 2, value)
    _rule_sources(ws, results, i + 2)


def _rule_sources(ws, results: dict, row: int) -> None:
    """Below the rules: the text of every note section the rule sources cite (as the
    HTML report's appendix), so that the sheet stands alone."""
    cited = sources.appendix(results.get("policy_rules") or ())
    if not cited:
        return
    put(ws, row, 1, "Rule sources: the cited sections of the notes shipped with the "
                    "tool").font = TITLE
    for entry in cited:
        row += 2
        put(ws, row, 1, entry["title"]).font = BOLD
        for line in sources.markdown_lines(entry["markdown"]):
            row += 1
            put(ws, row, 1, line)


def inputs_sheet(ws, results: dict, page: dict) -> None:
    keys = ("role", "name", "sha256", "path", "shadowed")
    inputs = results.get("inputs") or ()
    header(ws, list(keys))
    for r, item in enumerate(inputs, start=2):
        for col, key in enumerate(keys, start=1):
            value = item.get(key)
            if isinstance(value, (list, tuple)):
                value = ", ".join(str(v) for v in value)
            put(ws, r, col, value)
    finish(ws, len(keys), len(inputs) + 1, max_width=70, page=page)


def assumptions_sheet(ws, results: dict, page: dict) -> None:
    out = _Lines(ws)
    put(ws, 1, 1, "Assumptions and scope").font = TITLE
    out.row = 2
    for title, key in (("Losses and effects included", "losses_included"),
                       ("Losses and effects not included", "losses_not_included"),
                       ("Conventions", "conventions"), ("Notes", "notes")):
        out.section(title)
        out.items(results.get(key))
    out.section("Quantities the policy leaves uncovered (status info)")
    out.items(results.get("uncovered_quantities"))
    out.section("Safety and scope")
    out.items(CAUTIONS)
    ws.column_dimensions["A"].width = 110
    ws.column_dimensions["B"].width = 80
    finish(ws, 0, out.row, table_=False, page=page)
