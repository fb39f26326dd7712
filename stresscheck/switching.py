"""Switching events found in a model's waveforms, and the losses they cause per device.

A converter model (``topologies/``) gives every semiconductor's current as a
piecewise-linear waveform on a shared segment grid; it does not say which transitions
are hard. This module reads them off, the same way for every topology, at every corner:

* a switch turns on where its channel current starts after a segment without it; the
  turn-on is *soft* (zero voltage) where its own body diode carried the current just
  before (the model's dead time), else *hard*; it turns off where its channel current
  stops, *hard* when that current flowed drain to source;
* a diode (or a MOSFET's body diode, or a synchronous rectifier's channel) is
  *commutated* at a boundary where its forward current steps from a positive value to
  zero; the energy of that commutation (recovery charge and capacitance) is dissipated
  in the switches whose hard turn-on happens at that boundary, shared equally
  between their devices. A diode that conducted after the last switch turn-off but
  stopped before the turn-on (discontinuous conduction) has no stored charge left, but
  its capacitance is still charged by the turn-on (taken from zero: conservative, the
  ringing of the idle interval is not followed). The recovery charge scales with the
  forward current at the commutation, Q_rr·min(1, I_F/I_rated) (charge-control model:
  stored charge proportional to the forward current, common practice; the sheet's
  Q_rr is taken as stated near the rated current), so the terms change continuously
  across the boundary of discontinuous conduction.

The blocking voltage of each transition is the position's peak blocking voltage
(``StageResult.v_block``): conservative where a switch rests at a lower voltage before
turning on (a bridge leg's midpoint, the ringing of a discontinuous stage); valley
switching is not credited. The relations are in ``losses.py``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import losses as L

EPS_REL = 1e-6  # a current below this share of the stage's largest current counts as zero
SCHOTTKY = ("schottky", "sic-schottky")  # no stored charge: q_rr = 0 unless given


@dataclass
class Semi:
    """One semiconductor position as the loss relations see it."""

    key: tuple
    ref: str  # first ref, for notes
    role: str
    kind: str  # "mosfet" | "diode"
    technology: str
    electrical: dict
    devices: int  # devices sharing the position's current
    ratings: dict | None = None  # the sheet's ratings (for the Q_rr reference current)


@dataclass
class SwitchingLosses:
    """Per-device loss terms of one position [W], (N,) arrays, and what was left out."""

    terms: dict = field(default_factory=dict)  # term -> (N,) W, in the device
    driver: np.ndarray | None = None  # gate-drive power [W], dissipated in the driver
    left_out: list = field(default_factory=list)  # "term: why" for the row's note
    zvs: np.ndarray | None = None  # (N,) bool: every turn-on of the device soft
    method: str = ""  # which method set the overlap term, for the row's note
    # largest current of one device at a hard turn-off ("off") and a hard turn-on ("on")
    # [A], (N,), 0 where there is none: the SOA operating points (soa.py)
    transitions: dict = field(default_factory=dict)
    # the transition times the overlap term used [s] ("on": t_rise, "off": t_fall; None
    # where the method gives none): the SOA pulse widths (soa.py) follow the same method
    times: dict = field(default_factory=dict)


@dataclass
class GateDrive:
    """The design's gate-drive options ([converter] gate_voltage, overlap_method,
    gate_resistance)."""

    voltage: float | None = None  # [V]; None: per technology (losses.DEFAULT_GATE_VOLTAGE)
    method: str = "times"  # schema.OVERLAP_METHODS
    resistance: float | None = None  # [ohm] driver output plus external gate resistor

    def v_gs(self, technology: str) -> float:
        """Gate drive voltage of a MOSFET of ``technology`` [V]."""
        return self.voltage if self.voltage is not None else \
            L.DEFAULT_GATE_VOLTAGE.get(technology, 10.0)


def transition_times(s: Semi, drive: GateDrive):
    """(t_rise, t_fall, method, left_out) of a switch: the transition times [s] (None
    where the sheet lacks a value), the note naming the method, and "term: why" lines.

    "times": the sheet's t_rise and t_fall; "gate-charge": ``losses.gate_charge_times``
    from q_gd, q_gs (or q_gs2), v_plateau and r_g of the sheet with the design's gate
    voltage and gate_resistance.
    """
    e = s.electrical
    if drive.method != "gate-charge":
        t_r, t_f = _value(e, "t_rise"), _value(e, "t_fall")
        out = []
        if t_r is None:
            out.append("overlap at turn-on: no t_rise on the part sheet")
        if t_f is None:
            out.append("overlap at turn-off: no t_fall on the part sheet")
        shown = ", ".join(k for k, v in (("t_rise", t_r), ("t_fall", t_f)) if v is not None)
        method = f"overlap from the sheet's {shown}" if shown else ""
        return t_r, t_f, method, out
    need = ["q_gd", "v_plateau", "r_g"] + ([] if "q_gs2" in e else ["q_gs"])
    gaps = [k for k in need if k not in e]
    if gaps:
        return None, None, "", ["overlap: gate-charge method, no " + ", ".join(gaps)
                                + " on the part sheet"]
    v_drive = drive.v_gs(s.technology)
    r = drive.resistance + float(e["r_g"])
    try:
        t_r, t_f = L.gate_charge_times(float(e["q_gd"]), _value(e, "q_gs") or 0.0,
                                       float(e["v_plateau"]), v_drive, r,
                                       q_gs2=_value(e, "q_gs2"))
    except ValueError as err:
        return None, None, "", [f"overlap: gate-charge method, {err}"]
    q2 = "Q_gs2" if "q_gs2" in e else "Q_gs/2"
    method = (f"overlap by the gate-charge method: t_rise {t_r * 1e9:.3g} ns, t_fall "
              f"{t_f * 1e9:.3g} ns (Q_gd + {q2} at I_G = (V_drive − V_plateau)/R and "
              f"V_plateau/R, R = {r:.3g} Ω)")
    return t_r, t_f, method, []


def previous_segment(dt: np.ndarray) -> np.ndarray:
    """(N, S) index of the last segment of non-zero length before each segment
    (cyclically: the period repeats)."""
    n, s = dt.shape
    idx = np.broadcast_to(np.arange(s), (n, s))
    pos = np.where(dt > 0, idx, -1)
    ext = np.concatenate([pos, np.where(pos >= 0, pos + s, -1)], axis=1)
    run = np.maximum.accumulate(ext, axis=1)
    prev = run[:, s - 1:2 * s - 1]
    return np.where(prev >= 0, prev % s, 0)


def _at(x: np.ndarray, idx: np.ndarray) -> np.ndarray:
    return np.take_along_axis(x, idx, axis=1)


def _value(e: dict, name: str):
    v = e.get(name)
    return None if v is None else float(v)


def e_oss_of(part_e: dict, v) -> np.ndarray:
    """E_oss [J] of a MOSFET from its sheet (e_oss, c_oss or q_oss; NaN if none)."""
    return L.oss_energy(v, c_oss=_value(part_e, "c_oss"), e_oss=_value(part_e, "e_oss"),
                        q_oss=_value(part_e, "q_oss"), v_ref=_value(part_e, "oss_voltage"))


def _has_oss(e: dict) -> bool:
    return "c_oss" in e or (("e_oss" in e or "q_oss" in e) and "oss_voltage" in e)


def compute(result, semis: list[Semi], gate_voltage: float | None = None,
            phase_shift: dict | None = None, drive: GateDrive | None = None) -> dict:
    """Switching-related losses of every semiconductor position.

    Parameters
    ----------
    result : StageResult
        The model's waveforms at every corner.
    semis : list of Semi
        Every MOSFET and diode position.
    gate_voltage : float, optional
        Gate drive voltage [V]; default per technology (``losses.DEFAULT_GATE_VOLTAGE``).
    phase_shift : dict, optional
        For the phase-shifted full bridge: ``{"l_lk": H, "l_m": (N,) H}``; the soft
        turn-ons the model assumes are then checked against the energy relation.
    drive : GateDrive, optional
        Overlap method and gate resistance (default: the sheet's times, and
        ``gate_voltage``).

    Returns
    -------
    dict
        key -> SwitchingLosses.
    """
    drive = drive or GateDrive(gate_voltage)
    grid = result.grid
    dt = grid.dt
    period = grid.period
    live = dt > 0
    prev = previous_segment(dt)
    scale = max((float(np.max(np.abs(w.a))) for w in result.currents.values()), default=1.0)
    eps = EPS_REL * max(scale, 1e-12)
    out = {s.key: SwitchingLosses() for s in semis}

    def fwd(w):  # (end of previous segment, start of this one) forward currents
        return _at(w.b, prev), w.a

    # switches: channel edges
    on_edge, soft_edge, i_on, i_off, off_edge = {}, {}, {}, {}, {}
    switches = [s for s in semis if s.role == "switch" and s.kind == "mosfet"]
    for s in switches:
        ch = result.currents[s.key]
        conducting = (np.abs(ch.a) + np.abs(ch.b) > eps) & live
        was = _at(conducting, prev)
        turn_on = conducting & ~was
        body = result.body.get(s.key)
        body_before = (_at(body.b, prev) > eps) if body is not None else np.zeros_like(live)
        # a channel that starts with reverse current takes it over from its body diode
        soft = turn_on & (body_before | (ch.a < -eps))
        on_edge[s.key], soft_edge[s.key] = turn_on & ~soft, soft
        i_on[s.key] = np.abs(ch.a) / s.devices
        off = ~conducting & was & live
        off_edge[s.key] = off & (_at(ch.b, prev) > eps)
        i_off[s.key] = np.maximum(_at(ch.b, prev), 0.0) / s.devices
    hard_devices = sum((on_edge[s.key] * s.devices for s in switches),
                       np.zeros(dt.shape))
    any_off = np.zeros(dt.shape, bool)
    for s in switches:
        any_off |= off_edge[s.key]

    # commutated devices: forward current stepping from positive to zero at a boundary
    commutated = np.zeros(dt.shape)  # energy [J] per boundary, to the hard-on switches
    missing_commutation: list[str] = []
    for s in semis:
        e = s.electrical
        v_r = np.asarray(result.v_block[s.key], dtype=float)[:, None]
        if s.kind == "diode":
            w = result.currents[s.key]
            before, after = fwd(w)
            cut = (before > eps) & (after <= eps) & live
            blocked = cut | (_since_off(np.abs(w.a) + np.abs(w.b) > eps, any_off, live)
                             & (after <= eps))
            q_rr = _value(e, "q_rr")
            if q_rr is None and s.technology in SCHOTTKY:
                q_rr = 0.0
            c_j = _value(e, "c_j")
            share = _charge_share(before, s, "i_f_avg")
            energy = (L.commutation_energy(v_r, (q_rr or 0.0)) * share * cut
                      + L.commutation_energy(v_r, 0.0, c_j or 0.0) * blocked) * s.devices
            if (q_rr is None or c_j is None) and np.any(blocked & (hard_devices > 0)):
                what = " and ".join(k for k, v in (("q_rr", q_rr), ("c_j", c_j)) if v is None)
                missing_commutation.append(f"{s.ref} gives no {what}")
            if q_rr is not None:  # 0 for a Schottky diode: stated as a zero term
                rec = np.where(cut, L.diode_recovery_energy(q_rr, v_r) * share, 0.0)
                out[s.key].terms["recovery"] = rec.sum(axis=1) / period
            elif q_rr is None and np.any(cut):
                out[s.key].left_out.append("recovery: no q_rr on the part sheet")
            commutated += energy
            continue
        # MOSFET: body diode (recovery + capacitance) or channel alone (capacitance)
        ch = result.currents[s.key]
        body = result.body.get(s.key)
        b_before, b_after = fwd(body) if body is not None else (np.zeros(dt.shape),) * 2
        c_before, c_after = fwd(ch)
        body_cut = (b_before > eps) & (b_after <= eps) & (c_after <= eps) & live
        chan_cut = (c_before < -eps) & (c_after >= -eps) & (b_after <= eps) & live
        if s.role == "switch":  # own turn-on never commutates itself
            body_cut &= ~soft_edge[s.key]
        cut = body_cut | chan_cut
        q_rr = _value(e, "q_rr")
        e_cap = e_oss_of(e, v_r) if _has_oss(e) else 0.0
        share = _charge_share(b_before, s, "i_d")
        energy = (L.commutation_energy(v_r, q_rr or 0.0) * share + e_cap) * s.devices
        if np.any(cut & (hard_devices > 0)):
            gaps = [k for k, ok in (("q_rr", q_rr is not None or not np.any(body_cut)),
                                    ("c_oss", _has_oss(e))) if not ok]
            if gaps:
                missing_commutation.append(f"{s.ref} gives no " + " and ".join(gaps))
        commutated += np.where(body_cut, energy, np.where(chan_cut, e_cap * s.devices, 0.0))

    share = np.divide(commutated, hard_devices, out=np.zeros(dt.shape),
                      where=hard_devices > 0)
    for s in switches:
        e, res = s.electrical, out[s.key]
        v = np.asarray(result.v_block[s.key], dtype=float)[:, None]
        hard, soft, toff = on_edge[s.key], soft_edge[s.key], off_edge[s.key]
        res.zvs = ~hard.any(axis=1)
        res.transitions = {"off": np.where(toff, i_off[s.key], 0.0).max(axis=1),
                           "on": np.where(hard, i_on[s.key], 0.0).max(axis=1)}
        t_r, t_f, res.method, gaps = transition_times(s, drive)
        res.times = {"on": t_r, "off": t_f}
        res.left_out.extend(gaps)
        e_over = np.zeros(dt.shape)
        if t_r is not None:
            e_over += np.where(hard, 0.5 * v * i_on[s.key] * t_r, 0.0)
        if t_f is not None:
            e_over += np.where(toff, 0.5 * v * i_off[s.key] * t_f, 0.0)
        if t_r is not None or t_f is not None:
            res.terms["overlap"] = e_over.sum(axis=1) / period
        if _has_oss(e):
            res.terms["c_oss"] = np.where(hard, e_oss_of(e, v), 0.0).sum(axis=1) / period
        elif hard.any():
            res.left_out.append("c_oss: no c_oss, e_oss or q_oss on the part sheet")
        res.terms["commutation"] = np.where(hard, share, 0.0).sum(axis=1) / period
        if missing_commutation and hard.any():
            res.left_out.append("commutation: " + "; ".join(sorted(set(missing_commutation))))
        if phase_shift is not None:
            _phase_shift_turn_on(result, s, res, soft, phase_shift, period, eps)
    for s in semis:
        if s.kind != "mosfet":
            continue
        q_g = _value(s.electrical, "q_g")
        v_gs = drive.v_gs(s.technology)
        if q_g is None:
            out[s.key].left_out.append("gate drive: no q_g on the part sheet")
        else:
            out[s.key].driver = L.gate_drive_loss(q_g, v_gs, 1.0 / period)
    return out


def _charge_share(i_before, s: Semi, rating: str) -> np.ndarray:
    """min(1, I_F/I_rated) per device: the share of the sheet's Q_rr left at a
    commutation from forward current ``i_before`` (position total) [1]."""
    i_rated = None
    ratings = getattr(s, "ratings", None) or {}
    i_rated = ratings.get(rating)
    i_dev = np.maximum(i_before, 0.0) / s.devices
    if not i_rated:
        return np.ones_like(i_dev)
    return np.minimum(i_dev / i_rated, 1.0)


def _since_off(conducting, any_off, live) -> np.ndarray:
    """(N, S) true where the device conducted in some segment between the last switch
    turn-off (at or before the segment's start, cyclically) and the segment."""
    n, s = conducting.shape
    idx = np.broadcast_to(np.arange(2 * s), (n, 2 * s))
    off2 = np.concatenate([any_off, any_off], axis=1)
    cond2 = np.concatenate([conducting & live, conducting & live], axis=1).astype(int)
    last = np.maximum.accumulate(np.where(off2, idx, -1), axis=1)
    csum = np.concatenate([np.zeros((n, 1), int), np.cumsum(cond2, axis=1)], axis=1)
    j = idx[:, s:]  # the second copy: every segment with a full period behind it
    k = last[:, s:]
    count = np.take_along_axis(csum, j, axis=1) - np.take_along_axis(
        csum, np.maximum(k, 0), axis=1)
    return (k >= 0) & (count > 0)


def _phase_shift_turn_on(result, s: Semi, res: SwitchingLosses, soft, ps, period, eps):
    """Check the phase-shifted bridge's soft turn-ons against the energy relation.

    Switches 0, 1 form the leading leg, 2, 3 the lagging leg (``bridge_phase_shift``).
    The energy available is ½·L_lk·I² of the leakage inductance carrying the primary
    current at the transition; the leading leg also has the magnetizing energy
    ½·L_m·I_m,peak² (the secondary still conducts through one rectifier, so L_m is not
    shorted; the reflected output inductance, which makes the leading leg easy, is not
    credited: conservative). The lagging leg transition happens with both rectifiers
    conducting, which shorts the magnetizing inductance. Energy needed: 2·E_oss(V_in)
    per device pair (``losses.zvs_energy_needed``). Where the energy falls short, the
    turn-on loses ``losses.residual_turn_on_energy``, counted as the c_oss term.
    """
    body = result.body.get(s.key)
    if body is None:
        return
    e = s.electrical
    if not _has_oss(e):
        res.left_out.append("zero-voltage check: no c_oss, e_oss or q_oss on the part sheet")
        return
    prev = previous_segment(result.grid.dt)
    live = result.grid.dt > 0
    start = (body.a > eps) & ~(_at(body.b, prev) > eps) & live
    # the transition current: the body diode's current where it starts (position total)
    i_tr = np.where(start, body.a, 0.0).max(axis=1)
    leading = s.key[1] in (0, 1)
    e_avail = L.zvs_energy_available(ps["l_lk"], i_tr)
    if leading:
        e_avail = e_avail + L.zvs_energy_available(ps["l_m"], result.i_m_peak)
    v = np.asarray(result.v_block[s.key], dtype=float)
    e_need = L.zvs_energy_needed(e_oss_of(e, v), s.devices)
    lost = L.residual_turn_on_energy(e_need, e_avail) / s.devices
    n_soft = soft.sum(axis=1)
    res.terms["c_oss"] = res.terms.get("c_oss", 0.0) + lost * n_soft / period
    res.zvs = res.zvs & (e_avail >= e_need)
