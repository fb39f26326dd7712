"""Flyback converter: one primary switch, a coupled inductor (the "flyback transformer"),
one rectifier: a diode, in continuous (CCM) or discontinuous (DCM) conduction of the
magnetizing current, the regime found at each corner; or a MOSFET (synchronous
rectifier, forced continuous conduction, optional dead time).

Circuit and conventions
-----------------------
The primary N_p runs from the bus (dot) to the drain of Q1, the source of Q1 at ground.
The secondary N_s has its dot at the output return and its other end at the rectifier's
anode; the cathode is the output. While Q1 conducts, the magnetizing current rises in the
primary and the rectifier blocks; when Q1 turns off, the magnetizing current continues
in the secondary (ampere-turn balance of the ideal transformer: i_s = i_m·N_p/N_s) and
falls as the secondary delivers the stored energy to the output. Duty D = on-time / period
Ts = 1/fs; n = N_s/N_p; L_m is referred to N_p; L_s = n²·L_m is the same inductance seen
from the secondary.

Segment grid of one period, S = 4·K + 1 segments (K = :data:`K_SUB`):
  0 .. K−1:    on-time D·Ts in K equal steps: Q1 conducts
  K .. 2K−1:   dead time t_d after Q1 turns off (synchronous rectifier only, else zero
               length): the rectifier MOSFET's body diode conducts
  2K .. 3K−1:  D_2·Ts in K equal steps: the rectifier conducts (diode, or the synchronous
               MOSFET's channel for (1 − D)·Ts − 2·t_d)
  3K .. 4K−1:  dead time t_d before Q1 turns on again (synchronous only): body diode
  4K:          idle D_3·Ts = (1 − D − D_2)·Ts: no winding carries current (DCM only;
               zero length in CCM, where D_2 = 1 − D)

Relations
---------
Ideal forms (R. W. Erickson and D. Maksimović, *Fundamentals of Power Electronics*, 2nd
ed., §6.3.4 for the flyback as a buck-boost with a transformer, ch. 5 for the
discontinuous mode of the buck-boost — from memory), with R = V_o/I_o the load:
  CCM:       V_o = V_in·n·D/(1 − D)                                     [V]
  DCM:       V_o = V_in·D·sqrt(R/(2·L_m·fs))     (independent of n)      [V]
  boundary:  CCM where K_L = 2·n²·L_m·fs/R > (1 − D)²,  i.e.
             I_o > I_o,crit = V_in·D·(1 − D)/(2·n·L_m·fs)               [A]
  switch:    V_in + V_o/n        rectifier: V_o + n·V_in                 [V]
  core:      B_peak = L_m·I_m,pk/(N_p·A_e)   (flux linkage N_p·Φ = L_m·i_m)  [T]

With conduction drops, bus ripple and output ripple:
* On-time, primary side:  L_m·di/dt = V_a − R_a·i, with
      V_a = mean over the on-time of the input bank's capacitance voltage + ESR_in·I_dc,
      R_a = R_DS(on) + R_p + ESR_in                                     [V, ohm]
  (the source supplies only DC, so the input bank carries I_dc − i_p and its ESR acts
  as a series resistance for the pulsed primary current).
* Off-time, secondary side:  L_s·di_s/dt = −(V_b + R_b·i_s), with
      V_b = mean over the off-time of the output bank's capacitance voltage
            − ESR_out·I_o + v_f0,
      R_b = r_d + R_s + ESR_out                                         [V, ohm]
  (the rectifier's straight-line drop v_f0 + r_d·i, the secondary resistance and the
  output ESR carrying i_s − I_o).
* Each interval is integrated with K trapezoidal steps of h = interval/K,
      i_{j+1} = ((1 − a)·i_j + h·V/L)/(1 + a),   a = R·h/(2·L),
  i.e. straight segments with the drop of each step taken at its mean current. The
  piecewise-linear waveform then keeps volt-second and charge balance exactly and
  energy up to R·Δi²/12 per step, 1/K² of the error of one straight segment per interval
  (that error, (R·I_pk/V)/6 of the power, would be about 1 % on a 5 V secondary).
* CCM: for a trial D, the off-time charge Σ h·(i_j + i_{j+1})/2 = I_o·Ts (charge balance of
  the output bank) fixes the secondary current at turn-off, the on-time recurrence the
  valley I_1; the magnetizing current must return to I_1 after one period. That defect
  i_m(Ts) − i_m(0) rises with D, and D follows by bisection (``regulation.solve_duty``).
  The corner is CCM where the valley I_1 > 0.
* DCM (the CCM valley would be <= 0): the on-time starts from zero and ends at I_pk; the
  off-time ends when the secondary current reaches zero, which for the K-step recurrence
  is closed form,
      D_2·Ts = (L_s·I_s0/V_b)·φ(y),  φ = 2K·tanh(ln(1 + y)/(2K))/y,  y = R_b·I_s0/V_b,
  with I_s0 = I_pk/n (φ -> 1 without drops: D_2·Ts = L_s·I_s0/V_b). The energy per cycle
  must carry the load: the delivered charge per period rises with D and equals I_o·Ts at
  the duty found by bisection (``regulation.solve_duty``).
* V_a and V_b depend on the ripple of the banks, which depends on the waveforms: a fixed
  point of a few passes.

Synchronous rectifier (a MOSFET in the rectifier role)
------------------------------------------------------
The rectifier MOSFET (source at the winding, drain at the output, its body diode in the
place of the rectifier diode) is driven complementary to Q1: on from one dead time after
Q1 turns off until one dead time before Q1 turns on. Its channel conducts in both
directions, so the magnetizing current never stops: the converter runs in forced
continuous conduction at every load, with the CCM relations above (Erickson &
Maksimović, §6.3.4 — from memory; with the channel the DCM relations never apply). At
light load the secondary current turns negative at the end of the off-time (the
channel carries it from the output back into the winding) and the primary current
starts the on-time negative (through Q1's channel, back into the input bank).
* Off-time sub-intervals, each with K trapezoidal steps of L_s·di_s/dt = −(V + R·i_s):
      dead times: V = V_c + v_f0,body,  R = r_d,body + R_s + ESR_out
      channel:    V = V_c,              R = R_DS(on),SR + R_s + ESR_out
  with V_c = mean over the off-time of the output bank's capacitance voltage
  − ESR_out·I_o. The CCM construction above (charge balance fixes I_s0, the
  magnetizing current returns to its start value after one period, D by bisection)
  takes the three sub-intervals in a row. The body-diode drop in the dead times takes
  volt-seconds from the reset: lossless but for a body-diode drop v_bd, volt-second
  balance on L_m gives n·V_in·D = V_o·(1 − D) + 2·t_d·fs·v_bd, i.e.
      D = (V_o + 2·t_d·fs·v_bd)/(V_o + n·V_in)                           [1]
  (the tests check it), and the reflected voltage at the start of the off-time carries
  v_f0,body + r_d,body·I_s0 (the peak drain voltage of Q1: V_in + (V_o + v_bd)/n).
* Duty limit: the period holds the on-time and the two dead times, D <= 1 − 2·t_d·fs
  (besides ``converter.max_duty`` or the default controller limit).
* Refused (``invalid``): with t_d > 0, a secondary current that is not positive
  throughout both dead times (at light load the negative current at the end of the
  channel interval would return through Q1's body diode; not modelled). With t_d = 0
  the reversal is modelled at every load.
* Rectifier stresses: channel current = −i_s in the channel interval (drain -> source),
  body-diode current i_s in the dead times; v_peak the drain-source blocking voltage of
  the on-time, v_out + n·(v_bus − (R_DS(on) + R_p)·i_p), ripple maxima included
  (lossless: V_o + n·V_in).

Stresses
--------
* Switch v_peak: the largest drain voltage of the off-time,
      v_bus(t) + (v_out(t) + v_f0 + (r_d + R_s)·i_s(t))/n
  (synchronous: the body-diode drop in the dead times, R_DS(on),SR·i_s in the channel),
  with v_out the terminal voltage of the output bank (its ESR step at the start of the
  off-time included), and v_bus in the idle interval: the voltage before any leakage
  spike (``spikes.apply`` adds it; with a clamp see also :mod:`.flyback_handover`).
* Rectifier v_reverse_peak: v_out(t) + n·(v_bus(t) − (R_DS(on) + R_p)·i_p(t)) in the
  on-time, v_out(t) in the idle interval (ripple maxima included).
* Output bank: i_s − I_o (large in a flyback: the pulsed secondary current against a
  steady load); v_peak its largest terminal voltage. Input bank: I_dc − i_p.
* Transformer: B_peak = L_m·I_m,pk/(N_p·A_e) at the peak magnetizing current, winding
  loss R_p·I_p,rms² + R_s·I_s,rms².

Duty limit
----------
``converter.max_duty`` when the design gives it. Otherwise :data:`DEFAULT_MAX_DUTY` = 0.7:
flyback controllers commonly clamp the duty ratio between about 0.65 and 0.8 (the switch
needs off-time for the transformer to deliver its energy, and a long on-time makes the
off-time current pulse tall, raising every rms current, while in CCM the right-half-plane
zero of the control loop falls with (1 − D)²). 0.7 sits at the conservative end of that
range; give max_duty to use your controller's figure.

Not modelled: the leakage's turn-on commutation in CCM (the clamp is not fed back at
CCM corners), switch and diode capacitances (no ringing), reverse recovery, core loss,
body-diode conduction of Q1 (synchronous rectifier with dead time at loads where the
secondary current reverses: refused).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..regulation import solve_duty
from ..waveforms import (Grid, capacitor_voltage, capacitor_voltage_samples, max_over,
                         per_corner)
from .base import Layout, RoleSpec, Stage, StageResult
from .flyback_handover import apply_handover, dcm_handover_charge

K_SUB = 6  # trapezoidal steps per conduction interval
S = 4 * K_SUB + 1  # segments per period
_SEG = np.arange(S)
MASK_ON = _SEG < K_SUB
MASK_DEAD_A = (_SEG >= K_SUB) & (_SEG < 2 * K_SUB)  # body diode after Q1 turns off
MASK_COND = (_SEG >= 2 * K_SUB) & (_SEG < 3 * K_SUB)  # rectifier diode or SR channel
MASK_DEAD_B = (_SEG >= 3 * K_SUB) & (_SEG < 4 * K_SUB)  # body diode before Q1 turns on
MASK_OFF = MASK_DEAD_A | MASK_COND | MASK_DEAD_B  # the secondary conducts
MASK_IDLE = _SEG == 4 * K_SUB
DEFAULT_MAX_DUTY = 0.7  # [1] assumed controller limit when the design gives no max_duty
# Upper end of the duty search [1]: far above any controller limit, below the duty where
# conduction drops make the output voltage fall again with rising duty (boost-like).
DUTY_SEARCH_MAX = 0.95
MAX_PASSES = 30  # fixed point between the waveforms and the ripple of the banks
PASS_RTOL = 1e-11
BOUNDARY_RTOL = 1e-9  # DCM intervals may exceed the period by this much (round-off)


def synchronous(design) -> bool:
    """True where the rectifier is a MOSFET (synchronous rectifier)."""
    comps = design.by_role("rectifier")
    return bool(comps) and comps[0].part.kind == "mosfet"


def check_envelope(design) -> None:
    """Nothing to refuse up front: the turns ratio lets a flyback step up or down; a
    ratio that cannot reach the output at some corner is refused by the engine with
    that corner named (``RegulationError``).

    Parameters: ``Topology.check_envelope`` (:mod:`.base`).
    """


def layout(design) -> Layout:
    """Roles of a flyback design; InputError for options not modelled.

    Parameters and returns: ``Topology.layout`` (:mod:`.base`).
    """
    path = design.path
    if design.rectifier is not None:
        raise InputError(path, "converter.rectifier", "a flyback converter has a single "
                         "rectifier (role 'rectifier'); converter.rectifier applies to the "
                         "bridge family only: remove the key")
    if design.modulation != "pwm":
        raise InputError(path, "converter.modulation", "a flyback converter takes pwm "
                         "modulation only")
    if design.dead_time and not synchronous(design):
        raise InputError(path, "converter.dead_time", "a flyback converter with a diode "
                         "rectifier has no complementary switches, so a dead time has no "
                         "meaning here (it applies to a MOSFET in the rectifier role, a "
                         "synchronous rectifier); remove the key")
    for comp in design.by_role("transformer"):
        if "magnetizing_inductance" not in comp.part.electrical:
            raise InputError(path, f"{comp.key}.part", f"transformer '{comp.part.id}' has "
                             "no magnetizing_inductance: a flyback stores its energy in "
                             "the magnetizing inductance, so the part sheet must give it")
    roles = {
        "switch": RoleSpec(1, kinds=("mosfet",)),
        "rectifier": RoleSpec(1, kinds=("diode", "mosfet")),
        "transformer": RoleSpec(1),
        "input-capacitor": RoleSpec(None),
        "output-capacitor": RoleSpec(None),
    }
    return Layout(design.topology, None, roles)


def duty_limit(design, fs):
    """Largest duty ratio [1]: 1 when the design gives max_duty (the engine applies it),
    else :data:`DEFAULT_MAX_DUTY` (see the module notes); a synchronous rectifier also
    needs its two dead times in each period, D <= 1 − 2·t_d·fs.

    Parameters and returns: ``Topology.duty_limit`` (:mod:`.base`); ``fs`` [Hz],
    the limit [1], (N,) each.
    """
    limit = 1.0 if design.max_duty is not None else DEFAULT_MAX_DUTY
    limit = np.full(np.shape(fs), limit)
    if synchronous(design):
        limit = np.minimum(limit, 1.0 - 2 * design.dead_time * np.asarray(fs, dtype=float))
    return limit


def duty_limit_reason(design) -> str:
    if design.max_duty is not None:
        text = "the switch needs off-time for the transformer to deliver its energy"
    else:
        text = (f"no converter.max_duty given, so a controller limit of "
                f"{DEFAULT_MAX_DUTY:g} is assumed (common for flyback controllers); set "
                "max_duty to your controller's limit")
    if synchronous(design) and design.dead_time:
        text += "; the two dead times of the synchronous rectifier take 2·t_d·fs"
    return text


def _affine(v, r, l, h):
    """Node currents of K trapezoidal steps of l·di/dt = v − r·i, as i_j = i_0·u_j + w_j.

    Parameters: v [V], r [ohm], l [H], h [s] step, all (N,). Returns (u, w), (N, K+1)
    [1, A]; stable for r -> 0 (the geometric sum is accumulated, not closed form).
    """
    a = r * h / (2 * l)
    rho = (1 - a) / (1 + a)
    g = h * v / (l * (1 + a))
    u = rho[:, None] ** np.arange(K_SUB + 1)
    geo = np.concatenate([np.zeros((u.shape[0], 1)), np.cumsum(u[:, :-1], axis=1)], axis=1)
    return u, g[:, None] * geo


def _charge(nodes, h):
    """Σ h·(i_j + i_{j+1})/2 over the steps [C]."""
    return h * (nodes[:, :-1] + nodes[:, 1:]).sum(axis=1) / 2


def _reset_time(i0, v, r, l):
    """Time [s] for K trapezoidal steps of l·di/dt = −(v + r·i) to bring i0 to zero:
    (l·i0/v)·φ(y), φ = 2K·tanh(ln(1 + y)/(2K))/y, y = r·i0/v (φ = 1 for r = 0)."""
    y = r * i0 / v
    small = np.abs(y) < 1e-12
    ys = np.where(small, 1.0, y)
    phi = np.where(small, 1.0, 2 * K_SUB * np.tanh(np.log1p(ys) / (2 * K_SUB)) / ys)
    return l * i0 / v * phi


class _Params:
    """Per-corner constants of one pass [SI].

    ``vc``: mean capacitance voltage of the output bank over the off-time less
    ESR_out·I_o [V]; the off-time sub-intervals (dead time A, conduction, dead time B)
    have L_s·di/dt = −(V + R·i) with (V, R) in ``off`` [V, ohm], each (N,).
    """

    def __init__(self, st: Stage, va, vc, ho=None):
        xf = st.transformer
        (sw,), (rect,) = st.group("switch"), st.group("rectifier")
        cin = st.capacitors[("input-capacitor", 0)]
        cout = st.capacitors[("output-capacitor", 0)]
        self.n = xf.n_s / xf.n_p
        # a clamp's hand-over ``ho`` = (t_s [s], q_lk [C], mask) (flyback_handover)
        self.l = xf.l_m + (xf.l_leak * ho[2] if ho is not None else 0.0)
        self.t_s, self.q_lk = ho[:2] if ho is not None else (0.0, 0.0)
        self.ls = xf.l_m * self.n ** 2
        self.ts = 1.0 / st.fs
        self.io = st.io
        self.va, self.vc = va, vc
        self.ra = sw.r_on + xf.r_p + cin.esr
        self.sync = rect.kind == "mosfet"
        self.td = st.dead_time if self.sync else 0.0
        body = (vc + rect.v_f0, rect.r_d + xf.r_s + cout.esr)  # diode or body diode
        cond = (vc, rect.r_on + xf.r_s + cout.esr) if self.sync else body
        self.off = [body, cond, body]
        self.v_diode, self.r_diode = body  # the diode (DCM)

    def off_times(self, d):
        """Durations of the off-time sub-intervals for duty d (N,) [s]: dead time A,
        conduction, dead time B (CCM)."""
        # beyond the duty limit 1 − 2·t_d·fs (refused by the engine with its reason)
        # the dead times share what is left of the off-time
        td = np.minimum(self.td, np.maximum((1 - d) * self.ts, 0.0) / 2)
        ta = np.minimum(td + self.t_s, np.maximum((1 - d) * self.ts - td, 0.0))
        return [ta, np.maximum((1 - d) * self.ts - ta - td, 0.0), td]


def _secondary(p: _Params, times):
    """Secondary nodes over the off-time sub-intervals of duration ``times`` (3 x (N,))
    [s] as i_j = I_s0·U_j + W_j, (N, 3K+1), and the delivered charge as
    I_s0·Q_u + Q_w [C]."""
    n = p.io.size
    u_all, w_all = [np.ones((n, 1))], [np.zeros((n, 1))]
    q_u, q_w = np.zeros(n), np.zeros(n)
    for (v, r), t in zip(p.off, times):
        h = t / K_SUB
        u, w = _affine(-v, r, p.ls, h)
        u0, w0 = u_all[-1][:, -1:], w_all[-1][:, -1:]
        nu, nw = u0 * u, w0 * u + w
        q_u += _charge(nu, h)
        q_w += _charge(nw, h)
        u_all.append(nu[:, 1:])
        w_all.append(nw[:, 1:])
    return np.concatenate(u_all, 1), np.concatenate(w_all, 1), q_u, q_w


def _ccm(p: _Params):
    """CCM duty, valley I_1 and secondary current at turn-off I_s0 (N,) [1, A, A]."""

    def parts(d):
        h1 = d * p.ts / K_SUB
        u1, w1 = _affine(p.va, p.ra, p.l, h1)
        u2, w2, q_u, q_w = _secondary(p, p.off_times(d))
        s0 = (p.io * p.ts + p.q_lk / p.n - q_w) / q_u  # charge balance
        i1 = (p.n * s0 - w1[:, -1]) / u1[:, -1]  # on-time ends at n·s0
        end = p.n * (s0 * u2[:, -1] + w2[:, -1])  # magnetizing current after one period
        return end - i1, i1, s0

    duty, reachable = solve_duty(lambda d: parts(d)[0], np.zeros_like(p.io), 0.0,
                                 DUTY_SEARCH_MAX)
    _, i1, s0 = parts(duty)
    return duty, i1, s0, reachable


def _dcm(p: _Params):
    """DCM duty, secondary current at turn-off I_s0 and off-time (N,) [1, A, s]."""

    def delivered(d):
        h1 = d * p.ts / K_SUB
        s0 = _affine(p.va, p.ra, p.l, h1)[1][:, -1] / p.n
        q, s_a, t_a = (dcm_handover_charge(p, s0, _affine, _charge, K_SUB)  # as evaluated
                       if np.any(p.t_s) else (0.0, s0, 0.0))
        t2 = _reset_time(s_a, p.v_diode, p.r_diode, p.ls)
        u2, w2 = _affine(-p.v_diode, p.r_diode, p.ls, t2 / K_SUB)
        q = q + _charge(s_a[:, None] * u2 + w2, t2 / K_SUB)
        return q / p.ts, s0, t_a + t2

    duty, reachable = solve_duty(lambda d: delivered(d)[0], p.io, 0.0, DUTY_SEARCH_MAX)
    _, s0, t2 = delivered(duty)
    return duty, s0, t2, reachable


def evaluate(st: Stage) -> StageResult:
    """Flyback, every corner, CCM or DCM (module docstring).

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    xf = st.transformer
    (rect,) = st.group("rectifier")
    (sw,) = st.group("switch")
    cin = st.capacitors[("input-capacitor", 0)]
    cout = st.capacitors[("output-capacitor", 0)]
    v_in, vo, io = st.v_in, st.vo, st.io
    rs = xf.r_s
    n = xf.n_s / xf.n_p
    ts = 1.0 / st.fs
    sync = rect.kind == "mosfet"
    zn = np.zeros_like(io)

    i_dc = vo * io / v_in  # first guess of the source current [A]
    va = v_in + cin.esr * i_dc
    vc = vo - cout.esr * io
    ho = ((zn, zn, zn) if getattr(st, "handover", None) is not None and not sync
          and xf.l_leak > 0 else None)  # a clamp's hand-over (diode, DCM corners)
    for _ in range(MAX_PASSES):
        p = _Params(st, va, vc, ho)
        d_c, i1_c, s0_c, ok_c = _ccm(p)
        if sync:  # forced continuous: the channel conducts both ways
            ccm, dcm_fits = np.ones_like(ok_c), np.zeros_like(ok_c)
            unreachable = ~ok_c
            d_d, s0_d, t2_d = d_c, s0_c, zn
        else:
            d_d, s0_d, t2_d, ok_d = _dcm(p)
            ccm = ok_c & (i1_c > 0)
            dcm_fits = ok_d & (d_d * ts + t2_d <= ts * (1 + BOUNDARY_RTOL))
            unreachable = ~ccm & ~dcm_fits
        use_ccm = ccm | unreachable  # unreachable: the CCM search end, refused below
        duty = np.where(use_ccm, d_c, d_d)
        i1 = np.where(use_ccm, i1_c, 0.0)
        s0 = np.where(use_ccm, s0_c, s0_d)
        t1 = duty * ts
        times = p.off_times(duty)
        times[1] = np.where(use_ccm, times[1], np.maximum(t2_d - times[0], 0.0))
        t3 = np.maximum(ts - t1 - sum(times), 0.0)
        h1 = t1 / K_SUB
        u1, w1 = _affine(p.va, p.ra, p.l, h1)
        u2, w2, _, _ = _secondary(p, times)
        prim = i1[:, None] * u1 + w1  # (N, K+1) primary nodes [A]
        sec = s0[:, None] * u2 + w2  # (N, 3K+1) secondary nodes [A]
        if not use_ccm.all():  # DCM: the off-time ends at zero (exact up to round-off)
            sec[~use_ccm, 2 * K_SUB:] = 0.0
        if ho is not None:  # delayed commutation: i_s = (i_m − i_lk)/n in t_s
            ho_new, p_clamp = apply_handover(st, p, ho, sec, prim, s0, use_ccm, K_SUB)

        steps = [h1] + [t / K_SUB for t in times]
        grid = Grid(np.concatenate([np.repeat(h[:, None], K_SUB, 1) for h in steps]
                                   + [t3[:, None]], 1))
        z_k, z_3k, z_1 = (np.zeros((io.size, k)) for k in (K_SUB, 3 * K_SUB, 1))
        i_p = grid.wave(np.concatenate([prim[:, :-1], z_3k, z_1], 1),
                        np.concatenate([prim[:, 1:], z_3k, z_1], 1))
        i_s = grid.wave(np.concatenate([z_k, sec[:, :-1], z_1], 1),
                        np.concatenate([z_k, sec[:, 1:], z_1], 1))
        i_dc = i_p.mean()
        i_cin = i_dc - i_p
        i_cout = i_s - io
        va_new = (capacitor_voltage(i_cin, cin.c, 0.0, v_in).mean_over(MASK_ON)
                  + cin.esr * i_dc)
        vc_new = (capacitor_voltage(i_cout, cout.c, 0.0, vo).mean_over(MASK_OFF)
                  - cout.esr * io)
        done = (np.allclose(va_new, va, rtol=PASS_RTOL, atol=0)
                and np.allclose(vc_new, vc, rtol=PASS_RTOL, atol=0)
                and (ho is None or (np.allclose(ho_new[1], ho[1], rtol=PASS_RTOL, atol=0)
                                    and np.array_equal(ho_new[2], ho[2]))))
        ho = ho_new if ho is not None else None
        va, vc = va_new, vc_new
        if done:
            break

    # blocking voltages ---------------------------------------------------------------
    bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, v_in)
    v_out = capacitor_voltage_samples(i_cout, cout.c, cout.esr, vo)
    ip_s, is_s = i_p.samples(), i_s.samples()

    # rectifier drop per off-time segment: v_f0 + r_d·i (diode, body diode in a dead time
    # of nonzero length) or R_on·i (channel)
    body_f0, body_r = per_corner(rect.v_f0), per_corner(rect.r_d + rs)
    cond_f0 = per_corner(0.0) if sync else body_f0
    cond_r = per_corner(rect.r_on + rs) if sync else body_r
    dead = ((MASK_DEAD_A | MASK_DEAD_B)[None, :] & (grid.dt > 0))[:, :, None]
    drop = np.where(dead, body_f0 + body_r * is_s, cond_f0 + cond_r * is_s)
    drain = bus + (v_out + drop) / n
    v_sw = np.maximum(max_over(drain, MASK_OFF), max_over(bus, MASK_IDLE))
    reverse = v_out + n * (bus - per_corner(sw.r_on + xf.r_p) * ip_s)
    v_rect = np.maximum(max_over(reverse, MASK_ON), max_over(v_out, MASK_IDLE))
    v_block = {("switch", 0): v_sw, ("rectifier", 0): v_rect,
               ("input-capacitor", 0): max_over(bus), ("output-capacitor", 0): max_over(v_out)}
    currents = {("switch", 0): i_p, ("rectifier", 0): i_s,
                ("input-capacitor", 0): i_cin, ("output-capacitor", 0): i_cout}
    body = {}
    if sync:
        # channel current counts drain (output) -> source (winding): −i_s
        currents[("rectifier", 0)] = (-i_s).only(MASK_COND)
        body[("rectifier", 0)] = i_s.only(MASK_DEAD_A | MASK_DEAD_B)

    # transformer ------------------------------------------------------------------------
    i_m_peak = np.maximum(prim[:, -1], np.abs(prim[:, 0]))
    p_wind = xf.r_p * i_p.rms() ** 2 + rs * i_s.rms() ** 2
    b_peak = xf.l_m * i_m_peak / (xf.n_p * xf.core_area) if xf.core_area else None

    invalid = [(unreachable, "the output voltage cannot be reached at any duty ratio up "
                f"to {DUTY_SEARCH_MAX:g}: the conduction drops (switch, windings, "
                "rectifier, capacitor ESR) take more than the input can supply; lower "
                "them, or raise N_s/N_p")]
    notes = ["the model's voltages are spike-free; the leakage spike comes from the "
             "design's clamp or overshoot allowance (each row's note says which)"]
    if sync and st.dead_time > 0:
        k1, k3 = 2 * K_SUB, 3 * K_SUB  # nodes: end of dead time A, start of dead time B
        invalid.append((~unreachable & ((sec[:, k1] <= 0) | (sec[:, k3] <= 0)
                                        | (sec[:, -1] <= 0)),
                        "the secondary current of the synchronous rectifier is not positive "
                        "throughout the dead times (light load in forced continuous "
                        "conduction: the reversed current would return through the "
                        "switch's body diode, which is not modelled); raise the minimum "
                        "load or the magnetizing inductance, or set converter.dead_time "
                        "to 0 to model the reversal"))
    if sync and np.any(sec.min(axis=1) < 0):
        notes.append("forced continuous conduction: the secondary current turns negative "
                     "at light load and the synchronous rectifier's channel carries it "
                     "back into the winding (no diode emulation)")
    regime = np.where(use_ccm, "CCM", "DCM").astype(object)
    # A corner out of reach is refused through ``invalid`` with its own reason; its duty
    # is reported at the limit so that the engine does not refuse it first as "needs a
    # duty ratio of DUTY_SEARCH_MAX", which would understate what it needs.
    duty = np.where(unreachable, np.minimum(duty, st.duty_limit), duty)
    return StageResult(duty=duty, grid=grid, currents=currents, v_block=v_block,
                       input_current=i_dc, winding_loss=p_wind, b_peak=b_peak,
                       clamp_loss=p_clamp if ho is not None else None,
                       i_m_peak=i_m_peak, i_l_start=np.zeros_like(duty), i_m_start=i1,
                       body=body, invalid=invalid, regime=regime, notes=notes)
