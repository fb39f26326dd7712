"""Switching-related and core losses of a stage solved over a line cycle (PFC boost).

The line-cycle model (:mod:`stresscheck.pfc_line`) solves one switching period at each
of M line angles θ_k, equally spaced in line phase; its waveform grid spans the line
cycle, so the switching events cannot be read off that grid the way ``switching.py``
does for a switching-period model. Here each angle's switching period is taken by
itself, with the relations of ``losses.py`` and ``magnetics_loss.py``, and the loss is
the line-cycle average

    P = (1/M)·Σ_k E(θ_k)·f_s,

the midpoint rule of (1/T_line)·∫ E(θ(t))·f_s dt over a cycle uniform in line phase
(each angle stands for the T_line/M·f_s switching periods of its slice).

Events per angle (the boost cell of the model: switch, boost diode, inductor):

* continuous conduction (CCM): hard turn-on at I_on = i_start (the valley of the
  inductor current), hard turn-off at I_off = i_peak; the turn-on commutates the boost
  diode carrying i_start: its recovery charge Q_rr·min(1, I_F/I_F,avg,rated) and its
  junction capacitance C_j, both charged to V_R through the switch ([GPK] in
  ``losses.py``; the charge-control scaling of ``switching.py``), and the diode's own
  recovery ¼·Q_rr·V_R;
* discontinuous conduction (DCM): the switch turns on at zero current (no turn-on
  overlap, no recovery charge: the diode's current has died out), still discharging
  its C_oss and charging the idle diode's C_j; both from the peak blocking voltage
  (the valley of the idle ringing is not credited: conservative, as elsewhere);
* every transition at the position's peak blocking voltage (``StageResult.v_block``:
  the bus peak plus the diode drop for the switch, the bus peak for the diode), not the
  local bus voltage at θ: conservative by the line-frequency ripple;
* the switch is gated (its gate charged, its C_oss discharged and the diode's C_j
  charged) at every angle, also where the rectified voltage does not exceed the bridge
  drops and the model gives no on-time (the controller keeps switching through the zero
  crossing; conservative);
* the bridge diodes turn off once per line cycle, at the zero crossing; their own
  recovery ¼·Q_rr·V_R·f_line is counted with the stored charge scaled to the smallest
  non-zero local current of the sampled cycle (the current falls to zero between that
  sample and the crossing) and V_R the line crest: both conservative, the loss is
  small (``bridge_recovery``).

Core loss of the boost inductor: at each angle, the flux minor loop of the switching
period (B = L·i/(N·A_e): swing L·(i_peak − i_start)/(N·A_e), rising over t_on and
falling over t_off, flat over the DCM idle time) by the iGSE over that period, averaged
over the angles; plus the line-frequency loop of the local average flux over the
line cycle, by the iGSE with T_line as the period ([iGSE] in ``magnetics_loss.py``,
which splits a waveform into its major and minor loops, each with its own swing).
"""

from __future__ import annotations

import numpy as np

from . import losses as L
from . import magnetics_loss
from .switching import EPS_REL, SCHOTTKY, GateDrive, SwitchingLosses, e_oss_of, transition_times

SWITCH = ("switch", 0)
DIODE = ("rectifier", 0)


def line_average(energy, f_s) -> np.ndarray:
    """Line-cycle average of a per-switching-period energy [W], (N,).

    P = f_s·(1/M)·Σ_k E(θ_k): the angles are equally spaced in line phase, so the mean
    over them is the midpoint rule of the time average over one line cycle.

    Parameters
    ----------
    energy : array_like
        (N, M) energy per switching period at each line angle [J].
    f_s : array_like
        (N,) switching frequency [Hz].

    Returns
    -------
    ndarray
        (N,) mean power [W].
    """
    return np.asarray(energy, dtype=float).mean(axis=1) * np.asarray(f_s, dtype=float)


def boost_cell_energies(v_sw, v_d, i_start, i_peak, dcm, gated, *, t_rise=None,
                        t_fall=None, e_oss=None, q_rr=None, c_j=None, i_f_rated=None,
                        switch_devices=1, diode_devices=1):
    """Energies of one switching period of a boost cell at each line angle [J].

    Parameters
    ----------
    v_sw, v_d : array_like
        (N, 1) or (N, M) blocking voltage of the switch and reverse voltage of the
        diode at the transitions [V].
    i_start, i_peak : array_like
        (N, M) inductor current at turn-on and at turn-off [A] (position totals).
    dcm : array_like
        (N, M) bool: the inductor current is zero at turn-on.
    gated : array_like
        (N, M) bool: the switch is turned on at that angle.
    t_rise, t_fall : float, optional
        Transition times [s] (``losses.overlap_energy``); None leaves that part out.
    e_oss : array_like, optional
        E_oss(v_sw) of one switch device [J].
    q_rr, c_j : float, optional
        Recovery charge [C] and junction capacitance [F] of one diode device.
    i_f_rated : float, optional
        The diode's rated mean forward current [A] (reference of Q_rr scaling).
    switch_devices, diode_devices : int
        Devices sharing each position's current.

    Returns
    -------
    dict
        Per device, (N, M) [J]: ``overlap`` (½·V·(I_on·t_rise + I_off·t_fall), [MUR]
        eq. 2-6), ``c_oss`` (E_oss(V)), ``commutation`` (Q_rr·share·V_R + ½·C_j·V_R²
        of the diode, shared by the switch devices, [GPK] §3) in each switch device;
        ``recovery`` (¼·Q_rr·share·V_R, [GPK] §3) in each diode device, when
        ``q_rr`` is given.
    """
    dcm = np.asarray(dcm, dtype=bool)
    gated = np.asarray(gated, dtype=bool)
    ccm = gated & ~dcm & (np.asarray(i_start) > 0)
    i_on = np.where(ccm, i_start, 0.0) / switch_devices
    i_off = np.where(gated, i_peak, 0.0) / switch_devices
    out = {}
    if t_rise is not None or t_fall is not None:
        out["overlap"] = L.overlap_energy(v_sw, i_on, i_off, t_rise or 0.0, t_fall or 0.0)
    if e_oss is not None:
        out["c_oss"] = np.where(gated, np.broadcast_to(e_oss, gated.shape), 0.0)
    i_f = np.maximum(np.where(ccm, i_start, 0.0), 0.0) / diode_devices
    share = np.minimum(i_f / i_f_rated, 1.0) if i_f_rated else np.where(ccm, 1.0, 0.0)
    e_rr = L.commutation_energy(v_d, q_rr or 0.0) * share  # per diode device
    e_cj = np.where(gated, L.commutation_energy(v_d, 0.0, c_j or 0.0), 0.0)
    out["commutation"] = (e_rr + e_cj) * diode_devices / switch_devices
    if q_rr is not None:  # 0 for a Schottky diode: stated as a zero term
        out["recovery"] = L.diode_recovery_energy(q_rr, v_d) * share
    return out


def switching_losses(result, semis, drive: GateDrive) -> dict:
    """Line-averaged switching-related losses of every semiconductor position.

    Parameters
    ----------
    result : StageResult
        The PFC boost's result, with its ``line_cycle`` (a ``pfc_line.LineCycle``).
    semis : list of switching.Semi
        Every MOSFET and diode position.
    drive : GateDrive
        Gate voltage, overlap method and gate resistance.

    Returns
    -------
    dict
        key -> switching.SwitchingLosses, per device [W], (N,) arrays.
    """
    cyc = result.line_cycle
    out = {s.key: SwitchingLosses() for s in semis}
    by_key = {s.key: s for s in semis}
    sw, dio = by_key.get(SWITCH), by_key.get(DIODE)
    if sw is None or dio is None:
        return out
    f_s = 1.0 / cyc.ts
    gated = np.ones(cyc.t_on.shape, dtype=bool)  # every angle (module notes)
    v_sw = np.asarray(result.v_block[SWITCH], dtype=float)[:, None]
    v_d = np.asarray(result.v_block[DIODE], dtype=float)[:, None]
    e, d = sw.electrical, dio.electrical
    res = out[SWITCH]
    t_r, t_f, res.method, gaps = transition_times(sw, drive)
    res.times = {"on": t_r, "off": t_f}
    res.left_out.extend(gaps)
    has_oss = "c_oss" in e or (("e_oss" in e or "q_oss" in e) and "oss_voltage" in e)
    q_rr = d.get("q_rr")
    if q_rr is None and dio.technology in SCHOTTKY:
        q_rr = 0.0
    c_j = d.get("c_j")
    i_rated = (dio.ratings or {}).get("i_f_avg")
    energies = boost_cell_energies(
        v_sw, v_d, cyc.i_start, cyc.i_peak, cyc.dcm, gated, t_rise=t_r, t_fall=t_f,
        e_oss=e_oss_of(e, v_sw) if has_oss else None, q_rr=q_rr, c_j=c_j,
        i_f_rated=i_rated, switch_devices=sw.devices, diode_devices=dio.devices)
    for term in ("overlap", "c_oss", "commutation"):
        if term in energies:
            res.terms[term] = line_average(energies[term], f_s)
    if not has_oss:
        res.left_out.append("c_oss: no c_oss, e_oss or q_oss on the part sheet")
    missing = [k for k, v in (("q_rr", q_rr), ("c_j", c_j)) if v is None]
    if missing:
        res.left_out.append(f"commutation: {dio.ref} gives no " + " and ".join(missing))
    if "recovery" in energies:
        out[DIODE].terms["recovery"] = line_average(energies["recovery"], f_s)
    elif q_rr is None and (~cyc.dcm & (cyc.i_start > 0)).any():
        out[DIODE].left_out.append("recovery: no q_rr on the part sheet")
    for s in semis:
        if s.role == "bridge-rectifier" and s.kind == "diode":
            bridge_recovery(out[s.key], s, cyc, result.v_block[s.key])
    res.zvs = np.zeros(gated.shape[0], dtype=bool)
    for s in semis:
        if s.kind != "mosfet":
            continue
        if "q_g" not in s.electrical:
            out[s.key].left_out.append("gate drive: no q_g on the part sheet")
            continue
        # Q_g·V_gs·f_s at every angle ([GPK] §4)
        out[s.key].driver = line_average(
            np.where(gated, L.gate_drive_loss(float(s.electrical["q_g"]),
                                              drive.v_gs(s.technology), 1.0), 0.0), f_s)
    return out


def bridge_recovery(res: SwitchingLosses, s, cyc, v_r) -> None:
    """A bridge diode's own recovery loss [W], put into ``res`` (``recovery``).

    P = ¼·Q_rr·min(1, I_F/I_F,avg,rated)·V_R·f_line ([GPK] §3 via
    ``losses.diode_recovery_energy``, the charge-control scaling of ``switching.py``):
    one turn-off per line cycle, at I_F the smallest non-zero local line current of
    the sampled cycle (per device) and V_R the line crest (``v_r``).

    Parameters
    ----------
    res : SwitchingLosses
        The position's terms.
    s : switching.Semi
        The bridge diode position.
    cyc : pfc_line.LineCycle
        The solved line cycle.
    v_r : array_like
        (N,) reverse voltage after the turn-off [V].
    """
    q_rr = s.electrical.get("q_rr")
    if q_rr is None and s.technology in SCHOTTKY:
        q_rr = 0.0
    if q_rr is None:
        res.left_out.append("recovery: no q_rr on the part sheet")
        return
    floor = EPS_REL * cyc.i_avg.max(axis=1, keepdims=True)  # rounding at the crossing
    i_avg = np.where(cyc.i_avg > floor, cyc.i_avg, np.inf).min(axis=1)
    i_f = np.where(np.isfinite(i_avg), i_avg, 0.0) / s.devices
    i_rated = (s.ratings or {}).get("i_f_avg")
    share = np.minimum(i_f / i_rated, 1.0) if i_rated else np.ones_like(i_f)
    res.terms["recovery"] = L.diode_recovery_energy(q_rr, v_r) * share / cyc.t_line


def inductor_core(e: dict, cyc, inductance):
    """Core loss of the boost inductor over the line cycle [W], (N,), or None.

    Parameters
    ----------
    e : dict
        The inductor's electrical values (``turns``, ``core_area``, ``steinmetz_*`` or
        ``core_loss_*``, ``core_volume``).
    cyc : pfc_line.LineCycle
        The solved line cycle.
    inductance : array_like
        (N,) inductance [H] (the one the line cycle was solved with).

    Returns
    -------
    ndarray or None
        (N,) mean core loss [W]: the switching-period minor loops (iGSE per angle,
        averaged over the angles) plus the line-frequency loop of the local average
        flux; None when the sheet has no core-loss data.
    """
    k = magnetics_loss.steinmetz_k(e)
    if k is None:
        return None
    alpha, beta = e["steinmetz_alpha"], e["steinmetz_beta"]
    n, m = cyc.i_peak.shape
    scale = np.asarray(inductance, dtype=float).reshape(-1, 1) / (e["turns"] * e["core_area"])
    db = (cyc.i_peak - cyc.i_start) * scale  # (N, M) minor-loop swing [T]
    swings = np.stack([db, -db], axis=-1).reshape(n * m, 2)
    durations = np.stack([cyc.t_on, cyc.t_off], axis=-1).reshape(n * m, 2)
    period = np.repeat(cyc.ts, m)
    minor = magnetics_loss.igse_density(k, alpha, beta, swings, durations, period)
    minor = minor.reshape(n, m).mean(axis=1)
    b_avg = cyc.local_mean("all") * scale  # (N, M) local average flux [T]
    steps = np.diff(np.concatenate([b_avg, b_avg[:, :1]], axis=1), axis=1)
    major = magnetics_loss.igse_density(k, alpha, beta, steps,
                                        np.broadcast_to((cyc.t_line / m)[:, None], (n, m)),
                                        cyc.t_line)
    return (minor + major) * e["core_volume"]
