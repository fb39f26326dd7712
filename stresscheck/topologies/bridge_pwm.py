"""Bridge-family converters with PWM modulation: full-bridge, half-bridge and push-pull,
center-tap, full-bridge or current-doubler rectifier, diodes or synchronous rectifiers
(see :mod:`.bridge` for the layouts and duty limits).

PWM segment grid of one switching period Ts = 1/fs (each switch conducts once per period):
  0 ON1   first half-cycle on, D·Ts          (FB: Q0+Q3; HB: Q0; PP: Q0)
  1 F1a   freewheel, t_b                    (rectifier B's body diode, synchronous only)
  2 F1b   freewheel, (1/2 − D)·Ts − 2·t_b   (all switches off)
  3 F1c   freewheel, t_b                    (rectifier A's body diode)
  4 ON2   second half-cycle on, D·Ts         (FB: Q2+Q1; HB: Q1; PP: Q1)
  5 F2a   t_b, A's body diode;  6 F2b;  7 F2c  t_b, B's body diode
Rectifier group A conducts with the first half-cycle (center-tap: rectifier 0; bridge
rectifier: 0 and 3; current doubler: rectifier 0, on the winding end that the first
half-cycle drives low), group B with the second (1; 1 and 2; 1). A synchronous rectifier
is gated off during the other half-cycle's on-interval widened by the dead time t_d on
both sides; for t_b = min(t_d, (1/2 − D)·Ts/2) after it turns on and before it turns off
its body diode carries its current. Diodes: t_b = 0 (the segments have zero length).

Relations (ideal forms in Erickson & Maksimović, Fundamentals of Power Electronics, 2nd
ed., §6.3.1–6.3.3, and Mohan, Undeland & Robbins, Power Electronics, 3rd ed., §10.5;
current doubler: Balogh, "The current-doubler rectifier: an alternative rectification
technique for push-pull and bridge converters", Unitrode application note U-165 — all
from memory), extended here with conduction drops, magnetizing current and bus ripple:

* Output inductor volt-second balance, Σ_k u_k·dt_k = 0 over the period, with u_k the
  inductor voltage in segment k taken at the segment's mean device currents [V]:
      on-interval (center-tap, bridge):  u = v_on − V_o − DCR·I_o
      v_on = n·(V_src − (R_sw + R_p)·n·I_s) − R_s·I_s − v_rect(I_o),   n = N_s/N_p
  with V_src the mean source voltage of the primary during the on-interval (FB, PP: the
  bus; HB: the split capacitor), R_sw the on-path switch resistance (FB: two switches),
  I_s the mean secondary current of the on-interval (I_o; current doubler I_o/2) and
  v_rect the drop of the conducting rectifier (center-tap: one device, bridge: two;
  diode v_f0 + r_d·I, synchronous channel R_DS(on)·I, body diode v_f0 + r_d·I).
  Freewheel (primary open): the rectifiers share I_L split by the magnetizing current,
  I_L/2 ∓ I_m/(2n) (ampere-turn balance of the ideal transformer, i_p = 0); the
  rectifier node sits at −(R_s·I_L + v_A + v_B)/2 (center-tap) or −(v_A + v_B) (bridge).
  The duty follows in closed form (the balance is linear in D for a given t_b branch).
* Current doubler (one secondary winding of N_s turns, no center tap; two inductors
  L1, L2 from its ends to the output, two rectifiers from its ends to the output
  return; meaningful for the push-pull too, whose secondary sees the same ±n·V_in):
  L1 charges only in ON1 with
  n·emf − R_s·I_1 − v_A(I_1 + I_2), and discharges through rectifier B for the rest of
  the period, so V_o = n·D·V_src in the lossless limit (D per switch), each inductor
  carries I_o/2 with a ripple at fs, the output capacitor their sum (ripple at 2·fs,
  partly cancelled). The conducting rectifier carries I_1 + I_2, the winding one
  inductor's current; the blocking rectifier sees the secondary voltage n·emf less the
  drops.
* Inductor current: piecewise linear with the segment slopes u_k/L, offset so that its
  mean is the load share (I_o; current doubler I_o/2 each).
* Magnetizing current: λ = (V_src − (R_sw + R_p)·n·I_s)·D·Ts per on-interval [V·s];
  I_m = λ/(2·L_m) [A]; B_peak = λ/(2·N_p·A_e) [T] (Faraday's law, symmetric swing).
* Synchronous rectifiers conduct in both directions: the inductor current may go
  negative at light load (forced continuous conduction); only during the body-diode
  intervals must the current flow forward.
* The source supplies only DC: the input (or split) capacitors carry all the AC current
  (the conservative convention for their ripple rating).
"""

from __future__ import annotations

import numpy as np

from ..waveforms import PWL, Grid, capacitor_voltage, per_corner
from .base import Stage, StageResult
from .bridge_light import LightLoad
from .bridge_rectifier import GROUPS, rectifier_groups
from .doubler_dcm import DoublerLight
from .doubler_light import DeadTimeReverse

ON1, F1A, F1B, F1C, ON2, F2A, F2B, F2C = range(8)
_SEGMENTS = 8


def _mask(*segments):
    m = np.zeros(_SEGMENTS, dtype=bool)
    m[list(segments)] = True
    return m


MASK_ON1, MASK_ON2 = _mask(ON1), _mask(ON2)
MASK_ON = _mask(ON1, ON2)
MASK_FW1, MASK_FW2 = _mask(F1A, F1B, F1C), _mask(F2A, F2B, F2C)
MASK_FW = MASK_FW1 | MASK_FW2
BODY_A, BODY_B = _mask(F1C, F2A), _mask(F1A, F2C)  # synchronous-rectifier body diodes

# Passes of the fixed point between duty, bus ripple (it lowers the mean primary voltage
# during the on-interval by a fraction of a percent) and the magnetizing share of the
# rectifier currents (it moves the synchronous rectifiers' body-diode drops).
BUS_PASSES = 8


def _segment_voltages(st, ga, gb, emf, m_share):
    """Inductor voltages per segment [V], (N, 8) for each output inductor.

    ``emf`` is the mean primary emf of an on-interval [V], ``m_share`` = I_m/n the
    magnetizing current referred to the secondary [A] (it splits the freewheel current).
    """
    rect, xf, io, vo = st.rectifier, st.transformer, st.io, st.vo
    n, r_s = xf.n_s / xf.n_p, xf.r_s
    nseg = (io.size, _SEGMENTS)
    share = np.where(MASK_FW1, 1.0, np.where(MASK_FW2, -1.0, 0.0))[None, :] * m_share[:, None]
    body_a, body_b = BODY_A[None, :], BODY_B[None, :]
    if rect == "current-doubler":
        ih = io / 2
        out = []
        for k in (0, 1):
            dcr = st.inductors[k].dcr
            u = np.empty(nseg)
            if k == 0:  # L1 on the winding end that ON1 drives high; rectifier B clamps it
                fw = -gb.drop(ih[:, None] + share, body_b)
                u[:, ON1] = n * emf - r_s * ih - ga.drop(io)
                u[:, ON2] = -gb.drop(io)
            else:
                fw = -ga.drop(ih[:, None] - share, body_a)
                u[:, ON1] = -ga.drop(io)
                u[:, ON2] = n * emf - r_s * ih - gb.drop(io)
            u[:, MASK_FW] = fw[:, MASK_FW]
            out.append(u - (vo + dcr * ih)[:, None])
        return out
    i_a = (io[:, None] - share) / 2
    i_b = (io[:, None] + share) / 2
    u = np.empty(nseg)
    if rect == "center-tap":
        u[:, ON1] = n * emf - r_s * io - ga.drop(io)
        u[:, ON2] = n * emf - r_s * io - gb.drop(io)
        fw = -(r_s * io[:, None] + ga.drop(i_a, body_a) + gb.drop(i_b, body_b)) / 2
    else:
        u[:, ON1] = n * emf - r_s * io - 2 * ga.drop(io)
        u[:, ON2] = n * emf - r_s * io - 2 * gb.drop(io)
        fw = -(ga.drop(i_a, body_a) + gb.drop(i_b, body_b))
    u[:, MASK_FW] = fw[:, MASK_FW]
    return [u - (vo + st.inductors[0].dcr * io)[:, None]]


def _below_ccm(st, i_l, share):
    """Corners (N,) below the CCM boundary that :mod:`.bridge_light` solves: diode
    rectifiers (center-tap or bridge) where the inductor current reaches zero or a
    rectifier's freewheel share (i_L ∓ i_m/n)/2 would go negative, and no-load corners."""
    io = st.io
    if rectifier_groups(st)[0].sync:
        return np.zeros(io.shape, bool)
    if st.rectifier == "current-doubler":  # doubler_dcm: each diode on its own
        l1, l2 = i_l
        low = np.minimum((l2 - share).min(MASK_FW), (l1 + share).min(MASK_FW))
        return (io <= 0) | (np.minimum(l1.min(), l2.min()) <= 0) | (low < 0)
    (l1,) = i_l
    low = np.minimum(((l1 - share) / 2).min(MASK_FW), ((l1 + share) / 2).min(MASK_FW))
    return (io <= 0) | (l1.min() <= 0) | (low < 0)


def _balance_duty(u, ts, t_d):
    """Duty ratio D at which Σ u_k·dt_k = 0 over the period [1].

    Durations: D·Ts (on), t_b, (1/2 − D)·Ts − 2·t_b, t_b per half; t_b = t_d while the
    freewheel lasts at least 2·t_d, else half the freewheel.
    """
    on = u[:, ON1] + u[:, ON2]
    edge = u[:, F1A] + u[:, F1C] + u[:, F2A] + u[:, F2C]
    mid = u[:, F1B] + u[:, F2B]
    d_full = -(t_d * (edge - 2 * mid) + ts / 2 * mid) / (ts * (on - mid))
    d_short = -edge / (4 * on - 2 * edge)
    return np.where((0.5 - d_full) * ts >= 2 * t_d, d_full, d_short)


def _durations(d, ts, t_d):
    fw = (0.5 - d) * ts
    t_b = np.minimum(t_d, fw / 2)
    return np.stack([d * ts, t_b, fw - 2 * t_b, t_b] * 2, axis=1)


def inductor_wave(grid: Grid, u, inductance, i_mean):
    """Inductor current from its segment voltages, offset to its mean.

    Parameters
    ----------
    grid : Grid
        Segment durations (N, S) [s].
    u : numpy.ndarray
        Inductor voltage per segment (N, S) [V].
    inductance : numpy.ndarray
        (N,) [H].
    i_mean : numpy.ndarray
        Mean current over the period (N,) [A].

    Returns
    -------
    PWL
        The inductor current [A]: slopes u/L, piecewise linear.
    """
    inc = u * grid.dt / inductance[:, None]
    start = np.concatenate([np.zeros((u.shape[0], 1)), np.cumsum(inc, axis=1)[:, :-1]], axis=1)
    end = start + inc
    mean = (grid.dt * (start + end) / 2).sum(axis=1) / grid.period
    offset = (i_mean - mean)[:, None]
    return grid.wave(start + offset, end + offset)


def evaluate(st: Stage) -> StageResult:
    """PWM model of every corner (module docstring).

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    top, rect = st.topology, st.rectifier
    doubler = rect == "current-doubler"
    xf = st.transformer
    n = xf.n_s / xf.n_p
    ts = 1.0 / st.fs
    io = st.io
    switch_r = [d.r_on for d in st.group("switch")]
    # on-path switch resistance, averaged over the two half-cycles
    if top == "full-bridge":
        r_sw = ((switch_r[0] + switch_r[3]) + (switch_r[2] + switch_r[1])) / 2
    else:
        r_sw = (switch_r[0] + switch_r[1]) / 2
    r_prim = r_sw + xf.r_p
    r_s = xf.r_s
    ga, gb = rectifier_groups(st)
    sync = ga.sync
    t_d = st.dead_time if sync else 0.0
    i_sec = io / 2 if doubler else io  # mean secondary current of an on-interval

    v_src = st.v_in / 2 if top == "half-bridge" else st.v_in.copy()
    gain = n if doubler else 2 * n  # V_o = gain·D·V_src, lossless
    i_m = v_src * (st.vo / (gain * v_src)) * ts / (2 * xf.l_m)
    light_mask, light = None, None
    dead = None  # synchronous current doubler: reverse current at a channel's turn-off
    sw_vf = np.mean([d.v_f0 for d in st.group("switch")], axis=0)  # body diodes
    # threshold of the body diodes in a reversed primary path (full bridge: two)
    path_vf = sw_vf * (2 if top == "full-bridge" else 1)
    if doubler and sync and np.any(t_d > 0):
        dead = DeadTimeReverse(n, st.inductors[0].l, xf.l_m, np.zeros(io.shape))
    for _ in range(BUS_PASSES):
        emf_on = v_src - r_prim * n * i_sec  # mean primary emf during the on-interval
        u = _segment_voltages(st, ga, gb, emf_on, i_m / n)
        if dead is not None:  # reverse part: winding at n·(V_src + v_f0 + R·I)
            du_rev = n * (path_vf + r_prim * n * i_sec) + 0 * io
            u = dead.voltages(u, du_rev)
        duty = _balance_duty(u[0], ts, t_d)
        d = np.clip(duty, 1e-6, 0.5)
        grid = Grid(_durations(d, ts, t_d))
        lam = emf_on * d * ts
        if dead is not None:  # volt-seconds of the reverse part of the dead time
            lam_rev = (v_src + path_vf + r_prim * n * i_sec) * dead.t_rev()
            lam = lam + lam_rev
        i_m_new = lam / (2 * xf.l_m)
        i_l = [inductor_wave(grid, uk, ind.l, io / len(u))
               for uk, ind in zip(u, st.inductors)]
        im_a = np.where(MASK_ON1, -1.0, np.where(MASK_ON2 | MASK_FW1, 1.0, -1.0))
        im_b = np.where(MASK_ON2 | MASK_FW2, -1.0, 1.0)
        mag = grid.wave(im_a[None, :] * i_m_new[:, None], im_b[None, :] * i_m_new[:, None])
        if dead is not None:
            mag = dead.magnetizing(mag, i_m_new, lam_rev / lam)
        share = mag / n
        if light_mask is None:  # decided once, on the first pass's CCM solution
            light_mask = _below_ccm(st, i_l, share)
        if light_mask.any():  # light-load regimes (bridge_light) at those corners
            if doubler:
                light = DoublerLight(st, ga, gb, light_mask, v_src, r_prim,
                                     np.full(io.shape, 0.5), path_vf)
                dt_new, l1a, l1b, l2a, l2b, ma, mb = light.apply(grid.dt, *i_l, mag)
                grid = Grid(dt_new)
                i_l = [grid.wave(l1a, l1b), grid.wave(l2a, l2b)]
            else:
                light = LightLoad(st, ga, gb, light_mask, v_src, r_prim,
                                  np.full(io.shape, 0.5))
                dt_new, la, lb, ma, mb = light.apply(grid.dt, i_l[0].a, i_l[0].b, mag.a,
                                                     mag.b)
                grid = Grid(dt_new)
                i_l = [grid.wave(la, lb)]
            mag = grid.wave(ma, mb)
            share = mag / n
            duty, lam, i_m_new = duty.copy(), lam.copy(), i_m_new.copy()
            duty[light.idx] = light.duty
            i_m_new[light.idx] = light.i_m_peak
            lam[light.idx] = 2 * light.p["lm"] * light.i_m_peak
        if doubler:
            l1, l2 = i_l
            both = l1 + l2
            cur_a = both.only(MASK_ON1) + (l2 - share).only(MASK_FW)
            cur_b = both.only(MASK_ON2) + (l1 + share).only(MASK_FW)
            i_s = l1.only(MASK_ON1) - l2.only(MASK_ON2) - share.only(MASK_FW)
            if light is not None:  # doubler_dcm: body-diode return after an on-interval
                cur_a, cur_b, i_s, bd_a, bd_b = light.patch(cur_a, cur_b, i_s)
        else:
            (l1,) = i_l
            cur_a = l1.only(MASK_ON1) + ((l1 - share) / 2).only(MASK_FW)
            cur_b = l1.only(MASK_ON2) + ((l1 + share) / 2).only(MASK_FW)
            i_s = l1.only(MASK_ON1) - l1.only(MASK_ON2) - share.only(MASK_FW)
        i_prim = (i_s * n + mag).only(MASK_ON)
        i_a = i_prim.only(MASK_ON1)  # current of the first / second on-path
        i_b = (-i_prim).only(MASK_ON2)
        if doubler and light is not None:
            i_a, i_b = i_a + bd_a, i_b + bd_b
        dead_settled = True
        if dead is not None:
            cur_a, cur_b, i_a, i_b = dead.patch(cur_a, cur_b, i_a, i_b, i_l, share)
            dead_settled = dead.observe(i_l, share, grid.dt[:, F1C])

        currents = {("inductor", k): w for k, w in enumerate(i_l)}
        i_out_sum = i_l[0] if len(i_l) == 1 else i_l[0] + i_l[1]
        currents[("output-capacitor", 0)] = i_out_sum - io
        if top == "full-bridge":
            currents.update({("switch", 0): i_a, ("switch", 3): i_a,
                             ("switch", 2): i_b, ("switch", 1): i_b})
        else:
            currents.update({("switch", 0): i_a, ("switch", 1): i_b})

        v_block: dict = {}
        if top == "half-bridge":
            i_dc = (i_a.mean() + i_b.mean()) / 2
            i_c1 = i_a * -1 + i_dc
            i_c2 = i_b * -1 + i_dc
            c1, c2 = st.capacitors[("split-capacitor", 0)], st.capacitors[("split-capacitor", 1)]
            v_c1 = capacitor_voltage(i_c1, c1.c, c1.esr, st.v_in / 2)
            v_c2 = capacitor_voltage(i_c2, c2.c, c2.esr, st.v_in / 2)
            bus = v_c1 + v_c2
            src1, src2 = v_c1, v_c2
            currents[("split-capacitor", 0)] = i_c1
            currents[("split-capacitor", 1)] = i_c2
            v_block[("split-capacitor", 0)] = v_c1.max()
            v_block[("split-capacitor", 1)] = v_c2.max()
        else:
            i_bus = i_a + i_b
            i_dc = i_bus.mean()
            i_cin = i_dc - i_bus
            cin = st.capacitors[("input-capacitor", 0)]
            bus = capacitor_voltage(i_cin, cin.c, cin.esr, st.v_in)
            src1 = src2 = bus
            currents[("input-capacitor", 0)] = i_cin
            v_block[("input-capacitor", 0)] = bus.max()
        v_src_new = (src1.mean_over(MASK_ON1) + src2.mean_over(MASK_ON2)) / 2
        settled = (dead_settled and np.allclose(v_src_new, v_src, rtol=1e-9, atol=0)
                   and np.allclose(i_m_new, i_m, rtol=1e-9, atol=1e-12))
        v_src, i_m = v_src_new, i_m_new
        if settled:
            break

    # rectifier positions ----------------------------------------------------------------
    a_pos, b_pos = GROUPS[rect]
    body_result: dict = {}
    for positions, cur, body_mask in ((a_pos, cur_a, BODY_A), (b_pos, cur_b, BODY_B)):
        for k in positions:
            if sync:  # channel current drain -> source: the forward current reversed
                currents[("rectifier", k)] = (-cur).only(~body_mask)
                body_result[("rectifier", k)] = cur.only(body_mask)
            else:
                currents[("rectifier", k)] = cur

    # blocking voltages (exact: capacitor voltages are piecewise quadratic, the rest
    # piecewise linear) -------------------------------------------------------------------
    l1 = i_l[0]
    if top == "push-pull":
        # off switch: bus + emf of the conducting half (coupled winding of equal turns)
        v_q0 = (src2 * 2 - i_b * (per_corner(switch_r[1], 1) + xf.r_p)).max(MASK_ON2)
        v_q1 = (src1 * 2 - i_a * (per_corner(switch_r[0], 1) + xf.r_p)).max(MASK_ON1)
        bus_max = bus.max()
        v_block[("switch", 0)] = np.maximum(v_q0, bus_max)
        v_block[("switch", 1)] = np.maximum(v_q1, bus_max)
    else:
        bus_max = bus.max()
        if dead is not None:  # a leg's body diode conducts: the other switch sees its drop
            bus_max = np.where(dead.t_rev() > 0, bus_max + sw_vf, bus_max)
        if doubler and light is not None:
            body = np.zeros(io.shape, bool)
            body[light.idx] = light.bd
            bus_max = np.where(body, bus_max + sw_vf, bus_max)
        for k in range(len(switch_r)):
            v_block[("switch", k)] = bus_max
    # primary emf during each on-interval
    emf1 = src1 - i_a * per_corner(r_prim, 1)
    emf2 = src2 - i_b * per_corner(r_prim, 1)
    if doubler:
        l2 = i_l[1]
        both = l1 + l2
        v_a = (emf2 * n - l2 * r_s - _drop(gb, both)).max(MASK_ON2)
        v_b = (emf1 * n - l1 * r_s - _drop(ga, both)).max(MASK_ON1)
        if dead is not None:  # reverse part of a dead time: source plus body-diode drop
            v_up = path_vf + r_prim * n * i_sec
            v_a = np.maximum(v_a, dead.blocking(src2.max(_mask(F1C)), v_up, gb.drop(io)))
            v_b = np.maximum(v_b, dead.blocking(src1.max(_mask(F2C)), v_up, ga.drop(io)))
    elif rect == "center-tap":
        # blocking rectifier sees both secondary halves less the conducting one's drop
        v_a = (emf2 * (2 * n) - l1 * r_s - _drop(gb, l1)).max(MASK_ON2)
        v_b = (emf1 * (2 * n) - l1 * r_s - _drop(ga, l1)).max(MASK_ON1)
    else:
        v_a = (emf2 * n - l1 * r_s - _drop(gb, l1)).max(MASK_ON2)
        v_b = (emf1 * n - l1 * r_s - _drop(ga, l1)).max(MASK_ON1)
    if light is not None:  # reverse voltage after a group stops (FW1, IDLE)
        idx = light.idx
        v_a, v_b = v_a.copy(), v_b.copy()
        v_a[idx] = np.maximum(v_a[idx], light.blocking(st.vo, gb.drop(io)[idx]))
        v_b[idx] = np.maximum(v_b[idx], light.blocking(st.vo, ga.drop(io)[idx]))
    for k in a_pos:
        v_block[("rectifier", k)] = v_a
    for k in b_pos:
        v_block[("rectifier", k)] = v_b
    cout = st.capacitors[("output-capacitor", 0)]
    v_out = capacitor_voltage(currents[("output-capacitor", 0)], cout.c, cout.esr, st.vo)
    v_block[("output-capacitor", 0)] = v_out.max()

    # transformer ------------------------------------------------------------------------
    if top == "push-pull":
        p_wind = xf.r_p * (i_a.rms() ** 2 + i_b.rms() ** 2)
    else:
        p_wind = xf.r_p * (i_a - i_b).rms() ** 2
    if rect == "center-tap":
        p_wind = p_wind + r_s * (cur_a.rms() ** 2 + cur_b.rms() ** 2)
    else:
        p_wind = p_wind + r_s * i_s.rms() ** 2
    b_peak = lam / (2 * xf.n_p * xf.core_area) if xf.core_area else None

    i_min = np.min([w.min() for w in i_l], axis=0)
    regime = np.full(io.shape, "CCM", dtype=object)
    if sync:  # the channels conduct both ways: never discontinuous
        regime[i_min < 0] = "forced-CCM"
    ccm = np.ones(io.shape, bool)
    if light is not None:
        regime[light.idx] = light.regime
        ccm[light.idx] = False
        clamp = np.zeros(io.shape, bool)
        clamp[light.idx] = light.body_diode_clamp()
    if sync:
        # forward current during the body-diode intervals (zero-length ones included)
        body_min = np.minimum(*[w.min(mask)
                                for w, mask in ((cur_a, BODY_A), (cur_b, BODY_B))])
        invalid = [
            ((t_d > 0) & (body_min < 0), "a synchronous rectifier carries reverse current "
             "when its channel turns off (light load, forced continuous conduction): its "
             "body diode cannot take that current during the dead time, which then flows "
             "back through the primary switches' body diodes (not modelled); raise the "
             "minimum load or the output inductance, or shorten the dead time"),
        ]
    else:
        what = "an output inductor current" if doubler else "the output inductor current"
        invalid = [
            (ccm & (i_min <= 0), f"{what} falls to zero (discontinuous conduction), "
                         "which this bridge model does not cover yet; raise the minimum "
                         "load or the output inductance, or use synchronous rectifiers"),
            (ccm & (np.minimum(cur_a.min(), cur_b.min()) < 0),
             "the magnetizing current exceeds the inductor current in freewheel, so one "
             "rectifier would stop conducting (not modelled); raise the magnetizing "
             "inductance or the minimum load"),
        ]
        if light is not None:
            invalid.append((clamp, "at the end of an on-interval an output inductor "
                            "current is below the magnetizing current referred to the "
                            "secondary, so the magnetizing current returns through the "
                            "switches' body diodes (not modelled); raise the magnetizing "
                            "inductance or the minimum load" if doubler else
                            "in the freewheel after a rectifier stops, the "
                            "primary voltage would exceed the source and the magnetizing "
                            "current return through the switches' body diodes (not "
                            "modelled)"))
    return StageResult(duty=duty, grid=grid, currents=currents, v_block=v_block,
                       input_current=i_dc, winding_loss=p_wind, b_peak=b_peak,
                       i_m_peak=i_m, i_l_start=i_l[0].a[:, 0], i_m_start=mag.a[:, 0],
                       body=body_result, invalid=invalid,
                       regime=regime,
                       notes=["the model's voltages are before any leakage spike or ringing (the "
                              "design's clamp or overshoot allowance adds it where the leakage "
                              "drives a position); leakage inductance is not in the PWM model's "
                              "currents"])


def _drop(group, i: PWL) -> PWL:
    """Conduction drop [V] of a rectifier group carrying ``i`` [A] as a waveform: the
    channel R_DS(on)·i of synchronous rectifiers, v_f0 + r_d·i of diodes (the relation
    of ``RectifierGroup.drop``)."""
    if group.sync:
        return i * per_corner(group.r_on, 1)
    return i * per_corner(group.r_d, 1) + per_corner(group.v_f0, 1)
