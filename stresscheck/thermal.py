"""Thermal relations shared by every device kind, vectorised over corners.

The steady-state thermal resistance chain, and the thermal network: junction–case–
sink–ambient with heatsinks shared by several devices, and current ratings derated with
case temperature. The losses themselves are in each kind's module under ``devices/``,
the switching-related relations in ``losses.py``, core and copper losses of magnetics in
``magnetics_loss.py``.
"""

from __future__ import annotations

import numpy as np

DEFAULT_HOT = 150.0  # [degC] junction temperature assumed when no thermal path is given


def junction_temperature(t_ambient, p_loss, r_th):
    """T = T_a + P·R_th (steady-state thermal resistance chain, common practice).

    Parameters
    ----------
    t_ambient : float or ndarray
        Ambient temperature [degC].
    p_loss : float or ndarray
        Dissipation [W].
    r_th : float
        Thermal resistance to ambient [K/W].

    Returns
    -------
    ndarray
        Temperature [degC].
    """
    return t_ambient + p_loss * r_th


def sink_temperature(t_ambient, r_sink, p_on_sink):
    """Heatsink temperature T_s = T_a + R_th,sa·ΣP [degC] (common practice).

    Parameters
    ----------
    t_ambient : array_like
        Ambient temperature [degC].
    r_sink : float
        Sink to ambient thermal resistance [K/W].
    p_on_sink : array_like
        Sum of the losses of every device mounted on the sink [W].

    Returns
    -------
    ndarray
        Sink temperature [degC].
    """
    return np.asarray(t_ambient, dtype=float) + r_sink * np.asarray(p_on_sink, dtype=float)


def network_temperatures(t_ambient, losses, paths, sinks):
    """Junction (or hot-spot) temperatures of devices, some sharing heatsinks [degC].

    Notes
    -----
    The steady-state thermal resistance network of a heatsink with several devices:
    the sink sits at T_s = T_a + R_sa·Σ_i n_i·P_i (every device on it, n_i devices per
    position), each device at T_j,i = T_s + P_i·(R_jc,i + R_cs,i); a device on no
    sink at T_j = T_a + P·R_ja (series thermal resistances; e.g. Mohan, Undeland &
    Robbins, *Power Electronics*, 3rd ed., ch. 29, "Heat sinks" — from memory). One
    evaluation for given losses; where losses depend on temperature the caller
    iterates (fixed point).

    Parameters
    ----------
    t_ambient : array_like
        (N,) ambient temperature [degC].
    losses : dict
        key -> (N,) loss per device [W].
    paths : dict
        key -> (r_to_sink_or_ambient [K/W], sink id or None, devices n).
    sinks : dict
        sink id -> sink to ambient thermal resistance [K/W].

    Returns
    -------
    tuple
        (temperatures: key -> (N,) [degC], sink temperatures: id -> (N,) [degC]).
    """
    t_a = np.asarray(t_ambient, dtype=float)
    total = {sid: np.zeros_like(t_a) for sid in sinks}
    for key, (_, sid, n) in paths.items():
        if sid is not None:
            total[sid] = total[sid] + n * losses[key]
    t_sink = {sid: sink_temperature(t_a, r, total[sid]) for sid, r in sinks.items()}
    temps = {}
    for key, (r, sid, _) in paths.items():
        base = t_sink[sid] if sid is not None else t_a
        temps[key] = base + losses[key] * r
    return temps, t_sink


def derated_current(i_rated, t_rated, t_j_max, t_case):
    """Continuous current rating at case temperature ``t_case`` [A] (common practice).

    Notes
    -----
    The rating falls linearly from its stated value at case temperature t_rated to zero
    at t_j_max: I(T_c) = I_rated·(T_j,max − T_c)/(T_j,max − t_rated), the straight-line
    derating curve of current versus case temperature that semiconductor sheets draw
    (common practice); not above I_rated below t_rated, not below zero.

    Parameters
    ----------
    i_rated : float
        Sheet rating [A].
    t_rated : float
        Case temperature of the sheet rating (25 °C usually, 100 °C on some sheets) [degC].
    t_j_max : float
        Maximum junction temperature [degC].
    t_case : array_like
        Solved case temperature [degC].

    Returns
    -------
    ndarray
        Derated rating [A].
    """
    frac = (t_j_max - np.asarray(t_case, dtype=float)) / (t_j_max - t_rated)
    return i_rated * np.clip(frac, 0.0, 1.0)
