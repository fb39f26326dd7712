"""Spreadsheet report (openpyxl).

Sheets: "Checks" (every check), "Findings" (fail / not-computed / unrated / marginal, worst
first), "Corners" (every corner) and "About" (traceability, scope and cautions).

Text from design, part and policy files is never stored as a formula: every string cell is
written with data type "s", and text that a spreadsheet would read as a formula when
edited ("=", "+", "-", "@", tab, CR first) also gets the quote-prefix flag.
"""

from __future__ import annotations

import datetime as _dt
import io
import math
import zipfile

from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter

from ..texts import CAUTIONS
from .view import (OTHER_COLOUR, STATUS_COLOURS, STATUS_ORDER,
                   corner_columns, count_statuses, display_value, sort_findings, tool_version,
                   unit_label)

CHECK_COLUMNS = ("ref", "role", "part", "kind", "quantity", "unit", "stress", "allowed",
                 "rating", "rating key", "ratio", "status", "rule", "rule source", "corner",
                 "stress kind", "basis", "note")
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_MAX_CELL_TEXT = 32767  # Excel's limit for one cell
_BOLD = Font(bold=True)
_TITLE = Font(bold=True, size=13)
_WRAP = Alignment(wrap_text=True, vertical="top")


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


def _fill(status) -> PatternFill:
    colour = STATUS_COLOURS.get(status, OTHER_COLOUR)
    return PatternFill(fill_type="solid", start_color=colour, end_color=colour)


def _check_row(check: dict) -> list:
    quantity = check.get("quantity")
    unit = check.get("unit")
    values = {}
    for key in ("stress", "allowed", "rating"):
        values[key], label = display_value(check.get(key), unit, quantity)
    return [check.get("ref"), check.get("role"), check.get("part"), check.get("kind"),
            quantity, label if label else unit, values["stress"], values["allowed"],
            values["rating"], check.get("rating_key"), check.get("ratio"),
            check.get("status"), check.get("rule"), check.get("rule_source"),
            check.get("corner"), check.get("stress_kind"), check.get("basis"),
            check.get("note") or None]


def _header(ws, names) -> None:
    for col, name in enumerate(names, start=1):
        put(ws, 1, col, name).font = _BOLD
    ws.freeze_panes = "A2"
    ws.print_title_rows = "1:1"


def _finish_table(ws, n_columns: int, n_rows: int, widths=None, max_width: int = 60) -> None:
    """Autofilter over the table, column widths from content, landscape fit-to-width."""
    last = get_column_letter(max(n_columns, 1))
    ws.auto_filter.ref = f"A1:{last}{max(n_rows, 1)}"
    for col in range(1, n_columns + 1):
        letter = get_column_letter(col)
        if widths and col - 1 < len(widths) and widths[col - 1]:
            ws.column_dimensions[letter].width = widths[col - 1]
            continue
        longest = 0
        for row in ws.iter_rows(min_row=1, max_row=n_rows, min_col=col, max_col=col):
            value = row[0].value
            if value is None:
                continue
            text = f"{value:.4g}" if isinstance(value, float) else str(value)
            longest = max(longest, len(text))
        ws.column_dimensions[letter].width = min(max(longest + 3, 8), max_width)
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True


NUMBER = "0.0###"  # up to four decimals: readable without hiding precision
SCIENTIFIC = "0.00E+00"  # henries and farads


def _checks_sheet(ws, checks) -> None:
    _header(ws, CHECK_COLUMNS)
    ratio_col = CHECK_COLUMNS.index("ratio") + 1
    status_col = CHECK_COLUMNS.index("status") + 1
    for r, check in enumerate(checks, start=2):
        for c, value in enumerate(_check_row(check), start=1):
            put(ws, r, c, value)
        ws.cell(row=r, column=ratio_col).number_format = "0.0%"
        for name in ("stress", "allowed", "rating"):
            ws.cell(row=r, column=CHECK_COLUMNS.index(name) + 1).number_format = NUMBER
        ws.cell(row=r, column=status_col).fill = _fill(check.get("status"))
        ws.cell(row=r, column=ratio_col).fill = _fill(check.get("status"))
    _finish_table(ws, len(CHECK_COLUMNS), len(checks) + 1)


def _corners_sheet(ws, results: dict) -> None:
    units = results.get("corner_units") or {}
    columns = corner_columns(results)
    names = [f"{k} [{unit_label(units[k])}]" if unit_label(units.get(k)) else k
             for k in columns]
    _header(ws, names)
    corners = results.get("corners") or []
    for r, corner in enumerate(corners, start=2):
        for c, key in enumerate(columns, start=1):
            put(ws, r, c, corner.get(key))
            tiny = units.get(key) in ("H", "F")
            ws.cell(row=r, column=c).number_format = SCIENTIFIC if tiny else NUMBER
    _finish_table(ws, len(columns), len(corners) + 1, max_width=30)


def _about_sheet(ws, results: dict, context: dict) -> None:
    converter = results.get("converter") or {}
    tool = results.get("tool") or {}
    row = 1

    def line(*values, bold=False, wrap=False):
        nonlocal row
        for col, value in enumerate(values, start=1):
            cell = put(ws, row, col, value)
            if bold:
                cell.font = _BOLD
            if wrap:
                cell.alignment = _WRAP
        row += 1

    def section(title):
        nonlocal row
        row += 1
        put(ws, row, 1, title).font = _TITLE
        row += 1

    put(ws, row, 1, "Component stress and derating report").font = _TITLE
    row += 2
    for label, value in (("design", results.get("design")),
                         ("revision", context.get("revision")),
                         ("topology", converter.get("topology")),
                         ("rectifier", converter.get("rectifier")),
                         ("modulation", converter.get("modulation")),
                         ("policy", policy_label(results)),
                         ("tool", tool.get("name") or "stresscheck"),
                         ("tool version", tool_version(results, context)),
                         ("date", context.get("date")),
                         ("schema", results.get("schema"))):
        if value is not None and value != "":
            line(label, value)
    line("ratio", "stress / allowed, as percent of allowed (100 % = the policy limit)")

    section("Summary")
    counts = count_statuses(results)
    for status in list(STATUS_ORDER) + [s for s in counts if s not in STATUS_ORDER]:
        line(status, counts[status])

    section("Inputs")
    line("role", "name", "sha256", bold=True)
    for item in results.get("inputs") or ():
        line(item.get("role"), item.get("name"), item.get("sha256"))

    section("Losses included")
    for text in results.get("losses_included") or ():
        line(text)
    section("Conventions")
    for text in results.get("conventions") or ():
        line(text)
    section("Notes")
    for note in results.get("notes") or ():
        if isinstance(note, dict):
            line(note.get("level"), note.get("text"))
        else:
            line("note", note)
    section("Quantities the policy leaves uncovered (status info)")
    for text in results.get("uncovered_quantities") or ():
        line(text)

    section("Policy rules")
    rule_keys = ("id", "kind", "technology", "quantity", "rating", "factor", "margin",
                 "limit", "stress_kinds", "source")
    line(*rule_keys, bold=True)
    for rule in results.get("policy_rules") or ():
        values = []
        for key in rule_keys:
            value = rule.get(key)
            if isinstance(value, (list, tuple)):
                value = ", ".join(str(v) for v in value)
            values.append(value)
        line(*values)

    section("Safety and scope")
    for text in CAUTIONS:
        line(text, wrap=False)

    widths = {"A": 28, "B": 40, "C": 40, "D": 14, "E": 14, "F": 10, "G": 10, "H": 10,
              "I": 14, "J": 60}
    for letter, width in widths.items():
        ws.column_dimensions[letter].width = width


def _fixed_datetime(value) -> _dt.datetime | None:
    """A naive UTC datetime from context["date"] (date, datetime or ISO text), else None."""
    if value is None:
        return None
    if isinstance(value, _dt.datetime):
        stamp = value
    elif isinstance(value, _dt.date):
        stamp = _dt.datetime(value.year, value.month, value.day)
    else:
        text = str(value).strip()
        try:
            stamp = _dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
        except ValueError:
            try:
                stamp = _dt.datetime.combine(_dt.date.fromisoformat(text[:10]), _dt.time())
            except ValueError:
                return None
    if stamp.tzinfo is not None:
        stamp = stamp.astimezone(_dt.timezone.utc).replace(tzinfo=None)
    return stamp.replace(microsecond=0)


def _save(wb: Workbook, stamp: _dt.datetime) -> bytes:
    """Serialise without openpyxl's save-time clock, then fix the zip entry times."""
    raw = io.BytesIO()
    try:
        from openpyxl.writer.excel import ExcelWriter
    except ImportError:  # layout change in openpyxl: lose only the fixed "modified" time
        wb.save(raw)
    else:
        with zipfile.ZipFile(raw, "w", zipfile.ZIP_DEFLATED, allowZip64=True) as archive:
            ExcelWriter(wb, archive).save()
    date_time = (max(stamp.year, 1980), stamp.month, stamp.day, stamp.hour, stamp.minute,
                 stamp.second)
    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(raw.getvalue())) as src, \
            zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            entry = zipfile.ZipInfo(info.filename, date_time=date_time)
            entry.compress_type = zipfile.ZIP_DEFLATED
            entry.external_attr = info.external_attr
            dst.writestr(entry, src.read(info.filename))
    return out.getvalue()


def render_xlsx(results: dict, context: dict) -> bytes:
    """Render the spreadsheet report.

    Parameters
    ----------
    results
        The results dict (what results.json holds).
    context
        Run information: ``date`` (also used as the workbook's created/modified time, so
        the same input gives the same bytes), ``tool_version``; optional ``revision``.

    Returns
    -------
    bytes
        The .xlsx file.
    """
    context = context or {}
    checks = list(results.get("checks") or ())
    wb = Workbook()
    # findings first: what a reviewer must act on opens on top
    _checks_sheet(wb.active, sort_findings(checks))
    wb.active.title = "Findings"
    _checks_sheet(wb.create_sheet("Checks"), checks)
    _corners_sheet(wb.create_sheet("Corners"), results)
    _about_sheet(wb.create_sheet("About"), results, context)

    stamp = _fixed_datetime(context.get("date"))
    if stamp is None:
        stamp = _dt.datetime.now(_dt.timezone.utc).replace(tzinfo=None, microsecond=0)
    props = wb.properties
    props.created = stamp
    props.modified = stamp
    props.creator = "stresscheck"
    props.lastModifiedBy = None
    props.title = _clean_text(f"Stress and derating report: {results.get('design') or ''}")
    return _save(wb, stamp)


__all__ = ["render_xlsx", "CHECK_COLUMNS", "put"]
