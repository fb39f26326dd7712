"""Full-bridge (PWM), half-bridge and push-pull converters with center-tap or full-bridge
rectifier, continuous conduction of the output inductor.

Segment grid of one switching period Ts = 1/fs (each switch conducts once per period):
  0: first half-cycle on, duration D·Ts      (FB: Q0+Q3; HB: Q0; PP: Q0)
  1: freewheel, (1/2 − D)·Ts                (all switches off)
  2: second half-cycle on, D·Ts              (FB: Q2+Q1; HB: Q1; PP: Q1)
  3: freewheel, (1/2 − D)·Ts

Relations (ideal forms in Erickson & Maksimović, Fundamentals of Power Electronics, 2nd
ed., §6.3.1–6.3.3, and Mohan, Undeland & Robbins, Power Electronics, 3rd ed., §10.5 —
from memory), extended here with conduction drops, magnetizing current and bus ripple:

* Output inductor volt-second balance, with v_on the mean rectified voltage during the
  on-intervals and v_fw the freewheel drop (both at the mean inductor current I_o):
      V_o + DCR·I_o = 2D·v_on − (1 − 2D)·v_fw          [V]
      v_on = n·(V_src − (R_sw + R_p)·n·I_o) − R_s·I_o − v_rect(I_o),   n = N_s/N_p
  where V_src is the mean source voltage of the primary during the on-interval (FB, PP:
  the bus; HB: the split capacitor), R_sw the on-path switch resistance (FB: two
  switches), v_rect = v_f0 + r_d·I (center-tap) or 2·(v_f0 + r_d·I) (bridge rectifier).
  Freewheel: both center-tap diodes share I_o, v_fw = v_f0 + (R_s + r_d)·I_o/2; bridge
  rectifier: all four conduct, v_fw = 2·v_f0 + r_d·I_o.
* Inductor ripple ΔI = (v_on − DCR·I_o − V_o)·D·Ts / L                        [A]
* Magnetizing current: λ = (V_src − (R_sw + R_p)·n·I_o)·D·Ts per on-interval [V·s];
  I_m = λ/(2·L_m) [A]; B_peak = λ/(2·N_p·A_e) [T] (Faraday's law, symmetric swing).
  In freewheel the primary is open and the secondary carries I_m: the rectifiers share
  I_L/2 ∓ I_m/(2n) (ampere-turn balance of the ideal transformer).
* The source supplies only DC: the input (or split) capacitors carry all the AC current
  (the conservative convention for their ripple rating).
"""

from __future__ import annotations

import numpy as np

from .. import schema
from ..errors import InputError
from ..waveforms import (Grid, capacitor_voltage_samples, max_over, mean_over_samples)
from . import Layout, RoleSpec, Stage, StageResult

ON1, FW1, ON2, FW2 = 0, 1, 2, 3
MASK_ON1 = np.array([True, False, False, False])
MASK_ON2 = np.array([False, False, True, False])

# Passes of the fixed point between duty and bus ripple (the bus ripple lowers the mean
# primary voltage during the on-interval by a fraction of a percent).
BUS_PASSES = 4


def layout(design) -> Layout:
    """Roles of a bridge-family design."""
    path, top, rect = design.path, design.topology, design.rectifier
    if rect is None:
        raise InputError(path, "converter.rectifier", "a bridge-family converter needs a "
                         "rectifier: " + ", ".join(schema.RECTIFIERS))
    if rect == "current-doubler":
        raise InputError(path, "converter.rectifier", "the current-doubler rectifier is "
                         "not modelled yet; use center-tap or full-bridge")
    if design.modulation != "pwm":
        if top != "full-bridge":
            raise InputError(path, "converter.modulation", "phase-shift modulation applies "
                             "to the full-bridge only")
        raise InputError(path, "converter.modulation", "phase-shift modulation is not "
                         "modelled yet; use pwm")
    roles = {
        "switch": RoleSpec(4 if top == "full-bridge" else 2, kinds=("mosfet",)),
        "rectifier": RoleSpec(2 if rect == "center-tap" else 4, kinds=("diode",)),
        "transformer": RoleSpec(1),
        "inductor": RoleSpec(1),
        "output-capacitor": RoleSpec(None),
    }
    if top == "half-bridge":
        roles["split-capacitor"] = RoleSpec(2)
    else:
        roles["input-capacitor"] = RoleSpec(None)
    return Layout(top, rect, roles)


def duty_limit(design, fs):
    """Each switch conducts at most half a period less the dead time [1]."""
    return 0.5 - design.dead_time * fs


def duty_limit_reason(design) -> str:
    text = "each switch conducts at most half a period"
    return text + (" less the dead time" if design.dead_time else "")


def evaluate(st: Stage) -> StageResult:
    top, rect = st.topology, st.rectifier
    xf, ind = st.transformer, st.inductors[0]
    n = xf.n_s / xf.n_p
    ts = 1.0 / st.fs
    io = st.io
    switch_r = [d.r_on for d in st.group("switch")]
    # on-path switch resistance, averaged over the two half-cycles
    if top == "full-bridge":
        r_sw = ((switch_r[0] + switch_r[3]) + (switch_r[2] + switch_r[1])) / 2
    else:
        r_sw = (switch_r[0] + switch_r[1]) / 2
    rects = st.group("rectifier")
    vf0 = np.mean([d.v_f0 for d in rects], axis=0)
    rd = np.mean([d.r_d for d in rects], axis=0)
    r_s = xf.r_s
    if rect == "center-tap":
        v_rect_on = vf0 + rd * io
        v_fw = vf0 + (r_s + rd) * io / 2
    else:
        v_rect_on = 2 * (vf0 + rd * io)
        v_fw = 2 * vf0 + rd * io
    r_prim = r_sw + xf.r_p

    v_src = st.vin / 2 if top == "half-bridge" else st.vin.copy()
    for _ in range(BUS_PASSES):
        emf_on = v_src - r_prim * n * io  # mean primary emf during the on-interval
        v_on = n * emf_on - r_s * io - v_rect_on
        duty = (st.vo + ind.dcr * io + v_fw) / (2 * (v_on + v_fw))
        d = np.clip(duty, 1e-6, 0.5)
        grid = Grid(np.stack([d * ts, (0.5 - d) * ts, d * ts, (0.5 - d) * ts], axis=1))
        d_i = (v_on - ind.dcr * io - st.vo) * d * ts / ind.l
        i_min, i_max = io - d_i / 2, io + d_i / 2
        lam = emf_on * d * ts
        i_m = lam / (2 * xf.l_m)

        z = np.zeros_like(io)
        i_l = grid.wave(np.stack([i_min, i_max, i_min, i_max], 1),
                        np.stack([i_max, i_min, i_max, i_min], 1))
        # current of the first / second on-path (switch current incl. magnetizing)
        i_a = grid.wave(np.stack([n * i_min - i_m, z, z, z], 1),
                        np.stack([n * i_max + i_m, z, z, z], 1))
        i_b = grid.wave(np.stack([z, z, n * i_min - i_m, z], 1),
                        np.stack([z, z, n * i_max + i_m, z], 1))
        share = (i_m / (2 * n))
        # rectifier that conducts with the first half-cycle, and with the second
        first = grid.wave(np.stack([i_min, i_max / 2 - share, z, i_max / 2 + share], 1),
                          np.stack([i_max, i_min / 2 - share, z, i_min / 2 + share], 1))
        second = grid.wave(np.stack([z, i_max / 2 + share, i_min, i_max / 2 - share], 1),
                           np.stack([z, i_min / 2 + share, i_max, i_min / 2 - share], 1))

        currents = {("inductor", 0): i_l, ("output-capacitor", 0): i_l - io}
        if top == "full-bridge":
            currents.update({("switch", 0): i_a, ("switch", 3): i_a,
                             ("switch", 2): i_b, ("switch", 1): i_b})
        else:
            currents.update({("switch", 0): i_a, ("switch", 1): i_b})
        if rect == "center-tap":
            currents.update({("rectifier", 0): first, ("rectifier", 1): second})
        else:
            currents.update({("rectifier", 0): first, ("rectifier", 3): first,
                             ("rectifier", 1): second, ("rectifier", 2): second})

        v_block: dict = {}
        if top == "half-bridge":
            i_dc = (i_a.mean() + i_b.mean()) / 2
            i_c1 = i_a * -1 + i_dc
            i_c2 = i_b * -1 + i_dc
            c1, c2 = st.capacitors[("split-capacitor", 0)], st.capacitors[("split-capacitor", 1)]
            v_c1 = capacitor_voltage_samples(i_c1, c1.c, c1.esr, st.vin / 2)
            v_c2 = capacitor_voltage_samples(i_c2, c2.c, c2.esr, st.vin / 2)
            bus = v_c1 + v_c2
            src1, src2 = v_c1, v_c2
            currents[("split-capacitor", 0)] = i_c1
            currents[("split-capacitor", 1)] = i_c2
            v_block[("split-capacitor", 0)] = max_over(v_c1)
            v_block[("split-capacitor", 1)] = max_over(v_c2)
        else:
            i_bus = i_a + i_b
            i_dc = i_bus.mean()
            i_cin = i_dc - i_bus
            cin = st.capacitors[("input-capacitor", 0)]
            bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, st.vin)
            src1 = src2 = bus
            currents[("input-capacitor", 0)] = i_cin
            v_block[("input-capacitor", 0)] = max_over(bus)
        v_src_new = (mean_over_samples(src1, grid, MASK_ON1)
                     + mean_over_samples(src2, grid, MASK_ON2)) / 2
        if np.allclose(v_src_new, v_src, rtol=1e-9, atol=0):
            v_src = v_src_new
            break
        v_src = v_src_new

    # blocking voltages ---------------------------------------------------------------
    ia_s, ib_s, il_s = i_a.samples(), i_b.samples(), i_l.samples()
    if top == "push-pull":
        # off switch: bus + emf of the conducting half (coupled winding of equal turns)
        v_q0 = max_over(2 * src2 - (switch_r[1][:, None, None] + xf.r_p) * ib_s, MASK_ON2)
        v_q1 = max_over(2 * src1 - (switch_r[0][:, None, None] + xf.r_p) * ia_s, MASK_ON1)
        bus_max = max_over(bus)
        v_block[("switch", 0)] = np.maximum(v_q0, bus_max)
        v_block[("switch", 1)] = np.maximum(v_q1, bus_max)
    else:
        bus_max = max_over(bus)
        for k in range(len(switch_r)):
            v_block[("switch", k)] = bus_max
    # primary emf during each on-interval, sampled
    emf1 = src1 - r_prim[:, None, None] * ia_s
    emf2 = src2 - r_prim[:, None, None] * ib_s
    vd = vf0[:, None, None] + rd[:, None, None] * il_s
    if rect == "center-tap":
        # blocking diode sees both secondary halves less the conducting diode's drop
        vr_first = max_over(2 * n * emf2 - r_s * il_s - vd, MASK_ON2)
        vr_second = max_over(2 * n * emf1 - r_s * il_s - vd, MASK_ON1)
        v_block[("rectifier", 0)] = vr_first
        v_block[("rectifier", 1)] = vr_second
    else:
        vr_first = max_over(n * emf2 - r_s * il_s - vd, MASK_ON2)
        vr_second = max_over(n * emf1 - r_s * il_s - vd, MASK_ON1)
        for k in (0, 3):
            v_block[("rectifier", k)] = vr_first
        for k in (1, 2):
            v_block[("rectifier", k)] = vr_second
    cout = st.capacitors[("output-capacitor", 0)]
    v_out = capacitor_voltage_samples(i_l - io, cout.c, cout.esr, st.vo)
    v_block[("output-capacitor", 0)] = max_over(v_out)

    # transformer ------------------------------------------------------------------------
    if top == "push-pull":
        p_wind = xf.r_p * (i_a.rms() ** 2 + i_b.rms() ** 2)
    else:
        i_prim = i_a - i_b
        p_wind = xf.r_p * i_prim.rms() ** 2
    if rect == "center-tap":
        p_wind = p_wind + r_s * (first.rms() ** 2 + second.rms() ** 2)
    else:
        i_sec = grid.wave(np.stack([i_min, -i_m / n, -i_min, i_m / n], 1),
                          np.stack([i_max, -i_m / n, -i_max, i_m / n], 1))
        p_wind = p_wind + r_s * i_sec.rms() ** 2
    b_peak = lam / (2 * xf.n_p * xf.core_area) if xf.core_area else None

    invalid = [
        (i_min <= 0, "the output inductor current falls to zero (discontinuous "
                     "conduction), which this bridge model does not cover yet; raise the "
                     "minimum load or the output inductance"),
        (i_min < i_m / n, "the magnetizing current exceeds the inductor current in "
                          "freewheel, so one rectifier would stop conducting (not modelled); "
                          "raise the magnetizing inductance or the minimum load"),
    ]
    return StageResult(duty=duty, grid=grid, currents=currents, v_block=v_block,
                       input_current=i_dc, winding_loss=p_wind, b_peak=b_peak,
                       i_m_peak=i_m, i_l_start=i_min, i_m_start=-i_m, invalid=invalid,
                       regime=np.full(io.shape, "CCM", dtype=object))
