"""Forward converters with synchronous rectifiers (see :mod:`.forward` for the circuit
and the lossless relations, :mod:`.forward_primary` for the primary side).

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
"""

from __future__ import annotations

import numpy as np

from ..regulation import solve_duty
from ..waveforms import (Grid, capacitor_voltage_samples, max_over, mean_over_samples,
                         per_corner)
from .base import Stage, StageResult
from .forward_primary import magnetics, primary, primary_blocking

MAX_PASSES = 40  # fixed point between duty, magnetizing current and bus ripple
N_SUB = 8  # straight pieces per interval (module docstring)
PASS_RTOL = 1e-12


def evaluate(st: Stage) -> StageResult:
    """Synchronous rectifiers: a MOSFET in the rectifier and/or the freewheel position
    (module docstring). Continuous conduction of the output inductor throughout (forced
    by a freewheel MOSFET).

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    pr = primary(st)
    q1, q2 = st.devices[("rectifier", 0)], st.devices[("freewheel", 0)]
    two, n, a_r, r_prim, v0_r, r_rr = pr.two, pr.n, pr.a_r, pr.r_prim, pr.v0_r, pr.r_rr
    xf, ind = st.transformer, st.inductors[0]
    ts = 1.0 / st.fs
    v_in, vo, io = st.v_in, st.vo, st.io
    lm, l_out = xf.l_m, ind.l
    sync_r, sync_f = q1.kind == "mosfet", q2.kind == "mosfet"
    z0 = np.zeros_like(v_in)
    # forward position in the on-time: channel (0 + R_on·i) or diode (v_f0 + r_d·i)
    e1, r1 = (z0, q1.r_on) if sync_r else (q1.v_f0, q1.r_d)
    # freewheel position: gated channel, and its body diode in the dead times
    e2, r2 = (z0, q2.r_on) if sync_f else (q2.v_f0, q2.r_d)
    td = st.dead_time if sync_f else 0.0
    cin = st.capacitors[("input-capacitor", 0)]
    cout = st.capacitors[("output-capacitor", 0)]

    def _as(x, i):  # (N,) parameter against (N,) or (N, S) currents
        return per_corner(x, np.ndim(i))

    def v_body(i):
        return _as(q2.v_f0, i) + _as(q2.r_d, i) * i

    def v_gated(i):
        return _as(e2, i) + _as(r2, i) * i

    v_on_src, v_rs_src = v_in.copy(), v_in.copy()
    delta = np.zeros_like(v_in)
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
        bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, v_in)
        v_on_new = mean_over_samples(bus, grid, on_mask)
        v_rs_new = mean_over_samples(bus, grid, reset_on, v_on_new)
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
    e_on_s = bus - per_corner(r_prim) * isw_s
    v_res_s = per_corner(a_r) * (bus + per_corner(v0_r)) + per_corner(r_rr) * im_s
    v_out = capacitor_voltage_samples(i_l - io, cout.c, cout.esr, vo)
    v_free_s = np.where(body_ns[:, :, None], per_corner(q2.v_f0) + per_corner(q2.r_d) * il_s,
                        per_corner(e2) + per_corner(r2) * il_s)
    v_cl_ns = np.column_stack([np.zeros((len(duty), N_SUB)), v_cl])[:, :, None]
    v_block = primary_blocking(pr, bus, isw_s, im_s, e_on_s, v_res_s, v_cl_ns, on_ns,
                               reset_on, idle)
    v_block[("rectifier", 0)] = np.maximum(max_over(n * v_res_s - v_free_s, reset_on),
                                           max_over(-v_free_s, idle))
    v_cathode_on = n * e_on_s - per_corner(xf.r_s + r1) * il_s - per_corner(e1)
    v_block[("freewheel", 0)] = max_over(v_cathode_on, on_ns)
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
    for k in range(len(pr.sw)):
        currents[("switch", k)] = i_sw
    for k in range(len(pr.resets)):
        currents[("reset", k)] = i_rst
    i_fwd = i_fwd_on + i_clamp

    p_wind, b_peak, reset_invalid = magnetics(xf, two, i_sw, i_mr, i_fwd, i_rst, e_on_s,
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
    notes = ["the model's voltages are before any leakage spike or ringing (the design's "
             "overshoot allowance adds it)",
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
