"""Forward converters with diode rectifiers (forward diode + freewheel diode), the output
inductor in continuous (CCM) or discontinuous (DCM) conduction (see :mod:`.forward` for
the circuit and the segment grid, :mod:`.forward_primary` for the primary side).

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
"""

from __future__ import annotations

import numpy as np

from ..regulation import solve_duty
from ..waveforms import (Grid, capacitor_voltage_samples, max_over, mean_over_samples,
                         per_corner)
from .base import Stage, StageResult
from .forward_primary import magnetics, primary, primary_blocking

MASK_ON = np.array([True, False, False, False])
MAX_PASSES = 40  # fixed point between duty, magnetizing current and bus ripple
PASS_RTOL = 1e-12


def evaluate(st: Stage) -> StageResult:
    """Diode rectifiers, CCM or DCM per corner (module docstring).

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    pr = primary(st)
    two, n, a_r, r_prim, v0_r, r_rr = pr.two, pr.n, pr.a_r, pr.r_prim, pr.v0_r, pr.r_rr
    xf, ind = st.transformer, st.inductors[0]
    ts = 1.0 / st.fs
    v_in, vo, io = st.v_in, st.vo, st.io
    lm, l_out, dcr = xf.l_m, ind.l, ind.dcr
    d1, d2 = st.devices[("rectifier", 0)], st.devices[("freewheel", 0)]
    r_a = xf.r_s + d1.r_d + dcr  # on-interval series resistance of the inductor path
    v_fw_ccm = d2.v_f0 + d2.r_d * io
    cin = st.capacitors[("input-capacitor", 0)]
    cout = st.capacitors[("output-capacitor", 0)]

    v_on_src = v_in.copy()  # mean bus voltage over the on-time
    v_rs_src = v_in.copy()  # mean bus voltage over the reset
    delta = np.zeros_like(v_in)  # magnetizing current at the end of the idle interval, −
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
        bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, v_in)

        # idle (CCM): the forward diode conducts beside the freewheel diode as soon as the
        # secondary swings to v_f0,rect − v_free(i_L) < 0; that voltage, reflected, drives
        # the magnetizing current below zero until the next on-time
        i_idle = np.where(idle_len[:, 0] > 0, (il_off[:, 1] + il_off[:, 2]) / 2, i_start)
        v_clamp = np.maximum(d2.v_f0 + d2.r_d * i_idle - d1.v_f0, 0.0) / n
        delta_new = np.where(dcm, 0.0, v_clamp * idle_len[:, 0] / lm)
        v_on_new = mean_over_samples(bus, grid, MASK_ON)
        v_rs_new = mean_over_samples(bus, grid, reset_on, v_on_new)
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
    e_on_s = bus - per_corner(r_prim) * isw_s  # primary emf during the on-time
    # reset voltage on the primary
    v_res_s = per_corner(a_r) * (bus + per_corner(v0_r)) + per_corner(r_rr) * im_s
    v_out = capacitor_voltage_samples(i_l - io, cout.c, cout.esr, vo)
    v_free_s = per_corner(d2.v_f0) + per_corner(d2.r_d) * il_s
    v_block = primary_blocking(pr, bus, isw_s, im_s, e_on_s, v_res_s, per_corner(v_clamp),
                               on_ns, reset_on, idle)
    # forward diode: reflected reset voltage against its cathode (freewheel drop or V_o)
    v_d1 = np.maximum.reduce([
        max_over(n * v_res_s - v_free_s, reset_on & fw_on),
        max_over(n * v_res_s + v_out, reset_on & zero_il),
        max_over(v_out, idle & zero_il),
        max_over(-v_free_s, idle & fw_on)])
    v_block[("rectifier", 0)] = v_d1
    v_cathode_on = n * e_on_s - per_corner(xf.r_s + d1.r_d) * il_s - per_corner(d1.v_f0)
    v_block[("freewheel", 0)] = np.maximum(max_over(v_cathode_on, on_ns),
                                           max_over(v_out, zero_il))
    v_block[("input-capacitor", 0)] = max_over(bus)
    v_block[("output-capacitor", 0)] = max_over(v_out)

    currents = {("inductor", 0): i_l, ("output-capacitor", 0): i_l - io,
                ("input-capacitor", 0): i_cin, ("rectifier", 0): i_fwd,
                ("freewheel", 0): i_free}
    for k in range(len(pr.sw)):
        currents[("switch", k)] = i_sw
    for k in range(len(pr.resets)):
        currents[("reset", k)] = i_rst

    # transformer ---------------------------------------------------------------------------
    p_wind, b_peak, reset_invalid = magnetics(xf, two, i_sw, i_mr, i_fwd, i_rst, e_on_s,
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
                       notes=["the model's voltages are before any leakage spike or ringing (the design's "
                              "overshoot allowance adds it)",
                              "b_peak is the swing from zero flux: remanence is not included"])
