"""Phase-shifted full bridge (zero-voltage-switching PWM) with center-tap or full-bridge
rectifier, diodes or synchronous (MOSFET) rectifiers, and the transformer's leakage
inductance L_lk (plus any series resonant inductor, referred to the primary), continuous
conduction of the output inductor.

Switches (design order): Q0 leg A high, Q1 leg A low, Q2 leg B high, Q3 leg B low.
Every switch conducts half a period less the dead time t_d. Leg B is the *lagging* leg
(it ends the freewheel interval), leg A the *leading* leg (it ends the power interval).
Time 0 is the lagging leg's transition Q2 -> Q3; the duty ratio D is the applied
interval per half period (from a lagging to a leading transition) over Ts = 1/fs, the
phase overlap of the two legs:
  Q3 on [t_d, Ts/2],   Q2 on [Ts/2 + t_d, Ts],
  Q0 on [Ts/2 + D·Ts + t_d, Ts + D·Ts],   Q1 on [D·Ts + t_d, Ts/2 + D·Ts].
The primary sees +V_in while Q0 and Q3 (or their body diodes) conduct, −V_in with Q1
and Q2, and is shorted in the freewheel: after the positive half-cycle through both
*low-side* switches (Q1, Q3), after the negative one through both *high-side* switches
(Q0, Q2). The voltage changes at each turn-off instant: the current commutates into the
complementary switch's body diode (lossless zero-voltage transition, C_oss left out), so
in the dead time after the leading leg switches the incoming switch's body diode
carries the freewheeling current, and after the lagging leg switches it carries the
reversing primary current.

Segments of the first half period (the second mirrors it: i_p, i_m and the rectifiers
swapped):
  0 S0   lagging leg dead time, its body diode conducts, i_p reverses (both rectifiers on)
  1 S1   i_p keeps reversing through the switch channels until the outgoing rectifier's
         current reaches zero (end of the commutation)
  2 OPEN only if i_p reaches zero inside the dead time: the primary stays open (i_p = 0,
         the body diode blocks) until the lagging switch's channel turns on
  3 S3   after OPEN: i_p rises from zero until the commutation ends
  4 P    effective power interval, one rectifier conducts
  5-6    leading leg dead time (body diode of Q1): both rectifiers on / one on
  7-10   freewheel through the channels with both rectifiers on (4 sub-segments)
  11     freewheel with one rectifier on
Duty loss (Sabaté, Vlatković, Ridley, Lee and Cho, "Design considerations for
high-voltage high-power full-bridge zero-voltage-switched PWM converter", IEEE APEC
1990 — from memory): the secondary is shorted while the primary current reverses
through L_lk, for Δt = L_lk·(I_p1 + I_p2)/V_in, I_p1 and I_p2 the primary current
magnitudes before and after the reversal (2·n·I_o at full reflected load and
negligible ripple), so the effective duty is D_eff = D − Δt·fs and, lossless,
V_o = 2·n·D_eff·V_in [V] (our D per switch period; their D per half period = 2·D).
This module solves the same intervals with the conduction drops:

* Within an interval (one or both rectifiers conducting, synchronous drops per state):
  :mod:`.bridge_phase_shift_intervals`.
* The freewheel leaves the one-rectifier state when the outgoing rectifier would be
  forward biased, i.e. when the primary loop's drops make i_p fall faster than n·i_L
  (in the dead time the body diode's v_f0,b adds to them), and returns when that
  rectifier's current has fallen back to zero (both found by bisection).
* Steady state: i_L(Ts/2) = i_L(0), i_m(Ts/2) = −i_m(0), i_p(Ts/2) = −i_p(0) and a mean
  inductor current I_o: Newton on D with a fixed point on the three start values.
* Switch v_peak: the bus, or the bus plus the body-diode drop of the complementary
  switch while that conducts (ZVS transitions); rectifier v_reverse_peak before any
  ringing: 2·n·v_tx − drops (center-tap), n·v_tx − drops (bridge).
* Magnetizing current: swings by ∫v_tx dt/L_m, essentially V_in·D_eff·Ts/L_m; B_peak =
  L_m·I_m,peak/(N_p·A_e) [T] (Faraday's law).

Synchronous rectifiers (center-tap or full-bridge positions): the gating follows the
lagging leg. Rectifier A (the one that conducts with +V_in: center-tap 0, bridge 0 and
3) has its channel on from t_d after the lagging transition at 0 to the next one at
Ts/2, rectifier B from Ts/2 + t_d to Ts. So a channel conducts (R_DS(on)·i, either
direction) through its own power interval and freewheel, where the diode would; the
body diode (v_f0 + r_d·i, forward only) conducts wherever else the diode would: the
lagging leg's dead time (S0, OPEN: both body diodes), the rest of the commutation as
the outgoing rectifier (S1/S3), and a freewheel where both rectifiers conduct. The
intervals are the diode model's, with per state drops:
(module :mod:`.bridge_phase_shift_intervals` gives the drops per state).
Forced continuous conduction: a channel would carry the inductor current backwards
at light load, but the current is lowest at the lagging transition, where the
outgoing channel turns off and its body diode would have to take it; such corners
(a body diode with reverse current anywhere, or the outgoing rectifier's current at
the transition below zero, also with no dead time) are refused via ``invalid``.
"""

from __future__ import annotations

import numpy as np

from ..waveforms import (Grid, capacitor_voltage_samples, max_over, mean_over_samples,
                         per_corner)
from .base import Stage, StageResult
from . import bridge_phase_shift_intervals as iv
from . import phase_shift_light as psl

SUB = 4  # sub-segments of a freewheel with both rectifiers on (exponential i_p)
S0, S1, OPEN, S3, P, FA_SH, FA_SI = range(7)
FB_SH = tuple(range(7, 7 + SUB))
FB_SI = 7 + SUB
HALF = FB_SI + 1
assert psl.HALF == HALF and psl.FB0 == FB_SH[0] and psl.FA_SI == FA_SI
APPLIED = np.array([k <= P for k in range(HALF)])  # the diagonal drives the primary
SINGLE = np.isin(np.arange(HALF), [P, FA_SI, FB_SI])
LEAD_BODY = np.isin(np.arange(HALF), [FA_SH, FA_SI])
LAG_BODY = np.arange(HALF) == S0
BUS_PASSES = 6
MAX_ITER = 80
PATIENCE = 15  # iterations after which the noise floor (ACCEPT_TOL) is good enough
SLOPE_UPDATES = 4  # Newton iterations on D that refresh the slope
REL_TOL = 1e-9  # relative step of the steady-state iteration at which it stops
ACCEPT_TOL = 1e-6  # ... and below which its result counts as converged (noise floor
# ~1e-10 where a freewheel sits at the edge of turning both rectifiers on)


def _half(p, v, d, i_a, i_m, p_a):
    """Segments of the first half period: durations and start/end values (N, HALF)."""
    n_c = v.shape[0]
    dt = np.zeros((n_c, HALF))
    ip_a, ip_b = np.zeros((n_c, HALF)), np.zeros((n_c, HALF))
    il_a, il_b = np.zeros((n_c, HALF)), np.zeros((n_c, HALF))
    m_a, m_b = np.zeros((n_c, HALF)), np.zeros((n_c, HALF))
    shared = np.ones((n_c, HALF), dtype=bool)

    def put(k, dur, start, end, both=True):
        dt[:, k] = dur
        ip_a[:, k], il_a[:, k], m_a[:, k] = start
        ip_b[:, k], il_b[:, k], m_b[:, k] = end
        shared[:, k] = both

    t_d = np.full(n_c, p.t_d)
    state = (-p_a, i_a.copy(), -i_m)
    # S0: the lagging leg's body diode; the reversing current flows against its drop,
    # which adds to the source.
    e0, r0 = v + p.vf_body, p.r_lead + p.rd_body + p.r_p
    t_z = iv.zero_crossing(p, e0, r0, *state)
    dur = np.minimum(t_d, t_z)
    end = iv.shared(p, e0, r0, *state, dur)
    put(S0, dur, state, end)
    state = end
    case_a = t_z > t_d
    # S1 (current still flowing at the end of the dead time): channels, until the
    # outgoing rectifier's current is zero.
    e1, r1 = v, p.r_diag
    half_t = p.ts / 2 * np.ones(n_c)

    def commutate(start):
        pm = p.mixed(start)  # synchronous: the incoming channel is on after t_d
        f0, slope0 = iv.shared_f(pm, e1, r1, *start, np.zeros(n_c))
        guess = np.where(slope0 < 0, -f0 / np.where(slope0 < 0, slope0, -1.0), 0.0)
        root = iv.last_nonnegative(lambda t: iv.shared_f(pm, e1, r1, *start, t), half_t, guess)
        return root, iv.shared(pm, e1, r1, *start, root)

    t1, end1 = commutate(state)
    dur = np.where(case_a, t1, 0.0)
    end = tuple(np.where(case_a, x, s) for x, s in zip(end1, state))
    put(S1, dur, state, end)
    state = end
    # OPEN (current reached zero inside the dead time): i_p = 0 until the channel turns on.
    dur = np.where(case_a, 0.0, t_d - t_z)
    ip0 = np.where(case_a, state[0], 0.0)
    start = (ip0, state[1], state[2])
    rw = p.dcr + p.r2
    il_end = state[1] - (p.vo + p.c2 + rw * state[1]) * dur / (p.l + rw * dur / 2)
    m_end = state[2] - p.rho * state[2] * dur / (p.n ** 2 * p.l_m)
    end = (ip0, il_end, m_end)
    put(OPEN, dur, start, end)
    state = end
    # S3: after OPEN, from i_p = 0 until the commutation ends.
    t3, end3 = commutate(state)
    dur = np.where(case_a, 0.0, t3)
    end = tuple(np.where(case_a, s, x) for x, s in zip(end3, state))
    put(S3, dur, state, end)
    state = end
    early = psl.early_commutation(p, e0, r0, (-p_a, i_a, -i_m), t_d, t_z)
    if early is not None:  # light load: the commutation ends before i_p reverses
        mask, segs, fin = early
        for k, (dur, s, e, both) in segs.items():
            dt[:, k] = np.where(mask, dur, dt[:, k])
            for arr, x in zip((ip_a, il_a, m_a, ip_b, il_b, m_b), s + e):
                arr[:, k] = np.where(mask, x, arr[:, k])
            shared[:, k] = np.where(mask, both, shared[:, k])
        state = tuple(np.where(mask, x, y) for x, y in zip(fin, state))
    # P: effective power interval, one rectifier.
    t_pre = dt[:, :P].sum(axis=1)
    dur = d * p.ts - t_pre
    ip, il, m, _ = iv.single(p, e1, r1, p.n * state[1] + state[2], state[1], state[2], dur)
    start = (p.n * state[1] + state[2], state[1], state[2])
    end = (ip, il, m)
    put(P, dur, start, end, both=False)
    state = end

    def freewheel(start, e, r, length, k_shared, k_single, was_shared):
        """A freewheel interval: both rectifiers on until the outgoing one's current is
        back at zero (if it starts on), then one rectifier."""
        pm = p.mixed(start)  # synchronous: outgoing body diode, incoming channel
        begins = was_shared | iv.shared_rises(pm, e, r, *start)
        root = iv.last_nonnegative(lambda t: iv.shared_f(pm, e, r, *start, t), length)
        t_sh = np.where(begins, root, 0.0)
        mid = iv.shared(pm, e, r, *start, t_sh)
        mid = tuple(np.where(begins, x, s) for x, s in zip(mid, start))
        if isinstance(k_shared, tuple):
            sub = t_sh / len(k_shared)
            s = start
            for j, k in enumerate(k_shared):
                e_j = iv.shared(pm, e, r, *start, sub * (j + 1))
                e_j = tuple(np.where(begins, x, s0) for x, s0 in zip(e_j, start))
                put(k, sub, s, e_j)
                s = e_j
        else:
            put(k_shared, t_sh, start, mid)
        rest = length - t_sh
        end_shared = begins & (rest <= 0)  # both on to the end: no one-rectifier part
        s_start = tuple(np.where(end_shared, x, y)
                        for x, y in zip(mid, (p.n * mid[1] + mid[2], mid[1], mid[2])))
        ip, il, m, _ = iv.single(p, e, r, *s_start, rest)
        s_end = tuple(np.where(end_shared, x, y) for x, y in zip(mid, (ip, il, m)))
        put(k_single, rest, s_start, s_end, both=False)
        return s_end, end_shared

    # leading leg's dead time: Q1's body diode in the loop, then its channel
    state, sh = freewheel(state, -p.vf_body, p.rd_body + p.r_lag + p.r_p, t_d, FA_SH, FA_SI,
                          np.zeros(n_c, dtype=bool))
    state, _ = freewheel(state, np.zeros(n_c), p.r_diag, (0.5 - d) * p.ts - t_d, FB_SH,
                         FB_SI, sh)
    return dt, (ip_a, ip_b), (il_a, il_b), (m_a, m_b), shared


def _solve(p, v, start=None):
    """Steady state at source voltage v: duty, start values (i_L, i_m and i_p at t = 0)
    and the half-period arrays. ``start``: (D, I_A, I_M, P_A) of a previous solution."""
    n, ts = p.n, p.ts
    if start is None:  # lossless estimates (Sabaté et al.; see the module docstring)
        d_eff = p.vo / (2 * n * v)
        ripple = p.vo * (0.5 - d_eff) * ts / p.l
        i_a = p.io - ripple / 2
        i_m = v * d_eff * ts / (2 * p.l_m)
        p_a = n * i_a + i_m
        d = d_eff + 2 * n * i_a * p.l_lk / v / ts
    else:
        d, i_a, i_m, p_a = (np.array(x, dtype=float) for x in start)
    step = 1e-7

    def run(dd):
        out = _half(p, v, dd, i_a, i_m, p_a)
        _, _, (il_a, il_b), _, _ = out
        return out, il_b[:, -1] - i_a

    for it in range(MAX_ITER):
        out, res = run(d)
        if it < SLOPE_UPDATES:  # the balance's slope in D hardly moves after that
            _, res2 = run(d + step)
            slope = (res2 - res) / step
        d_new = d - res / np.where(slope > 0, slope, np.inf)
        dt, (ip_a, ip_b), (il_a, il_b), (m_a, m_b), _ = out
        mean_il = (dt * (il_a + il_b) / 2).sum(axis=1) / dt.sum(axis=1)
        i_a_new = i_a + (p.io - mean_il)
        i_m_new = (m_b[:, -1] + i_m) / 2
        p_a_new = ip_b[:, -1]
        scale = np.maximum(p.io, 1e-9)
        moved = np.maximum.reduce([np.abs(d_new - d) / np.maximum(d, 1e-9),
                                   np.abs(i_a_new - i_a) / scale,
                                   np.abs(i_m_new - i_m) / scale,
                                   np.abs(p_a_new - p_a) / (n * scale)])
        d, i_a, i_m, p_a = d_new, i_a_new, i_m_new, p_a_new
        if (moved < REL_TOL).all() or (it >= PATIENCE and (moved < ACCEPT_TOL).all()):
            break
    converged = moved < ACCEPT_TOL
    out, _ = run(d)
    # the mean of i_L is I_o to the iteration's tolerance: remove that residual exactly
    # (charge balance of the output capacitor), a uniform shift far below any stress
    dt, ip, (il_a, il_b), m, shared = out
    off = (p.io - (dt * (il_a + il_b) / 2).sum(axis=1) / dt.sum(axis=1))[:, None]
    return (d, i_a, i_m, p_a), (dt, ip, (il_a + off, il_b + off), m, shared), converged


def _mirror(h1, h2=None):
    """Full-period (a, b) arrays from the first half's and the second half's values."""
    h2 = h1 if h2 is None else h2
    return tuple(np.concatenate([x, y], axis=1) for x, y in zip(h1, h2))


def _only(mask, values):
    """(a, b) arrays kept where the half-period ``mask`` (HALF,) holds, else zero."""
    return [np.where(mask[None, :], x, 0.0) for x in values]


def evaluate(st: Stage) -> StageResult:
    """Phase-shifted full bridge, every corner: the bus ripple around the steady
    state of the intervals (module docstring).

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    p = iv.Params(st)
    n, io = p.n, st.io
    cin = st.capacitors[("input-capacitor", 0)]
    applied = np.concatenate([APPLIED, APPLIED])
    v = st.v_in.copy()
    start = None
    light = None  # light-load corners (diode rectifiers): phase_shift_light
    for _ in range(BUS_PASSES):  # the bus ripple lowers the mean applied voltage
        # CCM steady state where it holds (every corner on the first pass, which
        # decides the light-load corners; a corner refused as not modelled is refused
        # whatever the others do)
        rows = (io > 0) if light is None else ~light.mask
        start, (dt, ip, il, m, shared), converged = psl.solve_rows(
            _solve, p, v, start, rows, io.shape[0])
        if light is None:  # decided once, on the first pass's CCM solution
            light = psl.Light(p, st, il)
        if light.idx.size:
            start, (dt, ip, il, m, shared), converged = light.apply(
                p, v, start, (dt, ip, il, m, shared), converged)
        grid = Grid(np.concatenate([dt, dt], axis=1))
        # the bus feeds the primary while a diagonal (or its body diode) applies it
        i_bus = grid.wave(*_mirror(_only(APPLIED, ip)))
        i_dc = i_bus.mean()
        i_cin = i_dc - i_bus
        bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, st.v_in)
        v_new = mean_over_samples(bus, grid, applied)
        settled = np.allclose(v_new, v, rtol=1e-9, atol=0)
        v = v_new
        if settled:
            break
    d, i_a0, i_m0, _ = start
    light_rows = np.isin(np.arange(io.shape[0]), light.idx)
    ip_w = grid.wave(*_mirror(ip, tuple(-x for x in ip)))
    il_w = grid.wave(*_mirror(il))
    m_w = grid.wave(*_mirror(m, tuple(-x for x in m)))
    # rectifiers in the first half: the incoming one (A) and the outgoing one (B);
    # both on: (i_L ± (i_p − i_m)/n)/2, one on: i_L and 0
    split = (il_w + (ip_w - m_w) / n) / 2
    r1_half = [np.where(shared, x[:, :HALF], i) for x, i in zip((split.a, split.b), il)]
    r2_half = [i - r for i, r in zip(il, r1_half)]
    rect_a = grid.wave(*_mirror(r1_half, r2_half))
    rect_b = grid.wave(*_mirror(r2_half, r1_half))
    # switches, channel drain -> source and body-diode forward current, from the first
    # half's i_p (the second half mirrors it; see the module docstring for who conducts)
    zero = [np.zeros_like(x) for x in ip]
    neg = [-x for x in ip]
    fw_ch = ~APPLIED & ~LEAD_BODY  # freewheel through both channels of one rail
    lag_ch = ~LAG_BODY  # the lagging switch's channel: all its half but the dead time

    def live(w):  # a body diode conducts only in segments of non-zero length
        return w.only(grid.dt > 0)

    currents = {
        ("switch", 0): grid.wave(*_mirror(_only(APPLIED, ip), _only(fw_ch, neg))),
        ("switch", 1): grid.wave(*_mirror(_only(fw_ch, neg), _only(APPLIED, ip))),
        ("switch", 2): grid.wave(*_mirror(zero, _only(lag_ch, ip))),
        ("switch", 3): grid.wave(*_mirror(_only(lag_ch, ip), zero)),
        ("inductor", 0): il_w, ("output-capacitor", 0): il_w - io,
        ("input-capacitor", 0): i_cin}
    body = {("switch", 0): live(grid.wave(*_mirror(zero, _only(LEAD_BODY, ip)))),
            ("switch", 1): live(grid.wave(*_mirror(_only(LEAD_BODY, ip), zero))),
            ("switch", 2): live(grid.wave(*_mirror(zero, _only(LAG_BODY, neg)))),
            ("switch", 3): live(grid.wave(*_mirror(_only(LAG_BODY, neg), zero)))}
    groups = ((0, 3), (1, 2)) if p.bridge else ((0,), (1,))
    # synchronous: rectifier A's channel is gated on in the first half after the
    # lagging leg's dead time (S0 + OPEN = t_d), B's in the second; the body diode
    # carries the forward current everywhere else (module docstring)
    gate_a = np.concatenate([~LAG_BODY & (np.arange(HALF) != OPEN), np.zeros(HALF, bool)])
    gate_b = np.concatenate([gate_a[HALF:], gate_a[:HALF]])
    rect_body = {}
    for positions, cur, gate in zip(groups, (rect_a, rect_b), (gate_a, gate_b)):
        for k in positions:
            if p.sync:  # channel current drain -> source: the forward current reversed
                currents[("rectifier", k)] = (-cur).only(gate)
                raw = live(cur.only(~gate))
                rect_body[k] = raw  # checked below (forward only)
                # the outgoing current's end is a root (zero to ~1e-15 A)
                body[("rectifier", k)] = grid.wave(np.maximum(raw.a, 0.0),
                                                   np.maximum(raw.b, 0.0))
            else:
                currents[("rectifier", k)] = cur

    # blocking voltages ----------------------------------------------------------------
    lasting = grid.dt > 0
    bus_max = max_over(bus)
    ip_s, il_s = ip_w.samples(), il_w.samples()

    def per_segment(half_values):  # (HALF,) values, both halves -> (1, S, 1)
        return np.concatenate([half_values, half_values])[None, :, None]

    # an off switch sees the bus plus the drop of its complement's body diode
    v_body = per_corner(p.vf_body) + per_corner(p.rd_body) * np.abs(ip_s)
    lead = np.concatenate([LEAD_BODY, LEAD_BODY])[None, :] & lasting
    lag = np.concatenate([LAG_BODY, LAG_BODY])[None, :] & lasting
    v_lead = np.maximum(bus_max, max_over(bus + v_body, lead))
    v_lag = np.maximum(bus_max, max_over(bus + v_body, lag))
    v_block = {("switch", 0): v_lead, ("switch", 1): v_lead, ("switch", 2): v_lag,
               ("switch", 3): v_lag, ("input-capacitor", 0): bus_max}
    # transformer voltage where one rectifier conducts, from the instantaneous loop
    # relation (module docstring), with the first half's sign of i_p
    e_loop = np.where(per_segment(APPLIED), bus, 0.0)
    e_loop = np.where(per_segment(LEAD_BODY), -per_corner(p.vf_body), e_loop)
    r_loop = np.where(per_segment(LEAD_BODY), per_corner(p.rd_body + p.r_lag + p.r_p),
                      per_corner(p.r_diag))
    ip_first = ip_s * np.where(np.arange(2 * HALF) < HALF, 1.0, -1.0)[None, :, None]
    w_s = per_corner(p.vo + p.c1) + per_corner(p.dcr + p.r1) * il_s
    v_tx = (e_loop - r_loop * ip_first + p.l_lk * n * w_s / per_corner(p.l)) / \
        per_corner(1 + n ** 2 * p.l_lk / p.l + p.l_lk / p.l_m)
    # the blocking rectifier: the whole (bridge: one) secondary less the conducting
    # path's diode and winding drops
    drop = per_corner(p.vf1) + per_corner(p.rd1 + p.r_s) * il_s
    v_rev = (n if p.bridge else 2 * n) * v_tx - drop
    single = np.concatenate([SINGLE, SINGLE])[None, :] & lasting
    if light.idx.size:  # light load: the power interval however short (pulse skipping)
        single = single | (np.isin(np.arange(2 * HALF), [P, HALF + P])[None, :]
                           & light_rows[:, None])
    v_rect = np.maximum(max_over(v_rev, single), 0.0)
    if light.idx.size:  # after the current stops: V_o, and (2·)n·v_tx in OPEN
        v_rect = v_rect.copy()
        k_open = n if p.bridge else 2 * n
        after = np.maximum(np.broadcast_to(p.vo, io.shape)[light.idx],
                           k_open * light.open_voltage()
                           - np.broadcast_to(p.vf1, io.shape)[light.idx])
        v_rect[light.idx] = np.maximum(v_rect[light.idx], after)
    for k in currents:
        if k[0] == "rectifier":
            v_block[k] = v_rect
    cout = st.capacitors[("output-capacitor", 0)]
    v_out = capacitor_voltage_samples(il_w - io, cout.c, cout.esr, st.vo)
    v_block[("output-capacitor", 0)] = max_over(v_out)

    # transformer ------------------------------------------------------------------------
    p_wind = p.r_p * ip_w.rms() ** 2
    if p.bridge:
        p_wind = p_wind + p.r_s * (rect_a - rect_b).rms() ** 2
    else:
        p_wind = p_wind + p.r_s * (rect_a.rms() ** 2 + rect_b.rms() ** 2)
    i_m_peak = m_w.peak()
    xf = st.transformer
    b_peak = p.l_m * i_m_peak / (xf.n_p * xf.core_area) if xf.core_area else None

    noise = -ACCEPT_TOL * np.maximum(io, 1.0)  # below the solution noise
    invalid = [
        (~converged, "the phase-shift model found no steady state (its interval "
                     "equations did not converge); check the leakage inductance and the "
                     "operating point"),
    ]
    if p.sync:
        # forced continuous conduction: the channels conduct either way, but a body
        # diode (dead time, commutation, freewheel) only forward
        body_min = np.min([w.min(grid.dt > 0)
                           for w in rect_body.values()], axis=0)
        # ... and the outgoing rectifier at the lagging leg's transition, where its
        # channel turns off, also with no dead time (S0 of zero length)
        body_min = np.minimum(body_min, np.minimum(rect_b.a[:, S0], rect_a.a[:, HALF + S0]))
        invalid.append((body_min < noise, "a synchronous rectifier carries reverse "
                        "current when its channel is off (light load, forced continuous "
                        "conduction: the inductor current reverses in the freewheel and "
                        "is still negative at the lagging leg's transition); its body "
                        "diode cannot take it (not modelled); raise the minimum load or "
                        "the output inductance"))
    else:
        invalid += [
            (~light_rows & (il_w.min() <= 0), "the output inductor current falls to zero (discontinuous "
                              "conduction), which the phase-shifted bridge model does not "
                              "cover yet; raise the minimum load or the output inductance, "
                              "or use synchronous rectifiers"),
            (np.minimum(rect_a.min(), rect_b.min()) < noise,
             "the magnetizing current exceeds the reflected inductor current while both "
             "rectifiers conduct, so one would stop (not modelled); raise the magnetizing "
             "inductance or the minimum load"),
        ]
    regime = np.full(io.shape, "CCM", dtype=object)
    if p.sync:  # the channels conduct both ways: never discontinuous
        regime[il_w.min() < 0] = "forced-CCM"
    if light.idx.size:
        regime[light.idx] = light.regime()
    return StageResult(duty=d, grid=grid, currents=currents, v_block=v_block,
                       input_current=i_dc, winding_loss=p_wind, b_peak=b_peak,
                       i_m_peak=i_m_peak, i_l_start=i_a0, i_m_start=-i_m0, body=body,
                       invalid=invalid, regime=regime,
                       notes=["the model's rectifier voltages are before any ringing (the "
                              "design's overshoot allowance adds it); the zero-voltage transitions "
                              "are taken as ideal (no check that the leakage energy charges C_oss)"]
                       + (["synchronous rectifiers gated from the lagging leg: each channel on "
                           "from one dead time after its half period starts to its end; the "
                           "body diodes carry the commutation"] if p.sync else []))
