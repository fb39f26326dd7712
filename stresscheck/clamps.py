"""Leakage-inductance spikes: RCD and voltage (Zener/TVS) clamps and overshoot
allowances, as plain functions vectorised over corners [SI units].

When a switch that carries the primary current I_pk of an isolated converter turns off,
the transformer's leakage inductance L_lk keeps that current flowing until it has handed
it over to the winding it couples to (the secondary of a flyback, the freewheeling
secondary of a push-pull). The drain rises until a clamp takes the current: the clamp
holds the voltage across the winding side at V_c, so the leakage sees V_c − V_r, where
V_r is the voltage of the transformer during the hand-over (flyback: the reflected output
voltage n'·V_o; push-pull: zero, both rectifiers conduct). The leakage current falls
linearly to zero in

    t_s = L_lk·I_pk/(V_c − V_r)                                          [s]

(delayed commutation), delivering the charge Q = I_pk·t_s/2 and the energy

    E = ½·L_lk·I_pk²·V_c/(V_c − V_r)                                     [J]

to the clamp: the leakage energy ½·L_lk·I_pk² plus V_r·Q taken from the magnetizing
energy (R. Ridley, "Flyback converter snubber design", Switching Power Magazine, 2005,
and the usual RCD clamp design notes of controller makers, e.g. "Design guidelines for
off-line flyback converters" application notes — from memory; the relation is also
derived here from the linear fall of the leakage current).

RCD clamp (clamp capacitor C returned to the input rail through the clamp diode, R in
parallel with C): per event the capacitor takes Q and R bleeds it over the time to the
next event T_e = 1/(events per second). With the capacitor at its peak V_p after the
charge and an exponential discharge, x = T_e/(R·C), a = 1 − e^(−x), b = (1 + e^(−x))/2:

    charge balance   C·a·V_p = Q = ½·L_lk·I_pk²/(b·V_p − V_r)
    i.e.             C·a·b·V_p² − C·a·V_r·V_p − ½·L_lk·I_pk² = 0          [V]

(b·V_p, the capacitor voltage mean over the short charge, stands for V_c). For R·C much
longer than T_e (a -> x, b -> 1) this is the familiar energy balance

    V_c²/R = ½·L_lk·I_pk²·f_s·V_c/(V_c − V_r)                            [W]

of the issue text and the notes above. The peak switch voltage is the rail plus the
capacitor's peak plus the clamp diode's forward drop: V_in + V_p + V_d.

Voltage clamp (a Zener or TVS from the drain to the input rail, holding V_z): the switch
peak is V_in + V_z, the clamp power E·f with V_c = V_z; V_z must exceed V_r (else it
conducts the whole off-time).

Overshoot allowance: where no clamp model fits (rectifier ringing of the leakage with
the diode capacitance, a snubber tuned on the bench) the spike adds a fraction a of the
ideal off-state voltage: v_peak = v_ideal·(1 + a) (common practice: an allowance taken
from measurement of a similar design).
"""

from __future__ import annotations

import numpy as np

DEFAULT_DIODE_DROP = 1.0  # [V] clamp diode forward drop at its peak current when the
# design gives none (a fast or ultrafast diode at a few amperes: common practice)


def clamp_energy(l_lk, i_pk, v_clamp, v_reflected):
    """Energy delivered to a clamp per turn-off [J]: E = ½·L_lk·I_pk²·V_c/(V_c − V_r).

    Parameters
    ----------
    l_lk : float or array
        Leakage inductance in series with the switch, referred to its winding [H].
    i_pk : array
        Current in the leakage inductance at turn-off [A].
    v_clamp : array
        Clamp voltage above the input rail during the hand-over [V].
    v_reflected : array
        Voltage across the winding during the hand-over [V] (flyback: reflected output).

    Returns
    -------
    array
        [J]; NaN where v_clamp <= v_reflected (the clamp would conduct all the off-time).
    """
    v_c = np.asarray(v_clamp, dtype=float)
    margin = v_c - np.asarray(v_reflected, dtype=float)
    ok = margin > 0
    safe = np.where(ok, margin, 1.0)
    return np.where(ok, 0.5 * l_lk * np.asarray(i_pk) ** 2 * v_c / safe, np.nan)


def clamp_interval(l_lk, i_pk, v_clamp, v_reflected):
    """Hand-over time of the leakage current [s]: t_s = L_lk·I_pk/(V_c − V_r).

    Parameters as :func:`clamp_energy`; NaN where v_clamp <= v_reflected.
    """
    margin = np.asarray(v_clamp, dtype=float) - np.asarray(v_reflected, dtype=float)
    ok = margin > 0
    return np.where(ok, l_lk * np.asarray(i_pk) / np.where(ok, margin, 1.0), np.nan)


def rcd_clamp_peak(l_lk, i_pk, interval, resistance, capacitance, v_reflected):
    """Peak voltage of an RCD clamp's capacitor above the rail [V].

    Root of C·a·b·V_p² − C·a·V_r·V_p − ½·L_lk·I_pk² = 0 (module notes), with
    x = T_e/(R·C), a = 1 − e^(−x), b = (1 + e^(−x))/2.

    Parameters
    ----------
    l_lk : float or array
        Leakage inductance [H].
    i_pk : array
        Leakage current at turn-off [A].
    interval : array
        Time between clamp events T_e [s] (one switching period per clamp).
    resistance : float
        Clamp resistor [ohm].
    capacitance : float
        Clamp capacitor [F].
    v_reflected : array
        Winding voltage during the hand-over [V].

    Returns
    -------
    array
        V_p [V] (> V_r/b: the clamp voltage always exceeds the reflected voltage).
    """
    x = np.asarray(interval, dtype=float) / (resistance * capacitance)
    e = np.exp(-x)
    ca = capacitance * -np.expm1(-x)  # C·a, accurate for small x
    b = 0.5 * (1.0 + e)
    v_r = np.asarray(v_reflected, dtype=float)
    energy = 0.5 * l_lk * np.asarray(i_pk, dtype=float) ** 2
    return (ca * v_r + np.sqrt((ca * v_r) ** 2 + 4.0 * ca * b * energy)) / (2.0 * ca * b)


def rcd_clamp_state(l_lk, i_pk, interval, resistance, capacitance, v_reflected,
                    floor=0.0):
    """Everything an RCD clamp reports, per corner [SI].

    ``floor`` [V]: the lowest capacitor peak, where the converter itself charges the
    clamp capacitor (push-pull: the off switch's winding carries V_in while the other
    half conducts, so the capacitor never sits below it).

    Returns
    -------
    dict
        ``v_peak`` capacitor peak above the rail [V]; ``v_mean`` its mean over the
        interval, V_p·a/x [V]; ``v_ripple`` peak to peak, V_p·a [V]; ``p_resistor``
        the resistor's power = clamp energy per event / T_e [W]; ``t_s`` the hand-over
        time with V_c = b·V_p [s]; ``i_cap_rms`` the capacitor's rms current [A]:
        the triangular charge pulse (I_pk falling to 0 in t_s) less the resistor's
        current, sqrt(I_pk²·t_s/(3·T_e) − I_R²) with I_R = Q/T_e (the resistor current
        taken as steady, a < 0.5 for a usable clamp).
    """
    interval = np.asarray(interval, dtype=float)
    v_p = np.maximum(rcd_clamp_peak(l_lk, i_pk, interval, resistance, capacitance,
                                    v_reflected), floor)
    x = interval / (resistance * capacitance)
    a = -np.expm1(-x)
    b = 0.5 * (1.0 + np.exp(-x))
    v_c = b * v_p
    t_s = clamp_interval(l_lk, i_pk, v_c, v_reflected)
    q = 0.5 * np.asarray(i_pk) * t_s
    energy = capacitance * a * b * v_p ** 2  # = Q·b·V_p, dissipated in R per event
    i_r = q / interval
    i_rms = np.sqrt(np.maximum(np.asarray(i_pk) ** 2 * t_s / (3 * interval) - i_r ** 2, 0))
    return {"v_peak": v_p, "v_mean": v_p * a / x, "v_ripple": v_p * a, "v_handover": v_c,
            "p_resistor": energy / interval, "t_s": t_s, "i_cap_rms": i_rms}


def voltage_clamp_state(l_lk, i_pk, interval, v_clamp, v_reflected):
    """A voltage (Zener/TVS) clamp per corner [SI].

    Returns
    -------
    dict
        ``v_peak`` = V_z [V]; ``p_clamp`` = E/T_e with E from :func:`clamp_energy`
        (NaN where V_z <= V_r) [W]; ``t_s`` the hand-over time [s].
    """
    interval = np.asarray(interval, dtype=float)
    v_z = np.broadcast_to(np.asarray(v_clamp, dtype=float), interval.shape)
    return {"v_peak": np.where(v_z > v_reflected, v_z, np.nan),
            "p_clamp": clamp_energy(l_lk, i_pk, v_z, v_reflected) / interval,
            "t_s": clamp_interval(l_lk, i_pk, v_z, v_reflected)}


def overshoot_peak(v_ideal, allowance):
    """Peak off-state voltage with an overshoot allowance [V]: v_ideal·(1 + a).

    Parameters
    ----------
    v_ideal : array
        Ideal (spike-free) peak off-state voltage [V].
    allowance : float
        Fraction a of the ideal voltage the spike adds [1].
    """
    return np.asarray(v_ideal, dtype=float) * (1.0 + allowance)
