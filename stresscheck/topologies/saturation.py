"""Saturation roll-off of the inductors: the inductance at the operating current.

Where an inductor's sheet gives ``inductance_vs_current`` (the fraction of its inductance
kept at a current through one device), the converter model is solved with the
inductance at the peak current of that inductor over the whole switching period (and,
for a line-cycle model, over the whole line cycle): the fixed point

    L = L_0 · f(I_pk(L))

per corner, with L_0 the corner's inductance (its tolerance included) and f the sheet's
table. A soft-saturating core's inductance falls as the current rises, so L(I_pk) is the
lowest inductance met anywhere on the swing: the ripple ΔI = V·t/L(I_pk) (Faraday's law
v = L·di/dt with L held at its lowest value; for a buck ΔI = (V_in − V_o)·D·T_s/L,
Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed., §2.3) is never below
the one of the exact integration of di/dt = v/L(i) across the swing: this overstates the
ripple (conservative), by the ratio of the mean inductance over the swing to its value
at the peak.

The map L -> L_0·f(I_pk(L)) is increasing (a lower L gives a higher peak, a lower
fraction), so iterating from L_0 falls monotonically to the largest fixed point; the
fraction is held flat beyond the table's last point (a note says where the peak lies
beyond it), so the sequence is bounded below and settles. The engine's electro-thermal
loop starts each pass from the previous pass's solution (``Inductor.l_start``), which
lies next to the new one (the temperatures move only the drops), so a pass settles in
one or two evaluations; from just below the fixed point the increasing map rises to it. A corner that has not settled
after ``MAX_ITER`` passes is refused (``StageResult.invalid``) rather than reported.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .base import Stage, StageResult

REL_TOL = 1e-6  # [1] relative change of L between passes at which the fixed point holds
MAX_ITER = 200


def solve(stage: Stage, evaluate_once) -> StageResult:
    """Evaluate ``stage`` with each inductor's inductance at its peak current.

    Parameters
    ----------
    stage : Stage
        The per-corner parameters; an inductor with ``roll_off`` has ``l`` [H] at zero
        current (the corner's inductance) and ``roll_off(i)`` the fraction [1] kept at
        the current ``i`` [A] of one device.
    evaluate_once : callable
        Stage -> StageResult, the topology's model.

    Returns
    -------
    StageResult
        The model's result at the settled inductances; ``inductance`` holds them [H]
        per device, (N,), by position key, and ``notes`` says how they were taken.
    """
    rolled = [k for k, ind in enumerate(stage.inductors) if ind.roll_off is not None]
    if not rolled:
        return evaluate_once(stage)
    base = [np.asarray(ind.l, dtype=float) for ind in stage.inductors]
    current = list(base)
    for k in rolled:  # a warm start, within the table's range of L
        ind = stage.inductors[k]
        if ind.l_start is not None:
            current[k] = np.clip(ind.l_start, base[k] * min(ind.roll_off.y), base[k])
    stage = replace(stage, inductors=[replace(ind, l=l)
                                      for ind, l in zip(stage.inductors, current)])
    result = evaluate_once(stage)
    settled = np.zeros(np.shape(stage.v_in), bool)
    for _ in range(MAX_ITER):
        new = list(current)
        for k in rolled:
            ind = stage.inductors[k]
            i_pk = result.currents[ind.key].peak() / ind.devices
            # a corner the model cannot solve (NaN) keeps its inductance: the model's
            # own reasons report it
            new[k] = np.where(np.isfinite(i_pk), base[k] * ind.roll_off(i_pk), current[k])
        step = np.max([np.abs(new[k] - current[k]) / base[k] for k in rolled], axis=0)
        settled = ~(step > REL_TOL)
        if settled.all():
            break
        current = new
        stage = replace(stage, inductors=[replace(ind, l=l)
                                          for ind, l in zip(stage.inductors, current)])
        result = evaluate_once(stage)
    if not settled.all():
        result.invalid.append((~settled, "the inductor's saturation roll-off "
                               "(inductance_vs_current) does not settle: the ripple keeps "
                               "growing as the inductance falls"))
    for k in rolled:
        ind = stage.inductors[k]
        result.inductance[ind.key] = current[k]
        i_pk = result.currents[ind.key].peak() / ind.devices
        beyond = i_pk > ind.roll_off.x[-1]
        note = (f"{ind.ref}: inductance taken at the peak current over the whole swing "
                "from inductance_vs_current (conservative: overstates the ripple of a "
                "soft roll-off)")
        if beyond.any():
            note += (f"; at {int(beyond.sum())} corner(s) the peak lies beyond the "
                     "table's last current, where its last fraction is held")
        result.notes.append(note)
    return result
