"""The checks table: one row per check, the same columns in the spreadsheet's Checks sheet
and in checks.csv.

Numbers are the results' values in the unit of the row's ``unit`` column (capacitor life
in hours); ``ratio`` is stress / allowed as a fraction (the spreadsheet formats it as
percent). ``margin`` is allowed − stress in the row's unit (for a quantity where more is
better, capacitor life, stress − minimum: positive passes on every row). A value at its
model's cap (``capped``) is the text "> 15 years" in the stress column. Columns for fields that other
parts of the tool add (waivers, measured and simulated values, Monte Carlo percentiles,
the rating a part would need) appear only when some check carries the field.
"""

from __future__ import annotations

import csv
import io
import math

from ..schema import MORE_IS_BETTER
from .view import capped_text, display_value

BASE_COLUMNS = (
    ("ref", "ref"), ("role", "role"), ("part", "part"), ("kind", "kind"),
    ("quantity", "quantity"), ("unit", "unit"), ("stress", "stress [unit]"),
    ("allowed", "allowed [unit]"), ("margin", "margin [unit] (allowed − stress)"),
    ("rating", "rating [unit]"), ("rating_key", "rating key"),
    ("ratio", "ratio [stress/allowed]"), ("status", "status"), ("rule", "rule"),
    ("rule_source", "rule source"), ("corner", "corner"), ("stress_kind", "stress kind"),
    ("basis", "basis"), ("note", "note"),
)
# (key, header, present-if field) for columns shown only when some check has the field
OPTIONAL_COLUMNS = (
    ("rating_needed", "rating needed [unit]", "rating_needed"),
    ("method", "method", "method"),
    ("mc_samples", "Monte Carlo samples", "monte_carlo"),
    ("mc_p95", "Monte Carlo p95 [unit]", "monte_carlo"),
    ("mc_p99", "Monte Carlo p99 [unit]", "monte_carlo"),
    ("mc_p_exceed", "Monte Carlo P(exceed)", "monte_carlo"),
    ("measured", "measured [unit]", "measured"),
    ("measured_by", "measured with", "measured"),
    ("simulated", "simulated [unit]", "simulated"),
    ("simulated_difference", "simulated difference [computed/simulated − 1]", "simulated"),
    ("simulated_tolerance", "simulated tolerance", "simulated"),
    ("waiver_reason", "waiver reason", "waiver"),
    ("waiver_approved_by", "waiver approved by", "waiver"),
    ("waiver_date", "waiver date", "waiver"),
    ("waiver_expires", "waiver expires", "waiver"),
)
UNIT_KEYS = ("stress", "allowed", "margin", "rating", "rating_needed", "mc_p95", "mc_p99",
             "measured", "simulated")


def _num(value):
    return value if isinstance(value, (int, float)) and not isinstance(value, bool) else None


def _sub(check: dict, field: str) -> dict:
    value = check.get(field)
    return value if isinstance(value, dict) else {}


def columns(results: dict) -> list[tuple[str, str]]:
    """(key, header) of every column of the checks table for these results."""
    checks = results.get("checks") or ()
    cols = list(BASE_COLUMNS)
    for key, header, field in OPTIONAL_COLUMNS:
        if any(c.get(field) not in (None, "", {}) for c in checks):
            cols.append((key, header))
    cols.append(("run_id", "run id"))
    return cols


def row_values(check: dict, run_id) -> dict:
    """Every column's value for one check (numbers in the row's display unit)."""
    quantity, unit = check.get("quantity"), check.get("unit")

    def shown(value):
        value = _num(value)
        return None if value is None else display_value(value, unit, quantity)[0]

    _, label = display_value(0.0, unit, quantity)
    stress, allowed = shown(check.get("stress")), shown(check.get("allowed"))
    margin = allowed - stress if stress is not None and allowed is not None else None
    if quantity in MORE_IS_BETTER and margin is not None:
        margin = -margin  # life: the value above its minimum
    if check.get("capped") and stress is not None:
        stress = capped_text(check["stress"])  # beyond the model's credible range
    mc, meas, sim, waiver = (_sub(check, f) for f in ("monte_carlo", "measured",
                                                       "simulated", "waiver"))
    row = {k: check.get(k) for k, _ in BASE_COLUMNS}
    row.update({
        "unit": label if label else unit, "stress": stress, "allowed": allowed,
        "margin": margin, "rating": shown(check.get("rating")), "ratio": _num(check.get("ratio")),
        "note": check.get("note") or None,
        "rating_needed": shown(check.get("rating_needed")), "method": check.get("method"),
        "mc_samples": _num(mc.get("samples")), "mc_p95": shown(mc.get("p95")),
        "mc_p99": shown(mc.get("p99")), "mc_p_exceed": _num(mc.get("p_exceed")),
        "measured": shown(meas.get("value")), "measured_by": meas.get("instrument"),
        "simulated": shown(sim.get("value")),
        "simulated_difference": _num(sim.get("difference")),
        "simulated_tolerance": _num(sim.get("tolerance")),
        "waiver_reason": waiver.get("reason"), "waiver_approved_by": waiver.get("approved_by"),
        "waiver_date": waiver.get("date"), "waiver_expires": waiver.get("expires"),
        "run_id": run_id,
    })
    return row


def table(results: dict) -> tuple[list[tuple[str, str]], list[list]]:
    """Columns and rows (checks in results order) of the checks table."""
    cols = columns(results)
    run_id = results.get("run_id")
    rows = []
    for check in results.get("checks") or ():
        values = row_values(check, run_id)
        rows.append([values.get(k) for k, _ in cols])
    return cols, rows


_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _csv_cell(value):
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else str(value)
    if isinstance(value, int) and not isinstance(value, bool):
        return str(value)
    text = str(value)
    # A spreadsheet opening the file would run "=..." as a formula: keep text inert
    # with a leading apostrophe (OWASP guidance on CSV injection).
    return "'" + text if text.startswith(_FORMULA_START) else text


def render_csv(results: dict) -> bytes:
    """checks.csv: a header line, then one line per check (UTF-8, comma separated, RFC
    4180 quoting, full precision numbers, empty cells for missing values).

    Parameters
    ----------
    results
        The results dict.

    Returns
    -------
    bytes
        The file's contents. Text cells that a spreadsheet would read as a formula
        get a leading apostrophe.
    """
    cols, rows = table(results)
    buf = io.StringIO(newline="")
    out = csv.writer(buf, lineterminator="\r\n")
    out.writerow([h for _, h in cols])
    for row in rows:
        out.writerow([_csv_cell(v) for v in row])
    return buf.getvalue().encode("utf-8")
