"""Switching-related losses of MOSFETs and diodes: plain relations, vectorised.

Every function takes (N,) arrays (corners or samples) or scalars and returns the same
shape; SI units throughout. Energies are per event and per device [J]; powers are
energy × events per second [W]. Which events happen at a corner (hard or soft turn-on,
which diode a switch commutates) is found from the model's waveforms by
``switching.py``; this module holds only the relations.

Main sources
------------
[MUR] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics: Converters,
      Applications and Design*, 3rd ed., Wiley 2003, §2-5 "Switching losses" (the
      linearised switching characteristic, eq. 2-6) — from memory.
[GPK] D. Graovac, M. Pürschel, A. Kiep, "MOSFET power losses calculation using the
      data-sheet parameters", manufacturer application note, 2006: §3 (switching with
      the recovery charge of the commutated diode, the diode's own recovery energy,
      output capacitance), §4 (gate charge and gate-drive loss) — from memory.
[BAL] L. Balogh, "Fundamentals of MOSFET and IGBT gate driver circuits", semiconductor
      manufacturer application report, 2002 (rev. 2017), §3 "MOSFET technology",
      turn-on and turn-off procedure (switching intervals from the gate charges and the
      gate current at the Miller plateau) — from memory, equation numbers not confirmed.
[SVR] J. A. Sabaté, V. Vlatković, R. B. Ridley, F. C. Lee, B. H. Cho, "Design
      considerations for high-voltage high-power full-bridge zero-voltage-switched PWM
      converter", IEEE APEC 1990, pp. 275–284 (the energy condition for zero-voltage
      transitions) — from memory.
"""

from __future__ import annotations

import numpy as np

# Share of Q_rr·V_R dissipated in the recovering diode itself [1]: the triangular
# recovery-current approximation of [GPK] §3 gives E_rec ≈ ¼·Q_rr·V_R (common practice
# for soft-recovery silicon diodes; snappy diodes dissipate less, but ring more).
DIODE_RECOVERY_SHARE = 0.25

# Gate drive voltage assumed when the design gives no [converter] gate_voltage [V], per
# MOSFET technology (common practice: silicon 10 V, silicon carbide 18 V, GaN 6 V).
DEFAULT_GATE_VOLTAGE = {"si": 10.0, "sic": 18.0, "gan": 6.0}


def overlap_energy(v_off, i_on, i_off, t_rise, t_fall):
    """Energy of one hard turn-on plus one hard turn-off, linear transitions [J].

    Notes
    -----
    E = ½·V_off·(I_on·t_rise + I_off·t_fall): the linearised clamped (inductive)
    switching characteristic, where at turn-on the current rises at full voltage and
    then the voltage falls at full current (and the reverse at turn-off), each
    linearly, t_rise and t_fall being the whole crossover intervals ([MUR] §2-5,
    fig. 2-6 and eq. 2-6; [GPK] §3 with the current-rise plus voltage-fall times).
    A sheet's rise and fall times stand for those intervals here (the usual hand
    estimate, common practice; the sheet's values are for its own test circuit).
    Averaged over a period, P = E·f_s, the relation
    P = ½·V_off·(I_on·t_rise + I_off·t_fall)·f_s.

    Parameters
    ----------
    v_off : array_like
        Blocking voltage before turn-on / after turn-off [V].
    i_on, i_off : array_like
        Device current just after turn-on and just before turn-off [A]; magnitudes.
    t_rise, t_fall : float
        Transition times at turn-on and turn-off [s] (maximum values of the sheet).

    Returns
    -------
    ndarray
        Switching energy per period [J].
    """
    v = np.asarray(v_off, dtype=float)
    return 0.5 * v * (np.abs(i_on) * t_rise + np.abs(i_off) * t_fall)


def overlap_loss(v_off, i_on, i_off, t_rise, t_fall, f_s):
    """Overlap (V–I crossover) loss P = ½·V_off·(I_on·t_rise + I_off·t_fall)·f_s [W].

    See ``overlap_energy`` for the source ([MUR] §2-5, eq. 2-6).

    Parameters
    ----------
    v_off : array_like
        Blocking voltage before the transition [V].
    i_on, i_off : array_like
        Current just after turn-on and just before turn-off [A].
    t_rise, t_fall : float
        Transition times [s].
    f_s : array_like
        Switching frequency [Hz].

    Returns
    -------
    ndarray
        Mean loss [W].
    """
    return overlap_energy(v_off, i_on, i_off, t_rise, t_fall) * np.asarray(f_s, dtype=float)


def gate_charge_times(q_gd, q_gs, v_plateau, v_drive, r_gate, q_gs2=None):
    """Transition times of a hard switching event from the gate charge [s].

    Notes
    -----
    While the drain current and voltage change, the gate sits near the Miller plateau
    V_pl and the driver moves the charge Q_sw = Q_gs2 + Q_gd (from the threshold to the
    end of the plateau) with the current through the gate-loop resistance
    R = R_drive + R_g ([BAL] §3; [GPK] §3 — from memory):

    * turn-on: I_G,on = (V_drive − V_pl)/R, t_rise = Q_sw/I_G,on;
    * turn-off: I_G,off = V_pl/R (the driver pulls the gate to 0 V), t_fall = Q_sw/I_G,off.

    Without Q_gs2 on the sheet, Q_gs2 = Q_gs/2 (the charge from threshold to plateau
    taken as half of the gate-source charge; common practice). These times stand for
    the whole crossover intervals of ``overlap_energy``.

    Parameters
    ----------
    q_gd : float
        Gate-drain (Miller) charge [C].
    q_gs : float
        Gate-source charge up to the plateau [C].
    v_plateau : float
        Miller-plateau gate voltage [V].
    v_drive : float
        Gate drive voltage (swing, off state at 0 V) [V]; above ``v_plateau``.
    r_gate : float
        Total gate-loop resistance, driver output and external plus internal [ohm].
    q_gs2 : float, optional
        Gate-source charge from threshold to plateau [C].

    Returns
    -------
    tuple of float
        (t_rise, t_fall) [s].
    """
    if v_drive <= v_plateau:
        raise ValueError(f"gate drive {v_drive:g} V does not reach the plateau "
                         f"{v_plateau:g} V")
    q_sw = q_gd + (q_gs2 if q_gs2 is not None else 0.5 * q_gs)
    i_on = (v_drive - v_plateau) / r_gate
    i_off = v_plateau / r_gate
    return q_sw / i_on, q_sw / i_off


def oss_energy(v, c_oss=None, e_oss=None, q_oss=None, v_ref=None):
    """Energy stored in the output capacitance at drain-source voltage ``v`` [J].

    Notes
    -----
    Three forms, the first given wins:

    * ``e_oss`` stated at ``v_ref``: E(V) = e_oss·(V/v_ref)² above v_ref, and e_oss
      below it. E(V) = ∫₀^V C(u)·u du rises with V, so e_oss bounds it from above below
      v_ref; above v_ref the falling capacitance makes the square law an upper bound
      too (conservative both ways, common practice).
    * ``c_oss`` as an energy-equivalent capacitance C_o(er): E = ½·C_o(er)·V² (the
      definition of C_o(er), [GPK] §3). A small-signal C_oss at a low test voltage
      overstates the energy of a superjunction device; at a high test voltage it
      understates it: an energy-equivalent value is wanted.
    * ``q_oss`` stated at ``v_ref``: with the charge-equivalent capacitance
      C_o(tr) = Q_oss/v_ref, E = ½·C_o(tr)·max(V, v_ref)². For a capacitance that falls
      with voltage E(V) ≤ ½·Q(V)·V (the charge sits at the low-voltage end), so
      ½·Q_oss·v_ref bounds E below v_ref, and C_o(tr) ≥ C(u) above it (conservative).

    Parameters
    ----------
    v : array_like
        Drain-source voltage [V].
    c_oss : float, optional
        Energy-equivalent output capacitance [F].
    e_oss : float, optional
        Stored energy at ``v_ref`` [J].
    q_oss : float, optional
        Output charge at ``v_ref`` [C].
    v_ref : float, optional
        Voltage at which e_oss or q_oss is stated [V].

    Returns
    -------
    ndarray
        Stored energy per device [J]; NaN when no value is given.
    """
    v = np.abs(np.asarray(v, dtype=float))
    if e_oss is not None and v_ref:
        return np.where(v > v_ref, e_oss * (v / v_ref) ** 2, np.where(v > 0, e_oss, 0.0))
    if c_oss is not None:
        return 0.5 * c_oss * v ** 2
    if q_oss is not None and v_ref:
        return np.where(v > 0, 0.5 * (q_oss / v_ref) * np.maximum(v, v_ref) ** 2, 0.0)
    return np.full(v.shape, np.nan)


def commutation_energy(v_r, q_rr=0.0, c_cap=0.0):
    """Energy a hard turn-on spends on the diode it commutates [J], per diode.

    Notes
    -----
    E = Q_rr·V_R + ½·C·V_R²: the recovery charge flows through the switch while the
    switch still holds (about) the full blocking voltage ([GPK] §3, "E_on,rr ≈ Q_rr·V_DD"),
    and the diode's junction capacitance (or a synchronous MOSFET's output capacitance)
    is charged to V_R through the switch channel, which dissipates the energy it stores
    for a linear capacitance (charging from a stiff source, common practice). For a
    transformer-coupled diode the charge reflects by the turns ratio and the voltage by
    its inverse, so V_R is the diode's own reverse voltage everywhere.

    Parameters
    ----------
    v_r : array_like
        Reverse voltage across the diode after commutation [V].
    q_rr : float
        Reverse-recovery charge [C] (0 for Schottky diodes).
    c_cap : float
        Junction (or output) capacitance, energy equivalent [F].

    Returns
    -------
    ndarray
        Energy per commutation [J].
    """
    v = np.abs(np.asarray(v_r, dtype=float))
    return q_rr * v + 0.5 * c_cap * v ** 2


def diode_recovery_energy(q_rr, v_r):
    """Energy dissipated in the recovering diode itself per turn-off [J].

    Notes
    -----
    E_rec ≈ ¼·Q_rr·V_R: triangular reverse-recovery current, the voltage building up
    during its fall ([GPK] §3, the diode's turn-off energy — from memory; common
    practice for soft-recovery diodes). The part that is dissipated in the switch is
    counted there (``commutation_energy``), so the two add to more than Q_rr·V_R: both
    are upper estimates.

    Parameters
    ----------
    q_rr : float
        Reverse-recovery charge [C].
    v_r : array_like
        Reverse voltage after recovery [V].

    Returns
    -------
    ndarray
        Energy per recovery [J].
    """
    return DIODE_RECOVERY_SHARE * q_rr * np.abs(np.asarray(v_r, dtype=float))


def gate_drive_loss(q_g, v_gs, f_s):
    """Gate-drive power P = Q_g·V_gs·f_s [W], per device.

    Notes
    -----
    The driver delivers Q_g at V_gs each period and takes it back to ground; the energy
    is dissipated in the gate resistances and the driver, not in the channel ([GPK] §4,
    common practice). Reported per switch as a driver loss, not added to its junction.

    Parameters
    ----------
    q_g : float
        Total gate charge [C].
    v_gs : float
        Gate drive voltage (swing) [V].
    f_s : array_like
        Switching frequency [Hz].

    Returns
    -------
    ndarray
        Driver power [W].
    """
    return q_g * v_gs * np.asarray(f_s, dtype=float)


def zvs_energy_needed(e_oss_per_switch, switches_per_side=1):
    """Energy a leg transition takes from the inductive current [J].

    Notes
    -----
    Across a leg transition the outgoing switch's output capacitance charges from 0 to
    V_in while the incoming one discharges from V_in to 0; the inductive current must
    deliver E = 2·E_oss(V_in) (for a linear capacitance C_oss·V_in², the capacitive
    energy of [SVR]'s condition ½·L·I² ≥ ½·(2·C_oss)·V_in²; the transformer's winding
    capacitance is left out here).

    Parameters
    ----------
    e_oss_per_switch : array_like
        Stored output-capacitance energy of one device at V_in [J].
    switches_per_side : int
        Paralleled devices on each side of the leg.

    Returns
    -------
    ndarray
        Energy needed [J].
    """
    return 2.0 * switches_per_side * np.asarray(e_oss_per_switch, dtype=float)


def zvs_energy_available(l, i):
    """Energy ½·L·I² of an inductance carrying ``i`` at the transition [J].

    Parameters
    ----------
    l : array_like
        Inductance that drives the transition [H].
    i : array_like
        Its current at the start of the transition [A].

    Returns
    -------
    ndarray
        Energy [J].
    """
    return 0.5 * np.asarray(l, dtype=float) * np.asarray(i, dtype=float) ** 2


def residual_turn_on_energy(e_need, e_avail):
    """Energy lost at a turn-on that the inductive current could not make fully soft [J].

    Notes
    -----
    Zero-voltage turn-on when E_avail ≥ E_need ([SVR]); otherwise, for a linear leg
    capacitance 2·C resonating with the inductance, the current falls to zero after the
    node has moved ΔV = V·sqrt(E_avail/E_need), and the switch turns on hard at the
    residual V_r = V − ΔV: discharging its own capacitance and charging the
    complementary one through the channel dissipates C·V_r² =
    E_need·(1 − sqrt(E_avail/E_need))² (derived here from the linear resonant
    transition; common practice). It is E_need (the hard-switched leg, 2·E_oss) at
    E_avail = 0 and zero at the ZVS boundary.

    Parameters
    ----------
    e_need : array_like
        ``zvs_energy_needed`` [J].
    e_avail : array_like
        ``zvs_energy_available`` [J].

    Returns
    -------
    ndarray
        Energy dissipated at the turn-on [J].
    """
    e_need = np.asarray(e_need, dtype=float)
    frac = np.clip(np.divide(e_avail, e_need, out=np.ones_like(e_need), where=e_need > 0),
                   0.0, 1.0)
    return e_need * (1.0 - np.sqrt(frac)) ** 2
