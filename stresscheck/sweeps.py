"""Stress across the input-voltage range, for the reports' pictures.

For each check of a switch or rectifier on a key quantity, the corners that differ from
its governing corner only in input voltage (same load, temperature, tolerances and
switching frequency) are selected and their computed values listed in input-voltage
order. This is a selection of values the engine already computed; nothing is evaluated
again. The reports plot these lists and draw the check's allowed value as the limit.
"""

from __future__ import annotations

import numpy as np

SWEEP_KEY = "input_voltage"  # the corner column swept
SWEPT_ROLES = ("switch", "rectifier")
SWEPT_QUANTITIES = ("v_peak", "v_reverse_peak", "i_peak", "i_rms", "i_avg", "t_j")


def _value(x) -> float | None:
    return float(x) if np.isfinite(x) else None


def input_sweeps(evaluation, checks) -> list[dict]:
    """One entry per swept check: its values at the governing load and temperature.

    Parameters
    ----------
    evaluation
        The engine's evaluation (``corners`` and ``stresses``; values [SI], °C for
        temperatures).
    checks
        The checks (each with ``ref``, ``role``, ``quantity``, ``unit``, ``corner``).

    Returns
    -------
    list of dict
        ``{ref, quantity, unit, corner, corners, input_voltage, stress}``: ``corner`` the
        check's governing corner, ``corners`` the ids of the selected corners in rising
        input voltage [V], ``stress`` the values there (None where not computed). Only the
        corners that count for the quantity are listed (current and thermal stresses skip
        the input surge).
    """
    corners = evaluation.corners
    if SWEEP_KEY not in corners.columns:
        return []
    vin = np.asarray(corners.columns[SWEEP_KEY], dtype=float)
    others = [np.asarray(col) for name, col in corners.columns.items() if name != SWEEP_KEY]
    index = {cid: i for i, cid in enumerate(corners.ids)}
    stresses = {(s.ref, s.quantity): s for s in evaluation.stresses}
    out = []
    for chk in checks:
        if chk.role not in SWEPT_ROLES or chk.quantity not in SWEPT_QUANTITIES:
            continue
        s = stresses.get((chk.ref, chk.quantity))
        g = index.get(chk.corner)
        if s is None or g is None:
            continue
        same = np.asarray(s.applicable, dtype=bool).copy()
        for col in others:
            same &= col == col[g]
        idx = np.flatnonzero(same)
        idx = idx[np.argsort(vin[idx], kind="stable")]
        if len(idx) < 2:
            continue
        out.append({"ref": chk.ref, "quantity": chk.quantity, "unit": chk.unit,
                    "corner": chk.corner, "corners": [corners.ids[i] for i in idx],
                    "input_voltage": [float(vin[i]) for i in idx],
                    "stress": [_value(s.values[i]) for i in idx]})
    return out
