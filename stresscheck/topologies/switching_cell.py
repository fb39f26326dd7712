"""The two-switch cell shared by the buck and the boost converter.

Both converters are the same cell with source and load exchanged: one controlled switch
A (buck: high side; boost: low side), one position P that is a diode or a synchronous
MOSFET (buck: freewheel; boost: rectifier), one inductor, an input and an output
capacitor bank. The inductor current i_L is counted positive in the direction of power
flow (buck: switch node -> output; boost: input -> switch node). This module solves the
periodic steady state of the cell at every corner; ``buck.py`` and ``boost.py`` give the
layout, the duty limit and the relations of each converter.

Intervals of one period Ts = 1/fs (all corners share the grid; unused intervals have
zero duration):

  0 ON      A conducts, D·Ts
  1 DEAD_A  dead time after A turns off: P's body diode carries i_L > 0 (synchronous)
  2 OFF     P conducts: the diode (until i_L reaches zero) or the synchronous channel
            (forced continuous, i_L may go negative)
  3 DEAD_B  dead time after P turns off: P's body diode if i_L > 0, else A's body diode
            (i_L < 0 flows back to the input through A's body diode), until i_L reaches 0
  4 IDLE    zero inductor current: diode DCM idle interval, or the rest of DEAD_B once
            i_L has reached zero there

In every conduction state the inductor voltage is v_L = E − R·i_L, E and R taken from
the conducting device (R_DS(on), straight-line diode v_f0 + r_d·i, inductor DCR) and
the mean capacitor terminal voltages (input and output ripple and ESR included). Each
interval is drawn as N_SUB straight pieces (grid segments), each with the slope v_L at
its own mean current and mean capacitor voltages (trapezoidal integration of
L·di/dt = E − R·i): the pieces follow the curvature that the resistive drops and the
capacitor ripple give the current, which keeps the model's energy balance closed to a
small fraction of the input power also where a synchronous stage at light load
circulates a ripple current much larger than its load current. Each pass of the fixed
point takes the piece slopes from the previous pass and builds both candidates below
from the same slopes, so the choice between them is consistent at the CCM/DCM boundary.

Regimes, per corner:
* CCM: volt-second balance on the inductor, Σ_k t_k·(E_k − R_k·m_k) = 0 with m_k the
  piece-mean currents (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd
  ed., §2.2, and ch. 3 for the conduction drops — from memory), is linear in D; the
  current level follows from charge balance on the output capacitor (buck: mean i_L =
  I_o; boost: mean current through P = I_o, §2.3). Fixed point on m_k and the
  capacitor ripple.
* DCM (diode P only, where the CCM valley current would be <= 0): i_L starts each period
  at zero; the falling interval ends where i_L reaches zero (its length from the mean
  slope of its pieces); D is found by bisection on the charge balance
  (``regulation.solve_duty``), the drops included. The same book, §5.1–5.3, gives the
  lossless forms.
* Synchronous P is forced continuous. When the current reaches zero inside DEAD_B (a
  narrow band of loads around the valley current crossing zero), the period starts at
  zero current and D follows from charge balance as in DCM; the regime stays "CCM".

Not modelled (the caller's ``invalid`` list refuses the corner): the current reaching
zero in DEAD_A (a load far below any useful minimum), a boost whose input is within the
rectifier drop of its output (no positive duty regulates), and a CCM fixed point that
does not converge (conduction drops near the boost's peak gain).

Parasitic ringing of the switch node in the idle interval (C_oss and C_j with L) is
not modelled. It swings around V_o (buck) or V_in (boost) with the step at the diode's
turn-off as amplitude. In the boost it peaks at the conduction-interval value V_o + V_F
(the trough is clamped by the switch's body diode). In the buck it reaches at most
2·V_o + V_F, clamped by the high side's body diode at V_in + V_F,body: where V_o > V_in/2
the freewheel diode can see up to one body-diode drop more than computed here (the
undamped limit; damping lowers it).
"""

from __future__ import annotations

from dataclasses import dataclass, fields, is_dataclass, replace

import numpy as np

from ..regulation import solve_duty
from ..waveforms import PWL, PWQ, Grid, capacitor_voltage, per_corner, select
from .base import CapacitorBank, Device, StageResult

ON, DEAD_A, OFF, DEAD_B, IDLE = range(5)  # intervals of the period
N_PHASES = 5
N_SUB = 8  # straight pieces per interval; the grid has N_PHASES·N_SUB segments
# conduction state of an interval
S_ON, S_P_FWD, S_P_CH, S_A_BODY, S_ZERO = range(5)

MAX_PASSES = 60  # fixed-point passes (duty, drops, capacitor ripple)
DUTY_TOL = 1e-12  # [1] change of the duty between passes taken as converged
DUTY_TOL_ACCEPT = 1e-7  # [1] still far below every stated tolerance if MAX_PASSES run out


def first(phase: int) -> int:
    """Index of the first grid segment of an interval."""
    return phase * N_SUB


def last(phase: int) -> int:
    """Index of the last grid segment of an interval."""
    return phase * N_SUB + N_SUB - 1


@dataclass
class Cell:
    """Per-corner parameters of one cell [SI units], (N,) arrays unless noted."""

    kind: str  # "buck" | "boost"
    v_in: np.ndarray
    vo: np.ndarray
    io: np.ndarray
    ts: np.ndarray  # [s] switching period
    td: float  # [s] dead time (0 for a diode P)
    l: np.ndarray  # [H]
    dcr: float  # [ohm]
    a: Device  # controlled switch (MOSFET)
    p: Device  # diode or synchronous MOSFET
    cin: CapacitorBank
    cout: CapacitorBank
    d_max: np.ndarray  # [1] duty limit of the stage; waveforms are clipped there

    @property
    def synchronous(self) -> bool:
        return self.p.kind == "mosfet"


@dataclass
class Solution:
    duty: np.ndarray  # [1] unclipped
    grid: Grid
    i_l: PWL  # [A]
    states: np.ndarray  # (N, S) int conduction state per grid segment
    v_bus: PWQ  # input-capacitor terminal voltage [V], exact piecewise quadratic
    v_out: PWQ  # output-capacitor terminal voltage [V], exact piecewise quadratic
    i_cin: PWL  # [A] into the input capacitor bank
    i_cout: PWL  # [A] into the output capacitor bank
    i_dc: np.ndarray  # [A] DC current from the source
    regime: np.ndarray  # "CCM" | "DCM"
    invalid: list


def source_table(c: Cell, v_bus: np.ndarray, v_out: np.ndarray):
    """E [V] and R [ohm] of v_L = E − R·i for every grid segment and state, (N, S, 5).

    ``v_bus``, ``v_out``: (N, S) mean input / output capacitor voltage over each segment
    [V].
    Buck (v_L = v_sw − DCR·i − v_out):                boost (v_L = v_bus − DCR·i − v_sw):
      ON     v_sw = v_bus − R_A·i                       v_sw = R_A·i
      P_FWD  v_sw = −(v_f0 + r_d·i)                     v_sw = v_out + v_f0 + r_d·i
      P_CH   v_sw = −R_P·i                              v_sw = v_out + R_P·i
      A_BODY v_sw = v_bus + v_f0,A − r_d,A·i  (i < 0)   v_sw = −v_f0,A + r_d,A·i  (i < 0)
      ZERO   i = 0, v_L = 0
    """
    r_a = per_corner(c.a.r_on, 2)
    a_f0, a_rd = per_corner(c.a.v_f0, 2), per_corner(c.a.r_d, 2)
    p_f0, p_rd = per_corner(c.p.v_f0, 2), per_corner(c.p.r_d, 2)
    r_p = per_corner(c.p.r_on if c.p.r_on is not None else 0.0, 2)
    dcr = c.dcr
    zero = np.zeros_like(v_bus)
    if c.kind == "buck":
        e = [v_bus - v_out, -p_f0 - v_out, -v_out, v_bus + a_f0 - v_out, zero]
    else:
        e = [v_bus + zero, v_bus - v_out - p_f0, v_bus - v_out, v_bus + a_f0, zero]
    r = [r_a + dcr, p_rd + dcr, r_p + dcr, a_rd + dcr, zero]
    e = np.stack([x + zero for x in e], axis=2)
    r = np.stack([x + zero for x in r], axis=2)
    return e, r


def switch_node(c: Cell, states, i: PWL, v_bus: PWQ, v_out: PWQ) -> PWQ:
    """Switch-node voltage [V], exact per segment, from the inductor current ``i`` [A]
    and the capacitor voltages ``v_bus``, ``v_out`` [V] (the relations of
    ``source_table``, each segment in its conduction state ``states`` (N, S))."""
    r_a, a_f0, a_rd = (per_corner(x, 1) for x in (c.a.r_on, c.a.v_f0, c.a.r_d))
    p_f0, p_rd = per_corner(c.p.v_f0, 1), per_corner(c.p.r_d, 1)
    r_p = per_corner(c.p.r_on if c.p.r_on is not None else 0.0, 1)
    if c.kind == "buck":
        choices = [v_bus - i * r_a, -(i * p_rd + p_f0), i * -r_p, v_bus + a_f0 - i * a_rd,
                   v_out]
    else:
        choices = [i * r_a, v_out + p_f0 + i * p_rd, v_out + i * r_p, i * a_rd - a_f0,
                   v_bus]
    return select(states, choices)


def _pick(table, states):
    return np.take_along_axis(table, states[:, :, None], axis=2)[:, :, 0]


def _delivering(c: Cell, states):
    """Segments whose inductor current reaches the output (charge balance)."""
    if c.kind == "buck":
        return states != S_ZERO
    return (states == S_P_FWD) | (states == S_P_CH)


def _from_source(c: Cell, states):
    """Segments whose inductor current is drawn from the input bus (buck)."""
    return (states == S_ON) | (states == S_A_BODY)


def _expand(per_phase):
    """(N, 5) per interval -> (N, S) per grid segment."""
    return np.repeat(per_phase, N_SUB, axis=1)


def _phase_states(c: Cell, n, s3):
    p_off = S_P_CH if c.synchronous else S_P_FWD
    return np.stack([np.full(n, S_ON), np.full(n, S_P_FWD), np.full(n, p_off), s3,
                     np.full(n, S_ZERO)], axis=1)


def _ccm(c: Cell, v_tab, s3):
    """CCM candidate: duty from the volt-second balance, current levels from charge
    balance, with the piece slopes v_tab (N, S, state) [V]. Returns duty, dt, a, b,
    states (grid segments)."""
    n = c.v_in.shape[0]
    ts, td = c.ts, c.td
    states = _expand(_phase_states(c, n, s3))
    v = _pick(v_tab, states)
    vp = v.reshape(n, N_PHASES, N_SUB).mean(axis=2)  # pieces of one interval: equal length
    duty = -(td * vp[:, DEAD_A] + (ts - 2 * td) * vp[:, OFF] + td * vp[:, DEAD_B]) / (
        ts * (vp[:, ON] - vp[:, OFF]))
    d = np.clip(np.nan_to_num(duty, nan=0.0), 0.0, c.d_max)
    z = np.zeros(n)
    dt = _expand(np.stack([d * ts, z + td, ts - d * ts - 2 * td, z + td, z], axis=1)) / N_SUB
    inc = v / c.l[:, None] * dt
    a_rel = np.concatenate([np.zeros((n, 1)), np.cumsum(inc, axis=1)[:, :-1]], axis=1)
    b_rel = a_rel + inc
    deliver = _delivering(c, states)
    weight = (dt * deliver).sum(axis=1) / ts
    shape = (dt * deliver * (a_rel + b_rel) / 2).sum(axis=1) / ts
    x = (c.io - shape) / weight
    return duty, dt, a_rel + x[:, None], b_rel + x[:, None], states


def _from_zero(c: Cell, v_tab, duty):
    """Candidate starting each period at zero current (diode DCM; synchronous with the
    current reaching zero in DEAD_B) for duty (N,), with the piece slopes v_tab:
    dt, a, b, states (grid segments). An interval that ends where the current reaches
    zero takes the length that its pieces' mean slope needs."""
    n = duty.shape[0]
    ts, td, l = c.ts, c.td, c.l
    z = np.zeros(n)
    a = np.zeros((n, N_PHASES * N_SUB))
    b = np.zeros_like(a)
    dt_p = np.zeros((n, N_PHASES))

    def slopes(phase, state):
        """(N, N_SUB) di/dt of the interval's pieces [A/s]; state int or (N,)."""
        sl = v_tab[:, first(phase):last(phase) + 1, :]
        idx = np.broadcast_to(np.asarray(state)[..., None, None], (n, N_SUB, 1))
        return np.take_along_axis(sl, idx, axis=2)[:, :, 0] / l[:, None]

    def march(phase, state, i0, t):
        ends = i0[:, None] + np.cumsum(slopes(phase, state) * (t / N_SUB)[:, None], axis=1)
        a[:, first(phase):last(phase) + 1] = np.concatenate([i0[:, None], ends[:, :-1]], 1)
        b[:, first(phase):last(phase) + 1] = ends
        dt_p[:, phase] = t
        return ends[:, -1]

    def time_to_zero(phase, state, i0):
        mean_slope = slopes(phase, state).mean(axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = -i0 / mean_slope
        return np.where(i0 == 0, 0.0, np.where(t > 0, t, np.inf))

    i1 = march(ON, S_ON, z, duty * ts)
    if not c.synchronous:
        march(DEAD_A, S_P_FWD, i1, z)
        t2 = time_to_zero(OFF, S_P_FWD, i1)
        t2 = np.where(np.isfinite(t2), t2, ts)
        march(OFF, S_P_FWD, i1, t2)
        march(DEAD_B, S_P_FWD, z, z)
        dt_p[:, IDLE] = ts - duty * ts - t2
        s3 = np.full(n, S_P_FWD)
    else:
        i2 = march(DEAD_A, S_P_FWD, i1, z + td)
        i3 = march(OFF, S_P_CH, i2, np.maximum(ts - duty * ts - 2 * td, 0.0))
        s3 = np.where(i3 > 0, S_P_FWD, S_A_BODY)
        t3 = np.minimum(time_to_zero(DEAD_B, s3, i3), td)
        march(DEAD_B, s3, i3, t3)
        dt_p[:, IDLE] = td - t3
    states = _expand(_phase_states(c, n, s3))
    return _expand(dt_p) / N_SUB, a, b, states


def _delivered(c: Cell, dt, a, b, states):
    """Mean current into the output over one period Ts [A]."""
    deliver = _delivering(c, states)
    return (dt * deliver * (a + b) / 2).sum(axis=1) / c.ts


def _capacitors(c: Cell, grid: Grid, i_l: PWL, states):
    """Input and output capacitor currents and terminal voltages (exact PWQ)."""
    if c.kind == "buck":
        i_src = i_l.only(_from_source(c, states))
        i_load_path = i_l
    else:
        i_src = i_l
        i_load_path = i_l.only(_delivering(c, states))
    i_dc = i_src.mean()
    i_cin = i_src * -1.0 + i_dc
    i_cout = i_load_path - c.io
    v_bus = capacitor_voltage(i_cin, c.cin.c, c.cin.esr, c.v_in)
    v_out = capacitor_voltage(i_cout, c.cout.c, c.cout.esr, c.vo)
    return i_dc, i_cin, i_cout, v_bus, v_out


def solve(c: Cell) -> Solution:
    """Periodic steady state of the cell at every corner."""
    n = c.v_in.shape[0]
    n_seg = N_PHASES * N_SUB
    v_bus_seg = np.repeat(c.v_in[:, None], n_seg, axis=1)
    v_out_seg = np.repeat(c.vo[:, None], n_seg, axis=1)
    # first guess of the segment-mean currents: the mean inductor current, lossless
    i_mean = c.io if c.kind == "buck" else c.io * c.vo / c.v_in
    m = np.repeat(i_mean[:, None], n_seg, axis=1)
    duty_prev = np.full(n, np.nan)
    converged = False
    for _ in range(MAX_PASSES):
        e_tab, r_tab = source_table(c, v_bus_seg, v_out_seg)
        v_tab = e_tab - r_tab * m[:, :, None]  # piece slopes at the pieces' mean currents
        if c.synchronous:
            # DEAD_B conducts through P's body diode (i_L > 0) or A's (i_L < 0): one of
            # the two CCM branches is consistent (its current keeps its sign through
            # DEAD_B), or neither, and the current reaches zero inside DEAD_B
            fwd = _ccm(c, v_tab, np.full(n, S_P_FWD))
            back = _ccm(c, v_tab, np.full(n, S_A_BODY))
            ok_fwd = (fwd[2][:, first(DEAD_B)] > 0) & (fwd[3][:, last(DEAD_B)] > 0)
            ok_back = (back[2][:, first(DEAD_B)] < 0) & (back[3][:, last(DEAD_B)] < 0)
            use_fwd = ok_fwd | (~ok_back & (fwd[2][:, first(DEAD_B)] > 0))
            duty_ccm, dt_c, a_c, b_c, st_c = (
                np.where(use_fwd.reshape((n,) + (1,) * (f.ndim - 1)), f, g)
                for f, g in zip(fwd, back))
            from_zero = ~ok_fwd & ~ok_back & (c.td > 0)
        else:
            duty_ccm, dt_c, a_c, b_c, st_c = _ccm(c, v_tab, np.full(n, S_P_FWD))
            from_zero = a_c[:, first(ON)] <= 0
        duty, dt, a, b, states = duty_ccm, dt_c, a_c, b_c, st_c
        reachable = np.ones(n, bool)
        if from_zero.any():
            # bisect only the corners that start from zero current (each corner's
            # search is independent, so the others need not be evaluated)
            idx = np.flatnonzero(from_zero)
            cz, v_tab_z = subset_cell(c, idx), v_tab[idx]

            def delivered(d):
                return _delivered(cz, *_from_zero(cz, v_tab_z, d))
            if c.synchronous:
                # the zero falls inside a dead time only near the CCM duty; a boost's
                # delivered current turns over at high duty, so stay near it
                span = 0.05 + 4 * cz.td / cz.ts
                lo = np.maximum(duty_ccm[idx] - span, 0.0)
                hi = np.minimum(duty_ccm[idx] + span, cz.d_max)
            else:
                lo, hi = 0.0, cz.d_max  # DCM: delivered current rises with D throughout
            d_sub, reach_sub = solve_duty(delivered, cz.io, lo, hi)
            d_z, reachable = duty_ccm.copy(), np.ones(n, bool)
            d_z[idx], reachable[idx] = d_sub, reach_sub
            dt_z, a_z, b_z, st_z = _from_zero(c, v_tab, d_z)
            if c.synchronous:  # consistent only where the current reaches zero in DEAD_B
                from_zero &= reachable & (dt_z[:, first(IDLE)] > 0)
                reachable = np.ones(n, bool)
            sel = from_zero[:, None]
            duty = np.where(from_zero, np.where(reachable, d_z, duty_ccm), duty_ccm)
            dt, a, b = np.where(sel, dt_z, dt_c), np.where(sel, a_z, a_c), \
                np.where(sel, b_z, b_c)
            states = np.where(sel, st_z, st_c)
            reachable = reachable | ~from_zero
        m = (a + b) / 2
        grid = Grid(np.maximum(dt, 0.0))
        i_l = grid.wave(a, b)
        i_dc, i_cin, i_cout, v_bus, v_out = _capacitors(c, grid, i_l, states)
        v_bus_seg, v_out_seg = v_bus.segment_means(), v_out.segment_means()
        change = np.abs(duty - duty_prev)
        duty_prev = duty
        if np.all(change < DUTY_TOL):
            converged = True
            break
    settled = change < (DUTY_TOL if converged else DUTY_TOL_ACCEPT)

    regime = np.where(from_zero & ~c.synchronous, "DCM", "CCM").astype(object)
    # beyond the duty limit the waveforms are clipped there: the engine's duty-limit
    # refusal speaks for those corners, not the consistency checks below
    within = ~(duty > c.d_max)
    invalid = [
        (~np.isfinite(duty) | (duty <= 0),
         "no positive duty ratio regulates this corner: the input is within the "
         "conduction drops of the output (a boost cannot regulate its output below "
         "the input less the rectifier drop); check the input and output voltages"),
        (np.isfinite(duty) & ~settled & within,
         "the duty ratio does not settle (the conduction drops are too large for the "
         "converter to reach the output at this corner); use parts with lower R_DS(on), "
         "DCR or forward drop"),
        (~reachable & (duty <= c.d_max), "the load current is out of reach within the "
         "duty limit"),
    ]
    if c.synchronous:
        invalid.append((within & (b[:, last(DEAD_A)] <= 0), "the inductor current falls "
                        "to zero within the dead time after the switch turns off (load far "
                        "below the valley current; not modelled); raise the minimum load or "
                        "shorten the dead time"))
        i_b0, i_b1 = a[:, first(DEAD_B)], b[:, last(DEAD_B)]
        invalid.append((within & ~from_zero & (c.td > 0) & ((i_b0 > 0) != (i_b1 > 0)),
                        "inconsistent solution: the inductor current changes sign inside "
                        "the dead time after the synchronous MOSFET turns off"))
    else:
        invalid.append((within & (dt[:, first(IDLE)] < -1e-9 * c.ts), "inconsistent "
                        "discontinuous-conduction solution (idle interval negative)"))
    return Solution(duty=duty, grid=grid, i_l=i_l, states=states, v_bus=v_bus, v_out=v_out,
                    i_cin=i_cin, i_cout=i_cout, i_dc=i_dc, regime=regime, invalid=invalid)


def stage_result(c: Cell, sol: Solution, p_role: str) -> StageResult:
    """Role currents and blocking voltages of the solved cell (positions ("switch", 0),
    (p_role, 0), ("inductor", 0), ("input-capacitor", 0), ("output-capacitor", 0))."""
    n = c.v_in.shape[0]
    st, i_l = sol.states, sol.i_l
    a_key, p_key = ("switch", 0), (p_role, 0)
    currents = {a_key: i_l.only(st == S_ON), ("inductor", 0): i_l,
                ("input-capacitor", 0): sol.i_cin, ("output-capacitor", 0): sol.i_cout}
    body = {}
    if c.synchronous:
        # MOSFET channel current counts drain -> source: P carries −i_L
        currents[p_key] = (-i_l).only(st == S_P_CH)
        body[p_key] = i_l.only(st == S_P_FWD)
        body[a_key] = (-i_l).only(st == S_A_BODY)
    else:
        currents[p_key] = i_l.only(st == S_P_FWD)
    v_sw = switch_node(c, st, i_l, sol.v_bus, sol.v_out)
    if c.kind == "buck":
        v_a, v_p = sol.v_bus - v_sw, v_sw
    else:
        v_a, v_p = v_sw, sol.v_out - v_sw
    v_block = {a_key: v_a.max(), p_key: v_p.max(),
               ("input-capacitor", 0): sol.v_bus.max(),
               ("output-capacitor", 0): sol.v_out.max()}
    z = np.zeros(n)
    return StageResult(duty=sol.duty, grid=sol.grid, currents=currents, v_block=v_block,
                       input_current=sol.i_dc, winding_loss=z, b_peak=None, i_m_peak=z,
                       i_l_start=i_l.a[:, 0].copy(), i_m_start=z, body=body,
                       invalid=sol.invalid, regime=sol.regime,
                       notes=model_notes(c, sol, p_role))


def model_notes(c: Cell, sol: Solution, p_role: str) -> list[str]:
    """What the model assumes or leaves out at these corners, for the report."""
    notes = ["switch and diode voltages are before any switching spike or ringing"]
    dcm = sol.regime == "DCM"
    if dcm.any():
        text = ("discontinuous conduction at some corners: the switch-node ringing in the "
                "idle interval is not modelled")
        if c.kind == "buck" and np.any(dcm & (c.vo > c.v_in / 2)):
            text += ("; with V_o above V_in/2 it can take the freewheel diode up to one "
                     "body-diode drop above the computed v_reverse_peak")
        notes.append(text)
    if c.synchronous and np.any(sol.i_l.min() < 0):
        notes.append(f"forced continuous conduction: the inductor current turns negative "
                     f"at light load and the {p_role} MOSFET carries it (no diode "
                     "emulation); the dead time then returns it through the switch's "
                     "body diode")
    return notes


def subset_cell(c: Cell, idx: np.ndarray) -> Cell:
    """The cell restricted to the corners ``idx``: every per-corner array indexed."""
    n = c.v_in.shape[0]

    def take(x):
        if isinstance(x, np.ndarray) and x.ndim >= 1 and x.shape[0] == n:
            return x[idx]
        return x

    def part(obj):
        return replace(obj, **{f.name: take(getattr(obj, f.name)) for f in fields(obj)})

    return replace(c, **{f.name: part(v) if is_dataclass(v) else take(v)
                         for f in fields(c) for v in [getattr(c, f.name)]})


def cell_from_stage(st, kind: str, p_role: str) -> Cell:
    """The cell of a buck or boost ``Stage``."""
    p = st.devices[(p_role, 0)]
    ind = st.inductors[0]
    return Cell(kind=kind, v_in=st.v_in, vo=st.vo, io=st.io, ts=1.0 / st.fs,
                td=st.dead_time if p.kind == "mosfet" else 0.0, l=ind.l, dcr=ind.dcr,
                a=st.devices[("switch", 0)], p=p,
                cin=st.capacitors[("input-capacitor", 0)],
                cout=st.capacitors[("output-capacitor", 0)],
                d_max=np.minimum(st.duty_limit, 1.0 - 1e-6))
