"""Helpers of the decks' slow-mode shifts: period means at the end of a run, and the
averaged equilibrium of an output L-C filter and its input filter, shared by the decks
whose output inductor ``lout`` is fed from node ``rect`` (bridges, forward, buck).
"""

from __future__ import annotations

import numpy as np

from .circuit import Circuit
from .elements import Layout


def period_ends(w, x: np.ndarray, ts: float) -> tuple[float, float]:
    """The value of ``x`` at the end of a run and its change per period.

    Parameters
    ----------
    w : measurement window
        ``mean_between(x, t0, t1)`` and times ``t`` [s] (``simulate`` passes its window).
    x : numpy.ndarray
        Samples of one quantity over the window [V or A].
    ts : float
        Switching period [s].

    Returns
    -------
    (float, float)
        The last period's mean extrapolated half a period with the period before, and
        the last period's mean less the one before [V or A].
    """
    t1 = w.t[-1]
    last = w.mean_between(x, t1 - ts, t1)
    before = w.mean_between(x, t1 - 2 * ts, t1 - ts)
    return 1.5 * last - 0.5 * before, last - before


def output_filter_shift(c: Circuit, lay: Layout, w) -> dict[str, float]:
    """Shift of the output L-C and input filter to their averaged equilibrium [A, V].

    For decks whose output inductor ``lout`` is fed from node ``rect`` (bridges,
    forward, buck). With a light load the L-C filter rings for hundreds of periods
    (Q = R·sqrt(C/L) reaches 10 or more). Over whole periods its averaged equilibrium
    is i_L = <v_rect>/(R_load + DCR), v_C = R_load·i_L with the rectified voltage
    <v_rect> of the last period (scaled as if the bus sat at v_in); the drops' change
    with current is left to the next run. The bus settles at v_in, the choke current at
    the converter's mean draw scaled by the same ratio.

    Parameters
    ----------
    c : Circuit
    lay : Layout
        Names of the netlist of the run.
    w : measurement window
        The end of the run (see :func:`period_ends`).

    Returns
    -------
    dict of str to float
        Shift by IC key: ``lout``, ``lch`` [A], ``cout`` and ``cin`` (half-bridge
        ``ctop`` and ``cbot``, half each) [V].
    """
    ts = 1.0 / c.f_sw
    t1 = w.t[-1]
    v_bus = w["v(bus)"]
    split = ("split-capacitor", 0) in lay.caps
    cap_sense = lay.caps[("split-capacitor", 0) if split else ("input-capacitor", 0)][0]
    i_choke = w["i(lch)"]
    i_draw = i_choke + (c.v_in - v_bus) / lay.r_damp - w[f"i({cap_sense})"]
    scale = c.v_in / w.mean_between(v_bus, t1 - ts, t1)  # v_rect follows the bus
    _, _, _, cp, cm = lay.caps[("output-capacitor", 0)]
    i_l = period_ends(w, w["i(lout)"], ts)[0]
    i_eq = scale * w.mean_between(w["v(rect)"], t1 - ts, t1) / (lay.r_load + c.dcr_out)
    v_c = w[f"v({cp})"] - w[f"v({cm})"]
    filters = {"lout": i_eq - i_l,
               "cout": lay.r_load * i_eq - period_ends(w, v_c, ts)[0],
               "lch": (period_ends(w, i_draw, ts)[0] * i_eq / i_l
                       - period_ends(w, i_choke, ts)[0])}
    dv_bus = c.v_in - period_ends(w, v_bus, ts)[0]
    if split:
        filters.update(ctop=dv_bus / 2, cbot=dv_bus / 2)
    else:
        filters["cin"] = dv_bus
    return filters


def mean_output_voltage(w) -> float:
    """Mean output voltage over the window [V], the steady-state estimate of decks whose
    filters :func:`output_filter_shift` settles.

    Parameters
    ----------
    w : measurement window

    Returns
    -------
    float
        Trapezoidal mean of ``v(out)`` over the window [V].
    """
    return w.mean(w["v(out)"])
