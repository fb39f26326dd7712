"""Flyback converter: one primary switch, a coupled inductor (the "flyback transformer"),
one rectifier diode, in continuous (CCM) or discontinuous (DCM) conduction of the
magnetizing current, the regime found at each corner.

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

Segment grid of one period, S = 2·K + 1 segments (K = :data:`K_SUB`):
  0 .. K−1:    on-time D·Ts in K equal steps: Q1 conducts
  K .. 2K−1:   off-time D_2·Ts in K equal steps: the rectifier conducts
  2K:          idle D_3·Ts = (1 − D − D_2)·Ts: no winding carries current (DCM only;
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

Stresses
--------
* Switch v_peak: the largest drain voltage of the off-time,
      v_bus(t) + (v_out(t) + v_f0 + (r_d + R_s)·i_s(t))/n,
  with v_out the terminal voltage of the output bank (its ESR step at the start of the
  off-time included), and v_bus in the idle interval. This is the voltage *before any
  leakage spike*: leakage inductance, the clamp or snubber and the ringing of the drain
  capacitance in the idle interval are not modelled (the stress leaves no allowance for
  them; a clamp and leakage allowance is a later addition).
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

Not modelled: leakage inductance (read from the part sheet but not used), clamp or
snubber, switch and diode capacitances (no ringing), reverse recovery, core loss,
synchronous rectifiers (refused by the layout).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..regulation import solve_duty
from ..waveforms import Grid, capacitor_voltage_samples, max_over, mean_over_samples
from . import Layout, RoleSpec, Stage, StageResult

K_SUB = 6  # trapezoidal steps per conduction interval
S = 2 * K_SUB + 1  # segments per period
MASK_ON = np.arange(S) < K_SUB
MASK_OFF = (np.arange(S) >= K_SUB) & (np.arange(S) < 2 * K_SUB)
MASK_IDLE = np.arange(S) == 2 * K_SUB
DEFAULT_MAX_DUTY = 0.7  # [1] assumed controller limit when the design gives no max_duty
# Upper end of the duty search [1]: far above any controller limit, below the duty where
# conduction drops make the output voltage fall again with rising duty (boost-like).
DUTY_SEARCH_MAX = 0.95
MAX_PASSES = 30  # fixed point between the waveforms and the ripple of the banks
PASS_RTOL = 1e-11
BOUNDARY_RTOL = 1e-9  # DCM intervals may exceed the period by this much (round-off)


def layout(design) -> Layout:
    """Roles of a flyback design; InputError for options not modelled."""
    path = design.path
    if design.rectifier is not None:
        raise InputError(path, "converter.rectifier", "a flyback converter has a single "
                         "rectifier (role 'rectifier'); converter.rectifier applies to the "
                         "bridge family only: remove the key")
    if design.modulation != "pwm":
        raise InputError(path, "converter.modulation", "a flyback converter takes pwm "
                         "modulation only")
    if design.dead_time:
        raise InputError(path, "converter.dead_time", "a flyback converter with a diode "
                         "rectifier has no complementary switches, so a dead time has no "
                         "meaning here (synchronous rectifiers are not modelled yet); "
                         "remove the key")
    for comp in design.by_role("transformer"):
        if "magnetizing_inductance" not in comp.part.electrical:
            raise InputError(path, f"{comp.key}.part", f"transformer '{comp.part.id}' has "
                             "no magnetizing_inductance: a flyback stores its energy in "
                             "the magnetizing inductance, so the part sheet must give it")
    roles = {
        "switch": RoleSpec(1, kinds=("mosfet",)),
        "rectifier": RoleSpec(1, kinds=("diode",)),
        "transformer": RoleSpec(1),
        "input-capacitor": RoleSpec(None),
        "output-capacitor": RoleSpec(None),
    }
    return Layout(design.topology, None, roles)


def duty_limit(design, fs):
    """Largest duty ratio [1]: 1 when the design gives max_duty (the engine applies it),
    else :data:`DEFAULT_MAX_DUTY` (see the module notes)."""
    limit = 1.0 if design.max_duty is not None else DEFAULT_MAX_DUTY
    return np.full(np.shape(fs), limit)


def duty_limit_reason(design) -> str:
    if design.max_duty is not None:
        return "the switch needs off-time for the transformer to deliver its energy"
    return (f"no converter.max_duty given, so a controller limit of {DEFAULT_MAX_DUTY:g} "
            "is assumed (common for flyback controllers); set max_duty to your "
            "controller's limit")


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
    """Per-corner constants of one pass [SI]."""

    def __init__(self, st: Stage, va, vb):
        xf = st.transformer
        (sw,), (rect,) = st.group("switch"), st.group("rectifier")
        cin = st.capacitors[("input-capacitor", 0)]
        cout = st.capacitors[("output-capacitor", 0)]
        self.n = xf.n_s / xf.n_p
        self.l = xf.l_m
        self.ls = xf.l_m * self.n ** 2
        self.ts = 1.0 / st.fs
        self.io = st.io
        self.va, self.vb = va, vb
        self.ra = sw.r_on + xf.r_p + cin.esr
        self.rb = rect.r_d + xf.r_s + cout.esr


def _ccm(p: _Params):
    """CCM duty, valley I_1 and secondary current at turn-off I_s0 (N,) [1, A, A]."""

    def parts(d):
        h1, h2 = d * p.ts / K_SUB, (1 - d) * p.ts / K_SUB
        u1, w1 = _affine(p.va, p.ra, p.l, h1)
        u2, w2 = _affine(-p.vb, p.rb, p.ls, h2)
        s0 = (p.io * p.ts - _charge(w2, h2)) / _charge(u2, h2)  # charge balance
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
        t2 = _reset_time(s0, p.vb, p.rb, p.ls)
        u2, w2 = _affine(-p.vb, p.rb, p.ls, t2 / K_SUB)
        return _charge(s0[:, None] * u2 + w2, t2 / K_SUB) / p.ts, s0, t2

    duty, reachable = solve_duty(lambda d: delivered(d)[0], p.io, 0.0, DUTY_SEARCH_MAX)
    _, s0, t2 = delivered(duty)
    return duty, s0, t2, reachable


def evaluate(st: Stage) -> StageResult:
    xf = st.transformer
    (rect,) = st.group("rectifier")
    (sw,) = st.group("switch")
    cin = st.capacitors[("input-capacitor", 0)]
    cout = st.capacitors[("output-capacitor", 0)]
    vin, vo, io = st.vin, st.vo, st.io
    vf0, rd, rs = rect.v_f0, rect.r_d, xf.r_s
    n = xf.n_s / xf.n_p
    ts = 1.0 / st.fs

    i_dc = vo * io / vin  # first guess of the source current [A]
    va = vin + cin.esr * i_dc
    vb = vo - cout.esr * io + vf0
    for _ in range(MAX_PASSES):
        p = _Params(st, va, vb)
        d_c, i1_c, s0_c, ok_c = _ccm(p)
        d_d, s0_d, t2_d, ok_d = _dcm(p)
        ccm = ok_c & (i1_c > 0)
        dcm_fits = ok_d & (d_d * ts + t2_d <= ts * (1 + BOUNDARY_RTOL))
        unreachable = ~ccm & ~dcm_fits
        use_ccm = ccm | unreachable  # unreachable: the CCM search end, refused below
        duty = np.where(use_ccm, d_c, d_d)
        i1 = np.where(use_ccm, i1_c, 0.0)
        s0 = np.where(use_ccm, s0_c, s0_d)
        t1 = duty * ts
        t2 = np.where(use_ccm, (1 - duty) * ts, t2_d)
        t3 = np.maximum(ts - t1 - t2, 0.0)
        h1, h2 = t1 / K_SUB, t2 / K_SUB
        u1, w1 = _affine(p.va, p.ra, p.l, h1)
        u2, w2 = _affine(-p.vb, p.rb, p.ls, h2)
        prim = i1[:, None] * u1 + w1  # (N, K+1) primary nodes [A]
        sec = s0[:, None] * u2 + w2  # (N, K+1) secondary nodes [A]
        if not use_ccm.all():  # DCM: the off-time ends at zero (exact up to round-off)
            sec[~use_ccm, -1] = 0.0

        grid = Grid(np.concatenate([np.repeat(h1[:, None], K_SUB, 1),
                                    np.repeat(h2[:, None], K_SUB, 1), t3[:, None]], 1))
        z_k, z_1 = np.zeros((io.size, K_SUB)), np.zeros((io.size, 1))
        i_p = grid.wave(np.concatenate([prim[:, :-1], z_k, z_1], 1),
                        np.concatenate([prim[:, 1:], z_k, z_1], 1))
        i_s = grid.wave(np.concatenate([z_k, sec[:, :-1], z_1], 1),
                        np.concatenate([z_k, sec[:, 1:], z_1], 1))
        i_dc = i_p.mean()
        i_cin = i_dc - i_p
        i_cout = i_s - io
        va_new = (mean_over_samples(capacitor_voltage_samples(i_cin, cin.c, 0.0, vin),
                                    grid, MASK_ON) + cin.esr * i_dc)
        vb_new = (mean_over_samples(capacitor_voltage_samples(i_cout, cout.c, 0.0, vo),
                                    grid, MASK_OFF) - cout.esr * io + vf0)
        done = (np.allclose(va_new, va, rtol=PASS_RTOL, atol=0)
                and np.allclose(vb_new, vb, rtol=PASS_RTOL, atol=0))
        va, vb = va_new, vb_new
        if done:
            break

    # blocking voltages ---------------------------------------------------------------
    bus = capacitor_voltage_samples(i_cin, cin.c, cin.esr, vin)
    v_out = capacitor_voltage_samples(i_cout, cout.c, cout.esr, vo)
    ip_s, is_s = i_p.samples(), i_s.samples()

    def col(x):
        return np.asarray(x, dtype=float)[:, None, None]

    drain = bus + (v_out + col(vf0) + col(rd + rs) * is_s) / n
    v_sw = np.maximum(max_over(drain, MASK_OFF), max_over(bus, MASK_IDLE))
    reverse = v_out + n * (bus - col(sw.r_on + xf.r_p) * ip_s)
    v_rect = np.maximum(max_over(reverse, MASK_ON), max_over(v_out, MASK_IDLE))
    v_block = {("switch", 0): v_sw, ("rectifier", 0): v_rect,
               ("input-capacitor", 0): max_over(bus), ("output-capacitor", 0): max_over(v_out)}
    currents = {("switch", 0): i_p, ("rectifier", 0): i_s,
                ("input-capacitor", 0): i_cin, ("output-capacitor", 0): i_cout}

    # transformer ------------------------------------------------------------------------
    i_m_peak = prim[:, -1]
    p_wind = xf.r_p * i_p.rms() ** 2 + rs * i_s.rms() ** 2
    b_peak = xf.l_m * i_m_peak / (xf.n_p * xf.core_area) if xf.core_area else None

    invalid = [(unreachable, "the output voltage cannot be reached at any duty ratio up "
                f"to {DUTY_SEARCH_MAX:g}: the conduction drops (switch, windings, "
                "rectifier, capacitor ESR) take more than the input can supply; lower "
                "them, or raise N_s/N_p")]
    regime = np.where(use_ccm, "CCM", "DCM").astype(object)
    # A corner out of reach is refused through ``invalid`` with its own reason; its duty
    # is reported at the limit so that the engine does not refuse it first as "needs a
    # duty ratio of DUTY_SEARCH_MAX", which would understate what it needs.
    duty = np.where(unreachable, np.minimum(duty, st.duty_limit), duty)
    return StageResult(duty=duty, grid=grid, currents=currents, v_block=v_block,
                       input_current=i_dc, winding_loss=p_wind, b_peak=b_peak,
                       i_m_peak=i_m_peak, i_l_start=np.zeros_like(duty), i_m_start=i1,
                       invalid=invalid, regime=regime,
                       notes=["switch v_peak is before the leakage-inductance spike: no clamp or snubber "
                              "is modelled, add its allowance before signing off"])
