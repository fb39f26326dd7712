"""The view layer shared by the HTML report and the spreadsheet: number and unit
formatting, status names, colours and order, and the orderings both reports use.

Rendering only selects and formats what results carry; nothing here computes a stress.
"""

from __future__ import annotations

import math

from ..schema import YEAR

# Display order of statuses; the first four are "findings".
STATUS_ORDER = ("fail", "not-computed", "unrated", "marginal", "pass", "info")
FINDING_STATUSES = ("fail", "not-computed", "unrated", "marginal", "waived")

# One palette for HTML and spreadsheet (RRGGBB): three-state green/amber/red, grey where
# there is no verdict, blue-grey for information only.
STATUS_COLOURS = {
    "pass": "C8E6C9",
    "marginal": "FFE0A3",
    "fail": "F4B4AE",
    "unrated": "D6D6D6",
    "not-computed": "D6D6D6",
    "info": "D3DDE8",
    "waived": "E1D5EC",
}
OTHER_COLOUR = "EEEEEE"  # statuses added later until they get their own
# Statuses shown in the summary only when some check has them.
OPTIONAL_STATUSES = ("waived",)

ROLE_ORDER = ("switch", "rectifier", "freewheel", "reset", "transformer", "inductor",
              "input-capacitor", "output-capacitor", "split-capacitor")

DASH = "\u2014"  # shown for None (not computed) and missing values
_NNBSP = "\u202f"  # thousands separator in long numbers
_PREFIXES = {-15: "f", -12: "p", -9: "n", -6: "\u00b5", -3: "m", 0: "", 3: "k", 6: "M",
             9: "G", 12: "T"}
_PREFIXABLE = {"V", "A", "W", "T", "Hz", "H", "F", "ohm", "s", "C", "J", "Wb"}
_UNIT_LABELS = {"degC": "\u00b0C", "ohm": "\u03a9", "1": "", "m^2": "m\u00b2",
                "m**2": "m\u00b2"}



# --------------------------------------------------------------------------- formatting

def unit_label(unit: str | None) -> str:
    """Printable unit symbol ("degC" -> "°C", "ohm" -> "Ω", "1" -> "")."""
    if not unit:
        return ""
    return _UNIT_LABELS.get(unit, unit)


def display_value(value, unit: str | None, quantity: str | None = None):
    """Convert a results value to the unit it is shown in.

    Parameters
    ----------
    value
        Number in SI units (°C for temperatures), or None.
    unit
        SI unit of ``value`` as in results.json.
    quantity
        Checked quantity; ``life`` is shown in hours rather than seconds.

    Returns
    -------
    tuple
        ``(value, unit_label)``; value is unchanged except for life (s -> h).
    """
    if quantity == "life" and unit == "s":
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            value = value / 3600.0
        return value, "h"
    return value, unit_label(unit)




def capped_text(value) -> str:
    """A value at its model's cap (``capped`` in results.json), as the report shows it:
    473364000 s -> "> 15 years" (life beyond the credible range of the life model)."""
    return f"> {value / YEAR:.0f} years"


def format_stress(check: dict) -> str:
    """A check's stress as the report shows it: "> 15 years" where ``capped``, else
    ``format_value``."""
    stress = check.get("stress")
    if check.get("capped") and isinstance(stress, (int, float)):
        return capped_text(stress)
    return format_value(stress, check.get("unit"), check.get("quantity"))


def _round_sig(x: float, digits: int) -> float:
    return float(f"{x:.{digits}g}")


def format_number(value, digits: int = 3) -> str:
    """A plain number to ``digits`` significant figures, without exponent for 1e-3..1e6."""
    if value is None:
        return DASH
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return str(value)
    if not math.isfinite(value):
        return str(value)
    if value == 0:
        return "0"
    r = _round_sig(value, digits)
    if 1e-3 <= abs(r) < 1e6:
        text = f"{r:.{max(digits, 1)}g}" if abs(r) < 1000 else f"{r:,.0f}"
        if "e" in text:
            text = repr(r)
        return text.replace(",", _NNBSP)
    return f"{r:.{digits - 1}e}"


def format_eng(value, unit: str, digits: int = 3) -> str:
    """Engineering notation with an SI prefix: 0.0047 T -> "4.7 mT", 75.0 V -> "75 V"."""
    r = _round_sig(value, digits)
    if r == 0:
        return f"0 {unit_label(unit)}".strip()
    exp = int(math.floor(math.log10(abs(r)) / 3) * 3)
    exp = max(min(exp, 12), -15)
    mant = r / 10 ** exp
    text = f"{mant:.{digits}g}"
    if "e" in text:  # cannot happen after rounding, but never print "1e+03 V"
        text = format_number(mant, digits)
    return f"{text} {_PREFIXES[exp]}{unit_label(unit)}"


def format_value(value, unit: str | None, quantity: str | None = None) -> str:
    """Format one value for the HTML report.

    Parameters
    ----------
    value
        Number in SI units, None (not computed: shown as "—"), or text.
    unit
        SI unit from results.json ("V", "A", "W", "degC", "T", "s", "Hz", "H", "1" ...).
    quantity
        The checked quantity, if any (life is shown in hours).

    Returns
    -------
    str
        For example "73.2 V", "1.25 A", "4.7 mT", "112.4 °C", "45 200 h".
    """
    if value is None:
        return DASH
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return str(value)
    if not math.isfinite(value):
        return f"{value} {unit_label(unit)}".strip()
    value, label = display_value(value, unit, quantity)
    if unit == "degC":
        return f"{value:.1f} {label}"
    if label == "h":
        return f"{format_number(value)} h"
    if unit in _PREFIXABLE:
        return format_eng(value, unit)
    return f"{format_number(value)} {label}".strip()


def format_ratio(ratio) -> str:
    """Ratio stress/allowed as percent of allowed: 0.915 -> "91.5 %"; None -> "—"."""
    if ratio is None or isinstance(ratio, bool) or not isinstance(ratio, (int, float)):
        return DASH
    if not math.isfinite(ratio):
        return str(ratio)
    return f"{ratio * 100:.1f} %"


def status_class(status) -> str:
    """CSS class suffix for a status (only known names; anything else is "other")."""
    return status if status in STATUS_COLOURS else "other"


# --------------------------------------------------------------------------- ordering

def _status_rank(status) -> int:
    try:
        return STATUS_ORDER.index(status)
    except ValueError:
        return len(STATUS_ORDER)


def _ratio_key(check) -> float:
    ratio = check.get("ratio")
    if isinstance(ratio, (int, float)) and not isinstance(ratio, bool) and math.isfinite(ratio):
        return -float(ratio)
    return math.inf  # no ratio: after every numeric ratio of the same status


def sort_findings(checks) -> list[dict]:
    """Checks needing attention, worst first.

    Parameters
    ----------
    checks
        The ``checks`` list of a results dict.

    Returns
    -------
    list of dict
        Checks whose status is fail, not-computed, unrated or marginal, ordered by status in
        that order, then by ratio descending (rows without a ratio last); ties keep the
        engine's order.
    """
    rows = [(i, c) for i, c in enumerate(checks or ()) if c.get("status") in FINDING_STATUSES]
    rows.sort(key=lambda ic: (_status_rank(ic[1].get("status")), _ratio_key(ic[1]), ic[0]))
    return [c for _, c in rows]


def count_statuses(results: dict) -> dict[str, int]:
    """Status counts: the ``summary`` of the results, else counted from the checks."""
    summary = results.get("summary")
    if isinstance(summary, dict) and summary:
        counts = {k: int(v) for k, v in summary.items() if isinstance(v, (int, float))}
    else:
        counts = {}
        for check in results.get("checks") or ():
            status = check.get("status")
            counts[status] = counts.get(status, 0) + 1
    for status in STATUS_ORDER:
        counts.setdefault(status, 0)
    return counts


def corner_columns(results: dict) -> list[str]:
    """Corner keys in display order: id, kind, ``corner_keys``, then any other key seen."""
    cols = ["id"]
    corners = results.get("corners") or ()
    if any("kind" in c for c in corners):
        cols.append("kind")
    for key in results.get("corner_keys") or ():
        if key not in cols:
            cols.append(key)
    for corner in corners:
        for key in corner:
            if key not in cols:
                cols.append(key)
    return cols


def governing_corner_ids(results: dict) -> list[str]:
    """Ids of the corners referenced by any check, in corner-list order."""
    used = {c.get("corner") for c in results.get("checks") or () if c.get("corner")}
    ordered = [c.get("id") for c in results.get("corners") or () if c.get("id") in used]
    missing = sorted(str(u) for u in used if u not in ordered)
    return ordered + missing


def tool_version(results: dict, context: dict) -> str:
    tool = results.get("tool") or {}
    return str(context.get("tool_version") or tool.get("version") or DASH)




# --------------------------------------------------------------------------- shared blocks

SIGNATURES = (("Prepared", "prepared"), ("Reviewed", "reviewed"), ("Approved", "approved"))


def revision(results: dict, context: dict) -> str:
    """Design revision: the design's ``[review] revision``, else ``context["revision"]``."""
    review = results.get("review") or {}
    return str(review.get("revision") or (context or {}).get("revision") or "")


def signoff(results: dict) -> list[dict]:
    """The three signature lines: ``{"role", "name", "date"}``, blanks where not given."""
    review = results.get("review") or {}
    return [{"role": label, "name": str(review.get(f"{key}_by") or ""),
             "date": str(review.get(f"{key}_date") or "")} for label, key in SIGNATURES]


def policy_label(results: dict) -> str:
    """Policy name with its title and version where results carry ``policy_details``,
    whether some rules are from memory, and the quantities it leaves uncovered."""
    details = results.get("policy_details") or {}
    name = str(results.get("policy") or details.get("name") or DASH)
    extra = []
    if details.get("title"):
        extra.append(str(details["title"]))
    if details.get("version") not in (None, ""):
        extra.append(f"version {details['version']}")
    if details.get("from_memory"):
        extra.append("some rules from memory")
    uncovered = results.get("uncovered_quantities") or []
    if uncovered:
        extra.append("leaves uncovered: " + ", ".join(str(u) for u in uncovered))
    return f"{name} ({'; '.join(extra)})" if extra else name


def eng_scale(values, unit: str | None) -> tuple[float, str]:
    """A common SI prefix for a column of values: (divisor, printable unit).

    Parameters
    ----------
    values
        Numbers in ``unit`` (None and non-numbers ignored).
    unit
        SI unit from results.json.

    Returns
    -------
    tuple
        ``(10**exp, prefix + unit label)`` with exp a multiple of 3 chosen from the
        largest magnitude, e.g. farads around 2.6e-4 -> ``(1e-6, "µF")``; units without
        prefixes (°C, ratios) keep ``(1.0, label)``.
    """
    numbers = [abs(v) for v in values if isinstance(v, (int, float))
               and not isinstance(v, bool) and math.isfinite(v) and v != 0]
    if unit not in _PREFIXABLE or not numbers:
        return 1.0, unit_label(unit)
    exp = int(math.floor(math.log10(max(numbers)) / 3) * 3)
    exp = max(min(exp, 12), -15)
    return 10.0 ** exp, f"{_PREFIXES[exp]}{unit_label(unit)}"


def round_sig(value, digits: int = 4):
    """``value`` rounded to ``digits`` significant figures (None and text unchanged)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return value
    if not math.isfinite(value) or value == 0:
        return value
    return _round_sig(value, digits)
