"""Forward converters: single switch with a reset winding, and two-switch forward with
clamp diodes; diode rectifier (forward diode + freewheel diode), output inductor in
continuous (CCM) or discontinuous (DCM) conduction, or synchronous rectifiers (MOSFETs
in the rectifier and/or freewheel role, with dead time; forced continuous conduction).

Circuit and conventions
-----------------------
Single switch ("forward"): primary N_p from the bus (dot) to the drain of Q1; reset winding
N_r with its dot at ground and its other end through the reset diode to the bus; the
secondary N_s (dot) through the forward diode (role ``rectifier``) to the inductor, the
freewheel diode (role ``freewheel``) from the output return to the inductor.
Two switch ("two-switch-forward"): Q1 from the bus to the primary dot, Q2 from the undotted
end to ground (both gated together), clamp diodes (role ``reset``) D_a from ground to the
dot (index 0) and D_b from the undotted end to the bus (index 1).
Duty D = on-time / period Ts = 1/fs; n = N_s/N_p; a_r = N_p/N_r (two-switch: a_r = 1, the
primary resets itself at the bus voltage).

Segment grid of one period (the off-time T_off = (1 − D)·Ts is split at the end of the reset
t_r and at the instant t_z where the inductor current reaches zero, whichever comes
first; t_z = T_off in CCM):
  0: on-time D·Ts: switch(es), forward diode, magnetizing current rising (from −δ)
  1: [0, min(t_r, t_z)] after turn-off: reset (magnetizing current falling), freewheel
  2: [min, max(t_r, t_z)]: idle with freewheel (t_r < t_z), or reset at zero inductor
     current (DCM, t_z < t_r)
  3: [max(t_r, t_z), T_off]: idle at zero inductor current (DCM only; else zero length)

Relations (ideal forms in Erickson & Maksimović, Fundamentals of Power Electronics, 2nd
ed., §6.3.3 forward converter, and Mohan, Undeland & Robbins, Power Electronics, 3rd ed.,
§10.4 — from memory), extended here with conduction drops, magnetizing current and bus
ripple. Lossless limit:
  V_o = D·V_in·N_s/N_p                                           [V]
  reset: V_in·D·Ts = (V_in·N_p/N_r)·t_r  ->  t_r = D·Ts·N_r/N_p <= (1 − D)·Ts
         D_max = N_p/(N_p + N_r)  (two-switch: 1/2)               [1]
  switch: V_in·(1 + N_p/N_r) (two-switch: V_in)                   [V]
  reset diode: V_in·(1 + N_r/N_p) (two-switch clamp diodes: V_in) [V]
  forward diode: V_in·N_s/N_r during the reset (two-switch: V_in·N_s/N_p)
  freewheel diode: V_in·N_s/N_p during the on-time                [V]
With drops (all taken at the mean current of their interval, as in the bridge model):
* Primary emf during the on-time, e_on = V_src − (R_sw + R_p)·(n·I_L,on + I_m,on), with
  V_src the mean bus voltage over the on-time, R_sw the on-path switch resistance (two
  switches in series for the two-switch forward) and I_L,on the mean inductor current
  over the on-time (I_o in CCM, I_pk/2 in DCM), I_m,on = e_on·D·Ts/(2·L_m) − δ the mean
  magnetizing current over the on-time [A]; e_on [V].
* Magnetizing current, unipolar: from −δ (see the idle interval below; zero in DCM) up
  by e_on·D·Ts/L_m, I_m,pk = e_on·D·Ts/L_m − δ [A]. Core flux from the volt-seconds
  (Faraday's law), unipolar from (nearly) zero: B_peak = (e_on·D·Ts − L_m·δ)/(N_p·A_e)
  [T], i.e. V·t_on/(N_p·A_e) in the lossless limit (not the symmetric ±λ/2 of the
  bridges, for the same volt-seconds twice their peak). Remanence is not included:
  compare with B_sat − B_r where the core's remanence matters.
* Idle interval in CCM (after the reset, until the next on-time): the freewheel diode
  carries I_L; the forward diode starts to conduct as soon as the secondary swings to
  v_f0,rect − v_free(I_L) < 0, which clamps the transformer at
      v_cl = (v_f0,free + r_d,free·I_L,idle − v_f0,rect)/n  on the primary (if > 0)  [V]
  and drives the magnetizing current below zero, δ = v_cl·t_idle/L_m [A], carried by
  the forward diode (δ/n, ampere-turn balance) beside the freewheel diode. It lowers
  the next on-time's magnetizing peak and the reset current by a few percent where
  the rectifier drops are large against the output voltage. In DCM the idle current
  is small and δ is taken as zero.
* Reset voltage on the primary at magnetizing current i [V]:
    single switch: a_r·(V_bus + v_f0,r + (r_d,r + R_r)·a_r·i)
    two-switch:    V_bus + v_f0,a + v_f0,b + (r_d,a + r_d,b + R_p)·i
  t_r = L_m·I_m,pk / v_reset(I_m,pk/2) [s]; the corner is refused when t_r > T_off (the
  core would not reset before the next on-time and walks towards saturation).
  Reset-winding (or clamp) current a_r·i_m: ampere-turn balance of the ideal transformer.
* CCM, output inductor volt-second balance:
      V_o + DCR·I_o = D·v_on − (1 − D)·v_fw
      v_on = n·e_on − R_s·I_o − v_rect(I_o),   v_fw = v_free(I_o)          [V]
  ripple ΔI = (v_on − DCR·I_o − V_o)·D·Ts/L [A].
* DCM (CCM valley <= 0; Erickson & Maksimović §5.3 for the buck, with n·e_on for the
  input — from memory): the inductor starts from zero,
      I_pk = (n·e_on − (R_s + r_d,rect + DCR)·I_pk/2 − v_f0,rect − V_o)·D·Ts/L
      D_2·Ts = I_pk·L/(V_o + v_f0,free + (r_d,free + DCR)·I_pk/2)
      I_o = I_pk·(D + D_2)/2   -> D by bisection (``regulation.solve_duty``)
  then a zero-current interval where both rectifier diodes block and their cathode node
  sits at V_o: the freewheel diode blocks V_o, the forward diode V_o plus the reflected
  reset voltage if the reset is still going on.
* The source supplies only DC: the input capacitors carry all the AC current (the
  conservative convention for their ripple rating).

Synchronous rectifiers (``_evaluate_sync``)
-------------------------------------------
A MOSFET may take the rectifier and/or the freewheel position; its body diode points
the way of the diode it replaces (forward MOSFET: source at the secondary dot, drain at
the inductor node; freewheel MOSFET: source at the output return). The forward MOSFET is
gated with the switch(es); the freewheel MOSFET complementary to them, one
``Stage.dead_time`` t_d after the switch turns off until t_d before it turns on (the
dead time applies only with a freewheel MOSFET; a forward MOSFET beside a freewheel
diode has no complementary partner). Off-time grid: its segments are cut at t_d, at the
end of the reset t_r and at T_off − t_d (sorted per corner), each segment drawn as
N_SUB straight pieces with the slope at its own mean current (the drops follow the
current along the ramp, which keeps the energy balance where the ripple is large
against the load current).
* Conduction: channel R_DS(on)(T_j)·i where the diode would conduct; in the dead times
  the freewheel MOSFET's body diode v_f0 + r_d·i carries the inductor current
  (``StageResult.body``). In the idle interval the forward position's diode (for a
  MOSFET: its body diode) clamps the transformer as for the diode rectifier, with
  v_cl = (v_free(i_L) − v_f0,fwd)/n [V] per piece, zero where negative.
* Output inductor volt-second balance (Erickson & Maksimović §2.2 with the drops of
  ch. 3, the dead times as intervals of their own — from memory):
      V_o + DCR·I_o = D·v_on − [t_d·(v_b(I_A) + v_b(I_B)) + (T_off − 2·t_d)·v_ch(I_C)]·f_s
  with v_on = n·e_on − (R_s + R_fwd)·I_on (channel) and the mean currents I_A, I_C,
  I_B of the dead time after turn-off, the gated interval and the dead time before
  turn-on [V]. Lossless with an ideal channel: V_o = D·n·V_in − 2·t_d·f_s·V_F, i.e.
  D = (V_o + 2·t_d·f_s·V_F)/(n·V_in): the dead times raise the duty.
* Forced continuous conduction (a freewheel MOSFET conducts both ways): the inductor
  current may turn negative at light load. Without dead time the channels carry it
  (modelled); with a dead time a negative current at the freewheel MOSFET's turn-off
  finds no body diode to flow in (both block it; the node is then driven by the device
  capacitances) and the corner is refused. A forward MOSFET beside a freewheel diode
  is modelled in CCM only (the discontinuous corner is refused).
* Blocking voltages: as for the diodes, with the conducting device's drop of each
  piece: the forward MOSFET blocks n·v_reset − v_free (v_free the freewheel channel's
  R·i or, in a dead time, its body-diode drop), the freewheel MOSFET the secondary
  emf less the forward channel's drop in the on-time; the switch sees the idle clamp
  reflected (V_bus + v_cl) where the freewheel body diode's drop exceeds the forward
  position's v_f0.
* The limit of the duty ratio also keeps the two dead times: D <= 1 − 2·t_d·f_s.

Not modelled: leakage inductance and the turn-off spike it causes (stresses are "before
any spike"), switch and diode capacitances (the drain rings after the reset; in the idle
interval the two-switch forward's midpoint voltages are set by them, so its switches and
clamp diodes are given the conservative bound V_bus there), reverse recovery, core loss;
with synchronous rectifiers: diode emulation (light-load DCM), self-driven gate timing,
the body diodes' reverse recovery at the end of each dead time.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..regulation import solve_duty
from ..waveforms import Grid, capacitor_voltage_samples, max_over, mean_over_samples
from . import Layout, RoleSpec, Stage, StageResult

MASK_ON = np.array([True, False, False, False])
MAX_PASSES = 40  # fixed point between duty, magnetizing current and bus ripple
N_SUB = 8  # synchronous rectifiers: straight pieces per interval (see _evaluate_sync)
PASS_RTOL = 1e-12
TWO_SWITCH = "two-switch-forward"


def _transformer_part(design):
    comps = design.by_role("transformer")
    return comps[0] if comps else None


def _synchronous_freewheel(design) -> bool:
    """True where the freewheel position is a MOSFET (driven complementary to the
    switch, with the design's dead time between the two)."""
    comps = design.by_role("freewheel")
    return bool(comps) and comps[0].part.kind == "mosfet"


def layout(design) -> Layout:
    """Roles of a forward-family design; InputError for options not modelled."""
    path, top = design.path, design.topology
    two = top == TWO_SWITCH
    if design.rectifier is not None:
        raise InputError(path, "converter.rectifier", f"a {top} converter has its own "
                         "rectifier (forward and freewheel diodes, roles 'rectifier' and "
                         "'freewheel'); remove the key")
    if design.modulation != "pwm":
        raise InputError(path, "converter.modulation", f"a {top} converter takes pwm "
                         "modulation only")
    if design.dead_time and not _synchronous_freewheel(design):
        raise InputError(path, "converter.dead_time", f"a {top} converter with a diode "
                         "in the freewheel role has no complementary switches, so a dead "
                         "time has no meaning here (it applies between the switch and a "
                         "synchronous freewheel MOSFET); remove the key")
    comp = _transformer_part(design)
    if comp is not None:
        e = comp.part.electrical
        if two and "reset_turns" in e:
            raise InputError(path, f"{comp.key}.part", f"transformer '{comp.part.id}' has "
                             "reset_turns; a two-switch forward resets through its clamp "
                             "diodes and has no reset winding: use a transformer part "
                             "without reset_turns")
        if not two and "reset_turns" not in e:
            raise InputError(path, f"{comp.key}.part", f"transformer '{comp.part.id}' has "
                             "no reset_turns; a single-switch forward needs the reset "
                             "winding's turns (use two-switch-forward for a clamp-diode "
                             "reset)")
    roles = {
        "switch": RoleSpec(2 if two else 1, kinds=("mosfet",)),
        "transformer": RoleSpec(1),
        "rectifier": RoleSpec(1, kinds=("diode", "mosfet")),
        "freewheel": RoleSpec(1, kinds=("diode", "mosfet")),
        "reset": RoleSpec(2 if two else 1, kinds=("diode",)),
        "inductor": RoleSpec(1),
        "input-capacitor": RoleSpec(None),
        "output-capacitor": RoleSpec(None),
    }
    return Layout(top, None, roles)


def duty_limit(design, fs):
    """Largest duty ratio at which the core resets in the off-time, lossless [1].

    Single switch: the reset winding clamps the primary at −V_in·N_p/N_r, so the reset
    takes D·Ts·N_r/N_p and D·N_r/N_p <= 1 − D gives D_max = N_p/(N_p + N_r)
    (Erickson & Maksimović, 2nd ed., §6.3.3 — from memory). Two-switch: the clamp diodes
    reset at V_in, D_max = 1/2. The reset with drops is checked at every corner in
    ``evaluate``.
    """
    fs = np.asarray(fs, dtype=float)
    if design.topology == TWO_SWITCH:
        limit = np.full(fs.shape, 0.5)
    else:
        e = _transformer_part(design).part.electrical
        limit = np.full(fs.shape, e["primary_turns"] / (e["primary_turns"]
                                                       + e["reset_turns"]))
    if _synchronous_freewheel(design):  # the off-time holds the two dead times
        limit = np.minimum(limit, 1.0 - 2 * design.dead_time * fs)
    return limit


def duty_limit_reason(design) -> str:
    if design.topology == TWO_SWITCH:
        text = ("the core resets through the clamp diodes at the bus voltage, which takes "
                "as long as the on-time: at most 1/2")
    else:
        e = _transformer_part(design).part.electrical
        n_p, n_r = e["primary_turns"], e["reset_turns"]
        text = (f"the core must reset in the off-time at the reset winding's clamp "
                f"voltage: at most N_p/(N_p + N_r) = {n_p:g}/({n_p:g} + {n_r:g}) = "
                f"{n_p / (n_p + n_r):.3f}")
    if _synchronous_freewheel(design) and design.dead_time:
        text += "; and the off-time must hold the two dead times of the freewheel MOSFET"
    return text


def _col(x):
    """(N,) or scalar -> (N or 1, 1, 1) for broadcasting against samples (N, S, k)."""
    x = np.asarray(x, dtype=float)
    return x[:, None, None] if x.ndim else x[None, None, None]


def _max_where(values, mask):
    """Largest of sampled values (N, S, k) over the segments where ``mask`` (N, S) holds;
    −inf where no segment does."""
    return np.where(mask[:, :, None], values, -np.inf).max(axis=(1, 2))


def _mean_where(values, grid, mask, fallback):
    """Time average of sampled values (N, S, k) over the segments in ``mask`` (N, S);
    ``fallback`` where those segments have no duration."""
    seg_avg = (values[:, :, 1:] + values[:, :, :-1]).mean(axis=2) / 2
    dt = np.where(mask, grid.dt, 0.0)
    total = dt.sum(axis=1)
    mean = (seg_avg * dt).sum(axis=1) / np.where(total > 0, total, 1.0)
    return np.where(total > 0, mean, fallback)


def _magnetics(xf, two, i_sw, i_mr, i_fwd, i_rst, e_on_s, grid, on_mask, t_on, lm, delta,
               t_r, t_off):
    """Winding loss [W], peak flux density [T] and the reset check, shared by the diode
    and synchronous paths.

    Flux rises from −L_m·δ by the on-time's volt-seconds λ = ē_on·t_on (Faraday's law,
    unipolar swing); B_peak = max(λ − L_m·δ, L_m·δ)/(N_p·A_e). The core must reset
    within the off-time: t_r <= t_off, else the corner is refused.
    """
    if two:  # the primary carries the magnetizing current through the clamps in the reset
        p_wind = xf.r_p * (i_sw + i_mr).rms() ** 2 + xf.r_s * i_fwd.rms() ** 2
    else:
        p_wind = (xf.r_p * i_sw.rms() ** 2 + xf.r_s * i_fwd.rms() ** 2
                  + xf.r_r * i_rst.rms() ** 2)
    lam = mean_over_samples(e_on_s, grid, on_mask) * t_on  # [V·s]
    flux = np.maximum(lam - lm * delta, lm * delta)
    b_peak = flux / (xf.n_p * xf.core_area) if xf.core_area else None
    if two:
        limit = "at most 1/2 with clamp diodes"
    else:
        limit = (f"lossless limit N_p/(N_p + N_r) = {xf.n_p:g}/({xf.n_p:g} + {xf.n_r:g}) = "
                 f"{xf.n_p / (xf.n_p + xf.n_r):.3f}")
    reason = ("the transformer does not reset within the off-time (the magnetizing current "
              "would not return to zero before the next on-time and the core walks towards "
              f"saturation; duty ratio {limit}); lower the duty ratio: raise the minimum "
              "input voltage or the turns ratio N_s/N_p"
              + ("" if two else ", or use fewer reset turns (higher reset voltage, higher "
                 "switch voltage)"))
    return p_wind, b_peak, (t_r > t_off * (1 + 1e-9), reason)


def evaluate(st: Stage) -> StageResult:
    if "mosfet" in (st.devices[("rectifier", 0)].kind, st.devices[("freewheel", 0)].kind):
        return _evaluate_sync(st)
    two = st.topology == TWO_SWITCH
    xf, ind = st.transformer, st.inductors[0]
    n = xf.n_s / xf.n_p
    a_r = 1.0 if two else xf.n_p / xf.n_r
    ts = 1.0 / st.fs
    vin, vo, io = st.vin, st.vo, st.io
    lm, l_out, dcr = xf.l_m, ind.l, ind.dcr
    sw = st.group("switch")
    r_sw = sw[0].r_on + sw[1].r_on if two else sw[0].r_on
    r_prim = r_sw + xf.r_p
    d1, d2 = st.devices[("rectifier", 0)], st.devices[("freewheel", 0)]
    resets = st.group("reset")
    if two:
        v0_r = resets[0].v_f0 + resets[1].v_f0
        r_rr = resets[0].r_d + resets[1].r_d + xf.r_p
    else:
        v0_r = resets[0].v_f0
        r_rr = a_r ** 2 * (resets[0].r_d + xf.r_r)
    r_a = xf.r_s + d1.r_d + dcr  # on-interval series resistance of the inductor path
    v_fw_ccm = d2.v_f0 + d2.r_d * io
    cin = st.capacitors[("input-capacitor", 0)]
    cout = st.capacitors[("output-capacitor", 0)]

    v_on_src = vin.copy()  # mean bus voltage over the on-time
    v_rs_src = vin.copy()  # mean bus voltage over the reset
    delta = np.zeros_like(vin)  # magnetizing current at the end of the idle interval, −
    duty = None
    for _ in range(MAX_PASSES):
        # the on-time's mean switch current carries the magnetizing current −δ + ΔI_m/2:
        # its −δ part acts like a higher source voltage
        v_src = v_on_src + r_prim * delta

        # CCM regulation ------------------------------------------------------------------
        def e_on_ccm(d):
            return (v_src - r_prim * n * io) / (1 + r_prim * d * ts / lm / 2)

        def vout_ccm(d):
            v_on = n * e_on_ccm(d) - (xf.r_s + d1.r_d) * io - d1.v_f0
            return d * v_on - (1 - d) * v_fw_ccm - dcr * io

        d_ccm, _ = solve_duty(vout_ccm, vo, 0.0, 1.0)
        v_on = n * e_on_ccm(d_ccm) - (xf.r_s + d1.r_d) * io - d1.v_f0
        ripple = (v_on - dcr * io - vo) * d_ccm * ts / l_out
        dcm = io - ripple / 2 <= 0

        # DCM regulation (closed form of the peak for a given duty) -----------------------
        def dcm_state(d):
            k, c1 = d * ts / l_out, 1 + r_prim * d * ts / lm / 2
            num = k * (n * v_on_src / c1 - d1.v_f0 - vo)
            den = 1 + k * (n * n * r_prim / (2 * c1) + r_a / 2)
            i_pk = np.maximum(num / den, 0.0)
            d_2 = i_pk * l_out / (ts * (vo + d2.v_f0 + (d2.r_d + dcr) * i_pk / 2))
            e_on = (v_on_src - r_prim * n * i_pk / 2) / c1
            return i_pk, d_2, e_on

        d_dcm, _ = solve_duty(lambda d: (lambda s: s[0] * (d + s[1]) / 2)(dcm_state(d)),
                              io, 0.0, 1.0)
        i_pk_dcm, d2_dcm, e_on_dcm = dcm_state(d_dcm)

        new_duty = np.where(dcm, d_dcm, d_ccm)
        delta = np.where(dcm, 0.0, delta)
        e_on = np.where(dcm, e_on_dcm, e_on_ccm(d_ccm))
        i_start = np.where(dcm, 0.0, io - ripple / 2)
        i_top = np.where(dcm, i_pk_dcm, io + ripple / 2)
        d = np.clip(new_duty, 1e-9, 1.0 - 1e-9)
        t_on, t_off = d * ts, (1 - d) * ts
        i_mpk = np.maximum(e_on * t_on / lm - delta, 0.0)
        v_reset = a_r * (v_rs_src + v0_r) + r_rr * i_mpk / 2
        t_r = lm * i_mpk / v_reset
        t_z = np.where(dcm, np.minimum(d2_dcm * ts, t_off), t_off)

        # grid and currents ---------------------------------------------------------------
        t_rc = np.minimum(t_r, t_off)
        t1, t2 = np.minimum(t_rc, t_z), np.maximum(t_rc, t_z)
        grid = Grid(np.stack([t_on, t1, t2 - t1, t_off - t2], axis=1))
        tau = np.stack([np.zeros_like(d), t1, t2, t_off], axis=1)  # off-segment bounds
        fall = np.where(dcm, i_top / np.where(t_z > 0, t_z, 1.0), (i_top - i_start) / t_off)
        il_off = i_top[:, None] - fall[:, None] * tau
        il_off = np.where(dcm[:, None], np.maximum(il_off, 0.0), il_off)
        safe_tr = np.where(t_r > 0, t_r, 1.0)[:, None]
        idle_len = (t_off - t_rc)[:, None]
        im_reset = np.where(t_r[:, None] > 0,
                            i_mpk[:, None] * np.maximum(1 - tau / safe_tr, 0.0), 0.0)
        im_idle = -delta[:, None] * (tau - t_rc[:, None]) / np.where(idle_len > 0, idle_len,
                                                                      1.0)
        im_off = np.where(tau <= t_rc[:, None], im_reset, im_idle)
        z = np.zeros_like(d)
        i_l = grid.wave(np.column_stack([i_start, il_off[:, :3]]),
                        np.column_stack([i_top, il_off[:, 1:]]))
        i_m = grid.wave(np.column_stack([-delta, im_off[:, :3]]),
                        np.column_stack([i_mpk, im_off[:, 1:]]))
        # per-corner segment masks (N, S)
        reset_on = np.column_stack([z < 0, z == 0, t_z < t_rc, z < 0])
        fw_on = np.column_stack([z < 0, z == 0, t_rc <= t_z, ~dcm])
        off_ns = np.broadcast_to(~MASK_ON, reset_on.shape)
        idle = off_ns & ~reset_on
        i_sw = (i_l * n + i_m).only(MASK_ON)
        i_clamp = (i_m / -n).only(idle)  # forward diode's share in the idle interval
        i_fwd = i_l.only(MASK_ON) + i_clamp
        i_free = i_l.only(~MASK_ON) - i_clamp
        i_mr = i_m.only(reset_on)  # magnetizing current during the reset (primary-referred)
        i_rst = i_mr * a_r  # reset-winding / clamp-diode current
        i_bus = i_sw - i_rst
        i_dc = i_bus.mean()
        i_cin = i_bus * -1 + i_dc
        bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, vin)

        # idle (CCM): the forward diode conducts beside the freewheel diode as soon as the
        # secondary swings to v_f0,rect − v_free(i_L) < 0; that voltage, reflected, drives
        # the magnetizing current below zero until the next on-time
        i_idle = np.where(idle_len[:, 0] > 0, (il_off[:, 1] + il_off[:, 2]) / 2, i_start)
        v_clamp = np.maximum(d2.v_f0 + d2.r_d * i_idle - d1.v_f0, 0.0) / n
        delta_new = np.where(dcm, 0.0, v_clamp * idle_len[:, 0] / lm)
        v_on_new = mean_over_samples(bus, grid, MASK_ON)
        v_rs_new = _mean_where(bus, grid, reset_on, v_on_new)
        done = (duty is not None
                and np.allclose(new_duty, duty, rtol=PASS_RTOL, atol=0)
                and np.allclose(v_on_new, v_on_src, rtol=PASS_RTOL, atol=0)
                and np.allclose(v_rs_new, v_rs_src, rtol=PASS_RTOL, atol=0)
                and np.allclose(delta_new, delta, rtol=1e-9, atol=1e-12))
        duty, v_on_src, v_rs_src, delta = new_duty, v_on_new, v_rs_new, delta_new
        if done:
            break

    # blocking voltages -------------------------------------------------------------------
    zero_il = off_ns & ~fw_on
    isw_s, il_s, im_s = i_sw.samples(), i_l.samples(), i_m.samples()
    on_ns = np.broadcast_to(MASK_ON, reset_on.shape)
    e_on_s = bus - _col(r_prim) * isw_s  # primary emf during the on-time
    v_res_s = _col(a_r) * (bus + _col(v0_r)) + _col(r_rr) * im_s  # reset voltage, primary
    v_out = capacitor_voltage_samples(i_l - io, cout.c, cout.esr, vo)
    v_free_s = _col(d2.v_f0) + _col(d2.r_d) * il_s
    v_block: dict = {}
    if two:
        for k, dev in enumerate(resets):
            v_clamp = _col(dev.v_f0) + _col(dev.r_d) * im_s
            v_block[("switch", k)] = np.maximum(_max_where(bus + v_clamp, reset_on),
                                                _max_where(bus, idle))
            v_rev_on = bus - _col(sw[k].r_on) * isw_s
            v_block[("reset", k)] = np.maximum(_max_where(v_rev_on, on_ns),
                                               _max_where(bus, idle))
    else:
        v_block[("switch", 0)] = np.maximum(_max_where(bus + v_res_s, reset_on),
                                            _max_where(bus + _col(v_clamp), idle))
        v_block[("reset", 0)] = np.maximum(_max_where(bus + e_on_s / a_r, on_ns),
                                           _max_where(bus, idle))
    # forward diode: reflected reset voltage against its cathode (freewheel drop or V_o)
    v_d1 = np.maximum.reduce([
        _max_where(n * v_res_s - v_free_s, reset_on & fw_on),
        _max_where(n * v_res_s + v_out, reset_on & zero_il),
        _max_where(v_out, idle & zero_il),
        _max_where(-v_free_s, idle & fw_on)])
    v_block[("rectifier", 0)] = v_d1
    v_cathode_on = n * e_on_s - _col(xf.r_s + d1.r_d) * il_s - _col(d1.v_f0)
    v_block[("freewheel", 0)] = np.maximum(_max_where(v_cathode_on, on_ns),
                                           _max_where(v_out, zero_il))
    v_block[("input-capacitor", 0)] = max_over(bus)
    v_block[("output-capacitor", 0)] = max_over(v_out)

    currents = {("inductor", 0): i_l, ("output-capacitor", 0): i_l - io,
                ("input-capacitor", 0): i_cin, ("rectifier", 0): i_fwd,
                ("freewheel", 0): i_free}
    for k in range(len(sw)):
        currents[("switch", k)] = i_sw
    for k in range(len(resets)):
        currents[("reset", k)] = i_rst

    # transformer ---------------------------------------------------------------------------
    p_wind, b_peak, reset_invalid = _magnetics(xf, two, i_sw, i_mr, i_fwd, i_rst, e_on_s,
                                               grid, MASK_ON, t_on, lm, delta, t_r, t_off)
    invalid = [
        reset_invalid,
        (dcm & (d_dcm + d2_dcm > 1 + 1e-9),
         "the discontinuous-conduction solution of the output inductor does not fit in "
         "the period (model inconsistency near the CCM boundary); move the minimum load "
         "or the output inductance away from the boundary"),
    ]
    regime = np.where(dcm, "DCM", "CCM").astype(object)
    return StageResult(duty=duty, grid=grid, currents=currents, v_block=v_block,
                       input_current=i_dc, winding_loss=p_wind, b_peak=b_peak,
                       i_m_peak=i_mpk, i_l_start=i_start, i_m_start=-delta,
                       invalid=invalid, regime=regime,
                       notes=["switch and diode voltages are before any leakage spike or ringing",
                              "b_peak is the swing from zero flux: remanence is not included"])


def _evaluate_sync(st: Stage) -> StageResult:
    """Synchronous rectifiers: a MOSFET in the rectifier and/or the freewheel position
    (see "Synchronous rectifiers" in the module docstring). Continuous conduction of
    the output inductor throughout (forced by a freewheel MOSFET)."""
    two = st.topology == TWO_SWITCH
    xf, ind = st.transformer, st.inductors[0]
    n = xf.n_s / xf.n_p
    a_r = 1.0 if two else xf.n_p / xf.n_r
    ts = 1.0 / st.fs
    vin, vo, io = st.vin, st.vo, st.io
    lm, l_out = xf.l_m, ind.l
    sw = st.group("switch")
    r_sw = sw[0].r_on + sw[1].r_on if two else sw[0].r_on
    r_prim = r_sw + xf.r_p
    q1, q2 = st.devices[("rectifier", 0)], st.devices[("freewheel", 0)]
    sync_r, sync_f = q1.kind == "mosfet", q2.kind == "mosfet"
    resets = st.group("reset")
    if two:
        v0_r = resets[0].v_f0 + resets[1].v_f0
        r_rr = resets[0].r_d + resets[1].r_d + xf.r_p
    else:
        v0_r = resets[0].v_f0
        r_rr = a_r ** 2 * (resets[0].r_d + xf.r_r)
    z0 = np.zeros_like(vin)
    # forward position in the on-time: channel (0 + R_on·i) or diode (v_f0 + r_d·i)
    e1, r1 = (z0, q1.r_on) if sync_r else (q1.v_f0, q1.r_d)
    # freewheel position: gated channel, and its body diode in the dead times
    e2, r2 = (z0, q2.r_on) if sync_f else (q2.v_f0, q2.r_d)
    td = st.dead_time if sync_f else 0.0
    cin = st.capacitors[("input-capacitor", 0)]
    cout = st.capacitors[("output-capacitor", 0)]

    def _as(x, i):  # (N,) parameter against (N,) or (N, S) currents
        x = np.asarray(x, dtype=float)
        return x[:, None] if np.ndim(i) == 2 and x.ndim == 1 else x

    def v_body(i):
        return _as(q2.v_f0, i) + _as(q2.r_d, i) * i

    def v_gated(i):
        return _as(e2, i) + _as(r2, i) * i

    v_on_src, v_rs_src = vin.copy(), vin.copy()
    delta = np.zeros_like(vin)
    n_seg = 5 * N_SUB
    # mean inductor and magnetizing current of every piece in the last pass
    m_p = np.repeat(io[:, None], n_seg, axis=1)
    im_p = np.zeros_like(m_p)
    means = np.repeat(io[:, None], 4, axis=1)  # on-time, dead A, gated off-time, dead B
    duty = None
    on_mask = np.repeat(np.array([True, False, False, False, False]), N_SUB)
    for _ in range(MAX_PASSES):
        v_src = v_on_src + r_prim * delta
        m_on, m_a, m_c, m_b = means.T

        def e_on_of(d):
            return (v_src - r_prim * n * m_on) / (1 + r_prim * d * ts / lm / 2)

        def v_on_of(d):
            return n * e_on_of(d) - (xf.r_s + r1) * m_on - e1

        def vout(d):
            t_c = np.maximum((1 - d) * ts - 2 * td, 0.0)
            dcr_drop = ind.dcr * (d * ts * m_on + td * (m_a + m_b) + t_c * m_c) / ts
            return (d * v_on_of(d) - (td * (v_body(m_a) + v_body(m_b))
                                      + t_c * v_gated(m_c)) / ts - dcr_drop)

        new_duty, _ = solve_duty(vout, vo, 0.0, 1.0)
        d = np.clip(new_duty, 1e-9, 1.0 - 1e-9)
        t_on, t_off = d * ts, (1 - d) * ts
        e_on = e_on_of(d)
        i_mpk = np.maximum(e_on * t_on / lm - delta, 0.0)
        v_reset = a_r * (v_rs_src + v0_r) + r_rr * i_mpk / 2
        t_r = lm * i_mpk / v_reset
        t_rc = np.minimum(t_r, t_off)
        t_a = np.minimum(td, t_off)  # end of dead time A
        t_b = np.maximum(t_off - td, t_a)  # start of dead time B
        bp = np.sort(np.stack([z0, t_a, t_rc, t_b, t_off], axis=1), axis=1)
        dt4 = np.diff(bp, axis=1)
        mid = (bp[:, :-1] + bp[:, 1:]) / 2
        live = dt4 > 0

        def pieces(x):  # (N, 4) per off segment -> (N, 4·N_SUB) per piece
            return np.repeat(x, N_SUB, axis=1)

        seg_a = pieces(live & (mid < t_a[:, None]))
        seg_b = pieces(live & (mid > t_b[:, None]))
        seg_c = pieces(live) & ~seg_a & ~seg_b
        body_off = seg_a | seg_b
        reset_off = pieces(live & (mid < t_rc[:, None]))
        idle_off = pieces(live) & ~reset_off
        dt_off = pieces(dt4) / N_SUB
        dt_on = np.repeat(t_on[:, None], N_SUB, axis=1) / N_SUB
        grid = Grid(np.column_stack([dt_on, dt_off]))
        # piece slopes at the piece-mean currents of the last pass
        mo, mf = m_p[:, :N_SUB], m_p[:, N_SUB:]
        e_on_pc = v_on_src[:, None] - _as(r_prim, mo) * (n * mo + im_p[:, :N_SUB])
        v_on_pc = n * e_on_pc - _as(xf.r_s + r1, mo) * mo - _as(e1, mo)
        v_fw = np.where(body_off, v_body(mf), v_gated(mf))
        slope = np.column_stack([v_on_pc, -v_fw]) - ind.dcr * m_p - vo[:, None]
        inc = slope / l_out[:, None] * grid.dt
        a_rel = np.column_stack([z0, np.cumsum(inc, axis=1)[:, :-1]])
        b_rel = a_rel + inc
        level = io - (grid.dt * (a_rel + b_rel) / 2).sum(axis=1) / ts
        i_l = grid.wave(a_rel + level[:, None], b_rel + level[:, None])
        i_start = level
        # magnetizing current: reset from I_m,pk down to zero in t_r, then the idle clamp
        # (the forward position's diode or body diode beside the freewheel position)
        v_cl = np.maximum(v_fw - np.asarray(q1.v_f0, dtype=float)[:, None], 0.0) / n
        tau = np.column_stack([z0, np.cumsum(dt_off, axis=1)])
        cum = np.column_stack([z0, np.cumsum(np.where(idle_off, v_cl * dt_off, 0.0),
                                             axis=1)]) / lm[:, None]
        safe_tr = np.where(t_r > 0, t_r, 1.0)[:, None]
        im_reset = np.where(t_r[:, None] > 0,
                            i_mpk[:, None] * np.maximum(1 - tau / safe_tr, 0.0), 0.0)
        in_reset = np.column_stack([reset_off, np.zeros((len(d), 1), bool)]) | (
            tau <= t_rc[:, None] * (1 - 1e-12))
        im_tau = np.where(in_reset, im_reset, -cum)
        delta_new = cum[:, -1]
        on_ramp = np.linspace(0.0, 1.0, N_SUB + 1)[None, :]
        im_on = -delta[:, None] + (i_mpk + delta)[:, None] * on_ramp
        i_m = grid.wave(np.column_stack([im_on[:, :-1], im_tau[:, :-1]]),
                        np.column_stack([im_on[:, 1:], im_tau[:, 1:]]))
        on_ns = np.broadcast_to(on_mask, grid.dt.shape)
        fz = np.zeros((len(d), N_SUB), bool)
        reset_on = np.column_stack([fz, reset_off])
        idle = np.column_stack([fz, idle_off])
        body_ns = np.column_stack([fz, body_off])
        off_ns = ~on_ns
        i_sw = (i_l * n + i_m).only(on_ns)
        i_clamp = (i_m / -n).only(idle)
        i_fwd_on = i_l.only(on_ns)
        i_free = i_l.only(off_ns) - i_clamp
        i_mr = i_m.only(reset_on)
        i_rst = i_mr * a_r
        i_bus = i_sw - i_rst
        i_dc = i_bus.mean()
        i_cin = i_bus * -1 + i_dc
        bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, vin)
        v_on_new = mean_over_samples(bus, grid, on_mask)
        v_rs_new = _mean_where(bus, grid, reset_on, v_on_new)
        m_new = (i_l.a + i_l.b) / 2
        im_new = (i_m.a + i_m.b) / 2
        new_means = np.column_stack([
            m_new[:, :N_SUB].mean(axis=1),
            _seg_weighted(m_new[:, N_SUB:], dt_off, seg_a, i_l.b[:, N_SUB - 1]),
            _seg_weighted(m_new[:, N_SUB:], dt_off, seg_c, io),
            _seg_weighted(m_new[:, N_SUB:], dt_off, seg_b, i_start)])
        done = (duty is not None
                and np.allclose(new_duty, duty, rtol=PASS_RTOL, atol=0)
                and np.allclose(v_on_new, v_on_src, rtol=PASS_RTOL, atol=0)
                and np.allclose(v_rs_new, v_rs_src, rtol=PASS_RTOL, atol=0)
                and np.allclose(delta_new, delta, rtol=1e-9, atol=1e-12)
                and np.allclose(m_new, m_p, rtol=1e-9, atol=1e-9))
        duty, v_on_src, v_rs_src, delta, means = (new_duty, v_on_new, v_rs_new, delta_new,
                                                  new_means)
        m_p, im_p = m_new, im_new
        if done:
            break

    # blocking voltages ---------------------------------------------------------------------
    isw_s, il_s, im_s = i_sw.samples(), i_l.samples(), i_m.samples()
    e_on_s = bus - _col(r_prim) * isw_s
    v_res_s = _col(a_r) * (bus + _col(v0_r)) + _col(r_rr) * im_s
    v_out = capacitor_voltage_samples(i_l - io, cout.c, cout.esr, vo)
    v_free_s = np.where(body_ns[:, :, None], _col(q2.v_f0) + _col(q2.r_d) * il_s,
                        _col(e2) + _col(r2) * il_s)
    v_cl_ns = np.column_stack([np.zeros((len(duty), N_SUB)), v_cl])[:, :, None]
    v_block: dict = {}
    if two:
        for k, dev in enumerate(resets):
            v_clamp = _col(dev.v_f0) + _col(dev.r_d) * im_s
            v_block[("switch", k)] = np.maximum(_max_where(bus + v_clamp, reset_on),
                                                _max_where(bus, idle))
            v_rev_on = bus - _col(sw[k].r_on) * isw_s
            v_block[("reset", k)] = np.maximum(_max_where(v_rev_on, on_ns),
                                               _max_where(bus, idle))
    else:
        v_block[("switch", 0)] = np.maximum(_max_where(bus + v_res_s, reset_on),
                                            _max_where(bus + v_cl_ns, idle))
        v_block[("reset", 0)] = np.maximum(_max_where(bus + e_on_s / a_r, on_ns),
                                           _max_where(bus, idle))
    v_block[("rectifier", 0)] = np.maximum(_max_where(n * v_res_s - v_free_s, reset_on),
                                           _max_where(-v_free_s, idle))
    v_cathode_on = n * e_on_s - _col(xf.r_s + r1) * il_s - _col(e1)
    v_block[("freewheel", 0)] = _max_where(v_cathode_on, on_ns)
    v_block[("input-capacitor", 0)] = max_over(bus)
    v_block[("output-capacitor", 0)] = max_over(v_out)

    currents = {("inductor", 0): i_l, ("output-capacitor", 0): i_l - io,
                ("input-capacitor", 0): i_cin}
    body: dict = {}
    # MOSFET channel current counts drain -> source; the body diode's direction is the
    # diode's it replaces, so the forward current flows source -> drain: −i
    if sync_r:
        currents[("rectifier", 0)] = -i_fwd_on
        body[("rectifier", 0)] = i_clamp
    else:
        currents[("rectifier", 0)] = i_fwd_on + i_clamp
    if sync_f:
        currents[("freewheel", 0)] = -(i_free.only(~body_ns))
        body[("freewheel", 0)] = i_free.only(body_ns)
    else:
        currents[("freewheel", 0)] = i_free
    for k in range(len(sw)):
        currents[("switch", k)] = i_sw
    for k in range(len(resets)):
        currents[("reset", k)] = i_rst
    i_fwd = i_fwd_on + i_clamp

    p_wind, b_peak, reset_invalid = _magnetics(xf, two, i_sw, i_mr, i_fwd, i_rst, e_on_s,
                                               grid, on_mask, t_on, lm, delta, t_r, t_off)
    invalid = [
        reset_invalid,
    ]
    if sync_f and td > 0:
        invalid.append((i_start <= 0,
                        "the output inductor current is negative when the freewheel MOSFET "
                        "turns off (light load in forced continuous conduction): in the "
                        "dead time that follows neither body diode can carry it and the "
                        "rectifier node is driven by the device capacitances (not "
                        "modelled); raise the minimum load or the output inductance, or "
                        "shorten the dead time to zero"))
    if not sync_f:
        invalid.append((i_start <= 0,
                        "discontinuous conduction of the output inductor with a "
                        "synchronous forward rectifier beside a freewheel diode is not "
                        "modelled; use a MOSFET in the freewheel role too (forced "
                        "continuous conduction), or raise the minimum load or the output "
                        "inductance"))
    notes = ["switch and diode voltages are before any leakage spike or ringing",
             "b_peak is the swing from zero flux: remanence is not included"]
    if np.any(i_start < 0):
        notes.append("forced continuous conduction: the output inductor current turns "
                     "negative at light load and the synchronous rectifiers carry it")
    regime = np.full(len(duty), "CCM", dtype=object)
    return StageResult(duty=duty, grid=grid, currents=currents, v_block=v_block,
                       input_current=i_dc, winding_loss=p_wind, b_peak=b_peak,
                       i_m_peak=i_mpk, i_l_start=i_start, i_m_start=-delta, body=body,
                       invalid=invalid, regime=regime, notes=notes)


def _seg_weighted(values, dt, mask, fallback):
    """Time average of per-segment means ``values`` (N, S) over ``mask``; ``fallback``
    where the masked segments have no duration."""
    w = np.where(mask, dt, 0.0)
    total = w.sum(axis=1)
    return np.where(total > 0, (values * w).sum(axis=1) / np.where(total > 0, total, 1.0),
                    fallback)
