"""What the HTML report prints beside a check's row: waiver, measured and simulated
values, the rating a part would need, Monte Carlo percentiles, and which losses or
effects the row leaves out. Each field is shown when the check carries it and nothing is
said when it is absent. Text only: values are formatted, never computed.
"""

from __future__ import annotations

import math

from .view import format_value

# Quantities whose value rests on the computed losses: the losses the results list as
# not included are left out of these rows.
LOSS_QUANTITIES = ("p_loss", "t_j", "t_hotspot", "life")
# Quantities a leakage spike would raise (switch, rectifier and clamp voltages).
SPIKE_QUANTITIES = ("v_peak", "v_reverse_peak")
SPIKE_ROLES = ("switch", "rectifier", "freewheel", "reset")


def _finite(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _pct(x, signed=False) -> str:
    return f"{100 * x:+.1f} %" if signed else f"{100 * x:.1f} %"


def spikes_left_out(results: dict) -> bool:
    """True when the results say voltages are before any spike (no spike model ran)."""
    texts = list(results.get("losses_not_included") or ()) + list(
        results.get("conventions") or ())
    return any("spike" in str(t) and ("no " in str(t) or "before" in str(t)
                                      or "not" in str(t)) for t in texts)


def annotations(check: dict, results: dict, spikes: bool | None = None) -> list[dict]:
    """Annotations of one check: ``{"tag": short word, "text": sentence, "cls": css}``.

    Parameters
    ----------
    check
        One check of the results.
    results
        The whole results dict (for ``losses_not_included``).
    spikes
        Whether voltages are before spikes (`spikes_left_out`), if already known.
    """
    unit, q = check.get("unit"), check.get("quantity")

    def value(v):
        return format_value(v, unit, q) if _finite(v) else "—"

    out = []
    waiver = check.get("waiver")
    if isinstance(waiver, dict):
        text = f"waived: {waiver.get('reason') or 'no reason given'}"
        if waiver.get("approved_by"):
            text += f"; approved by {waiver['approved_by']}"
        if waiver.get("date"):
            text += f" on {waiver['date']}"
        if waiver.get("expires"):
            text += f"; expires {waiver['expires']}"
        out.append({"tag": "waived", "text": text, "cls": "waived"})
    measured = check.get("measured")
    if isinstance(measured, dict):
        text = f"measured {value(measured.get('value'))}"
        extra = [f"{k.replace('_', ' ')} {measured[k]}" for k in
                 ("mode", "instrument", "probe_point", "date") if measured.get(k)]
        if extra:
            text += " (" + ", ".join(extra) + ")"
        out.append({"tag": "measured", "text": text, "cls": "measured"})
    simulated = check.get("simulated")
    if isinstance(simulated, dict):
        text = f"simulated {value(simulated.get('value'))}"
        if _finite(simulated.get("difference")):
            text += f", computed {_pct(simulated['difference'], True)} against it"
        if _finite(simulated.get("tolerance")):
            text += f" (tolerance ±{_pct(simulated['tolerance'])})"
        out.append({"tag": "simulated", "text": text, "cls": "simulated"})
    if _finite(check.get("rating_needed")):
        out.append({"tag": "needs", "cls": "needs",
                    "text": f"a part would need a rating of {value(check['rating_needed'])}"})
    mc = check.get("monte_carlo")
    if isinstance(mc, dict):
        keys = ("min", "p50", "max") if "min" in mc else ("p50", "p95", "p99", "max")
        parts = [f"{k} {value(mc.get(k))}" for k in keys if _finite(mc.get(k))]
        if _finite(mc.get("p_exceed")):
            below = " below the minimum" if "min" in mc else ""
            parts.append(f"P(exceed) {_pct(mc['p_exceed'])}{below}")
        n = mc.get("samples")
        out.append({"tag": "Monte Carlo", "cls": "mc",
                    "text": f"Monte Carlo{f' ({n} samples)' if n else ''}: "
                            + ", ".join(parts)})
    method = check.get("method")
    if method and method != "corners":
        out.append({"tag": str(method), "cls": "mc", "text": f"stress set by {method}"})
    missing = [str(x) for x in results.get("losses_not_included") or ()]
    if q in LOSS_QUANTITIES and missing:
        out.append({"tag": "excl. losses", "cls": "excl",
                    "text": "leaves out: " + "; ".join(missing)})
    if spikes is None:
        spikes = spikes_left_out(results)
    if spikes and q in SPIKE_QUANTITIES and check.get("role") in SPIKE_ROLES:
        out.append({"tag": "before spikes", "cls": "excl",
                    "text": "voltage before any leakage spike or ringing"})
    return out
