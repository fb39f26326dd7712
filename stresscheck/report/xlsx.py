"""Spreadsheet report (openpyxl).

Sheets: Summary (verdict, sign-off block, run id, scope, cautions), Findings (fail /
not-computed / unrated / marginal, worst first), Checks (every check: the columns of
checks.csv), Matrix (ratio per ref and quantity), Corners (engineering units), Parts (the
ratings used), Policy, Inputs (with SHA-256) and Assumptions. Every table has a frozen
header and an autofilter; every sheet prints landscape, fit to width, with the header row
repeated and the design name, revision and page numbers in header and footer. Status
colours of the checks are conditional formats on the status text.

Text from design, part and policy files is never stored as a formula: every string cell is
written with data type "s", and text that a spreadsheet would read as a formula when
edited ("=", "+", "-", "@", tab, CR first) also gets the quote-prefix flag. Numbers are
stored rounded to the figures shown (four significant), never raw floats behind a format.
"""

from __future__ import annotations

import datetime as _dt
import io
import zipfile

from openpyxl import Workbook
from openpyxl.formatting.rule import FormulaRule
from openpyxl.packaging.custom import StringProperty
from openpyxl.utils import get_column_letter

from . import sources, xlsx_sheets
from .xlsx_sheets import RATIO_FORMAT, _clean_text, fill, finish, header, put
from .table import table
from .view import (OTHER_COLOUR, STATUS_COLOURS, policy_label, revision, round_sig,
                   sort_findings)

RUN_ID_PROPERTY = "stresscheck run id"  # custom document property: the set's run id


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


def _checks_sheet(ws, results: dict, checks, page: dict) -> None:
    cols, rows = table({**results, "checks": checks})
    keys = [k for k, _ in cols]
    header(ws, [h for _, h in cols])
    for r, row in enumerate(rows, start=2):
        for c, value in enumerate(row, start=1):
            key = keys[c - 1]
            if key == "ratio":
                cell = put(ws, r, c, None if value is None else round(value, 4))
                cell.number_format = RATIO_FORMAT
            elif key == "rule_source":  # worded as the HTML shows it (Policy sheet)
                put(ws, r, c, sources.plain_citations(value) if value else value)
            elif key in ("mc_p_exceed", "simulated_difference", "simulated_tolerance"):
                put(ws, r, c, round_sig(value)).number_format = RATIO_FORMAT
            else:
                put(ws, r, c, round_sig(value))
    n = len(rows) + 1
    status = get_column_letter(keys.index("status") + 1)
    targets = [f"{get_column_letter(keys.index(k) + 1)}2:{get_column_letter(keys.index(k) + 1)}"
               f"{max(n, 2)}" for k in ("ratio", "status")]
    for name in list(STATUS_COLOURS):
        rule = FormulaRule(formula=[f'${status}2="{name}"'], fill=fill(name),
                           stopIfTrue=True)
        for target in targets:
            ws.conditional_formatting.add(target, rule)
    finish(ws, len(cols), n, page=page)


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
    page = {"design": str(results.get("design") or ""),
            "revision": revision(results, context), "run_id": results.get("run_id")}
    wb = Workbook()
    wb.active.title = "Summary"
    xlsx_sheets.summary_sheet(wb.active, results, context, page)
    _checks_sheet(wb.create_sheet("Findings"), results, sort_findings(checks), page)
    _checks_sheet(wb.create_sheet("Checks"), results, checks, page)
    xlsx_sheets.matrix_sheet(wb.create_sheet("Matrix"), results, page)
    xlsx_sheets.corners_sheet(wb.create_sheet("Corners"), results, page)
    xlsx_sheets.parts_sheet(wb.create_sheet("Parts"), results, page)
    xlsx_sheets.policy_sheet(wb.create_sheet("Policy"), results, page)
    xlsx_sheets.inputs_sheet(wb.create_sheet("Inputs"), results, page)
    xlsx_sheets.assumptions_sheet(wb.create_sheet("Assumptions"), results, page)
    if results.get("run_id"):
        wb.custom_doc_props.append(StringProperty(name=RUN_ID_PROPERTY,
                                                  value=str(results["run_id"])))

    stamp = _fixed_datetime(context.get("date"))
    if stamp is None:
        stamp = _dt.datetime.now(_dt.timezone.utc).replace(tzinfo=None, microsecond=0)
    props = wb.properties
    props.created = stamp
    props.modified = stamp
    props.creator = "stresscheck"
    props.lastModifiedBy = None
    props.title = _clean_text(f"Stress and derating report: {results.get('design') or ''}"
                              f" ({policy_label(results)})")
    return _save(wb, stamp)


__all__ = ["render_xlsx", "put", "RUN_ID_PROPERTY"]
