"""Phase-shifted full bridge: the circuit values of a stage and the solution of one
interval from its start state (i_p, i_L, i_m), with one or both rectifiers conducting
(see :mod:`.bridge_phase_shift` for the segments and the steady state).

* Both rectifiers conducting (commutation, open primary, and freewheel where the drops
  win): the rectifier node sits at −v_2(i_L) (center-tap v_f0 + (r_d + R_s)·i_L/2,
  bridge 2·v_f0 + r_d·i_L) and the transformer at v_tx = ρ·(i_p − i_m)/n² (ρ = (R_s +
  r_d)/2 center-tap, R_s + r_d bridge): the primary loop L_lk·di_p/dt = E − R·i_p − v_tx
  is first order with time constant L_lk/(R + ρ/n²), solved exactly (exponential); E is
  the source of the loop (V_in, 0, ± the body-diode drop v_f0,b), R its resistance.
* One rectifier conducting (power interval; freewheel where L_lk sustains the current):
  i_p = n·i_L + i_m, L_lk and the output inductor in series through the ideal
  transformer: v_tx·(1 + n²·L_lk/L + L_lk/L_m) = E − R·i_p + n·L_lk·W/L, with W = V_o +
  DCR·i_L + v_1(i_L) (v_1: drop of the single conducting path); di_L/dt = (n·v_tx −
  W)/L, di_m/dt = v_tx/L_m; solved by the trapezoidal rule (exact for linear currents).

Synchronous rectifiers, per state drops (the intervals are the diode model's):
* one rectifier on: the channel, v_1 = R_DS(on)·i_L (bridge: two channels);
* both on, both body diodes (the dead time S0, OPEN): the diode relations above;
* both on, incoming channel (c_A = 0, r_A = R_DS(on)) and outgoing body diode (c_B =
  v_f0, r_B = r_d), from the two secondary loops and i_A − i_B = (i_p − i_m)/n, i_A +
  i_B = i_L (Kirchhoff's laws and the ideal transformer's ampere-turn balance):
  center-tap 2·n·v_tx = (R_s + r̄)·(i_p − i_m)/n + (c_A − c_B) + Δr·i_L/2, rectifier
  node −[(c_A + c_B) + (R_s + r̄)·i_L + Δr·(i_A − i_B)/2]/2; bridge n·v_tx = (R_s +
  r̄)·(i_p − i_m)/n + (c_A − c_B) + Δr·i_L/2, node −[(c_A + c_B) + r̄·i_L + Δr·(i_A −
  i_B)/2], with r̄ = (r_A + r_B)/2, Δr = r_A − r_B [V]. The loop keeps its first-order
  form with v_tx = ρ·(i_p − i_m)/n² + k; the Δr cross terms (tens of millivolts at
  most, over segments of a few hundred nanoseconds) are taken at the state at the start
  of the segment.
"""

from __future__ import annotations

import copy

import numpy as np

from .base import Stage
from .bridge_rectifier import RectifierGroup

ROOT_ITER = 60  # Newton steps (with bisection fallback) of an interval end, at most
ROOT_TOL = 1e-13  # of the bracket: stop when every corner's step is below it


class Params:
    """Per-corner circuit values of the model [SI], (N,) arrays or scalars."""

    def __init__(self, st: Stage):
        xf, ind = st.transformer, st.inductors[0]
        self.n = xf.n_s / xf.n_p
        self.l_lk, self.l_m, self.l = xf.l_leak, xf.l_m, ind.l
        self.dcr, self.r_s, self.r_p = ind.dcr, xf.r_s, xf.r_p
        self.ts = 1.0 / st.fs
        self.t_d = st.dead_time
        self.vo, self.io = st.vo, st.io
        sw = st.group("switch")
        self.r_lead = (sw[0].r_on + sw[1].r_on) / 2
        self.r_lag = (sw[2].r_on + sw[3].r_on) / 2
        self.vf_body = np.mean([d.v_f0 for d in sw], axis=0)
        self.rd_body = np.mean([d.r_d for d in sw], axis=0)
        rect = RectifierGroup(st.group("rectifier"))
        self.vf, self.rd = rect.v_f0, rect.r_d  # diode, or the MOSFET's body diode
        self.sync = rect.sync
        # the conducting device of a one-rectifier state: the diode, or the channel
        self.vf1 = np.zeros_like(self.vf) if self.sync else self.vf
        self.rd1 = rect.r_on if self.sync else self.rd
        self.bridge = st.rectifier == "full-bridge"
        if self.bridge:
            self.c1, self.r1 = 2 * self.vf1, 2 * self.rd1 + self.r_s  # one path conducts
            self.c2, self.r2 = 2 * self.vf, self.rd  # rectifier node, all four conduct
            self.rho = self.r_s + self.rd
        else:
            self.c1, self.r1 = self.vf1, self.rd1 + self.r_s
            self.c2, self.r2 = self.vf, (self.rd + self.r_s) / 2
            self.rho = (self.r_s + self.rd) / 2
        self.k = 0.0  # constant part of v_tx with both on (unequal drops), [V]
        self.r_diag = self.r_lead + self.r_lag + self.r_p  # two channels + winding

    def mixed(self, state):
        """Both rectifiers on, the incoming one through its channel (R_DS(on)·i) and the
        outgoing one through its body diode (v_f0 + r_d·i): a copy with the shared
        state's drops; the cross terms of the unequal slopes taken at ``state``'s
        (i_p, i_L, i_m) (module docstring). Diode rectifiers: ``self``."""
        if not self.sync:
            return self
        q = copy.copy(self)
        ip, il, m = state
        i_s = (ip - m) / self.n  # i_A − i_B (ampere-turn balance)
        dr, c_b = self.rd1 - self.rd, self.vf  # channel − body slope; body threshold
        r_bar = (self.rd1 + self.rd) / 2
        if self.bridge:
            q.rho, q.r2 = self.r_s + r_bar, r_bar
            q.k = (-c_b + dr * il / 2) / self.n
            q.c2 = c_b + dr * i_s / 2
        else:
            q.rho = q.r2 = (self.r_s + r_bar) / 2
            q.k = (-c_b + dr * il / 2) / (2 * self.n)
            q.c2 = c_b / 2 + dr * i_s / 4
        return q


def ratio(x, small, exact, series):
    """exact(x), or its series where |x| <= small (removable singularity at 0)."""
    return np.where(np.abs(x) > small, exact(np.where(np.abs(x) > small, x, 1.0)), series(x))


def shared(p, e, r, ip0, il0, m0, t, slope=False):
    """Both rectifiers on: (i_p, i_L, i_m) after time t [A]; with ``slope``, also
    d/dt of n·i_L + i_m − i_p there [A/s]."""
    r_eff = r + p.rho / p.n ** 2
    drive = e - p.k + p.rho * m0 / p.n ** 2 - r_eff * ip0  # L_lk·di_p/dt at the start
    x = t * r_eff / p.l_lk
    g = ratio(x, 1e-6, lambda y: -np.expm1(-y) / y, lambda y: 1 - y / 2)
    h = ratio(x, 1e-4, lambda y: (y + np.expm1(-y)) / y ** 2, lambda y: 0.5 - y / 6)
    ip = ip0 + drive * t / p.l_lk * g
    ip_mean = ip0 + drive * t / p.l_lk * h
    rw = p.dcr + p.r2
    k_l = p.vo + p.c2 + rw * il0
    il = il0 - k_l * t / (p.l + rw * t / 2)
    m = m0 + (p.rho * (ip_mean - m0) / p.n ** 2 + p.k) * t / p.l_m
    if not slope:
        return ip, il, m
    d_ip = drive / p.l_lk * np.exp(-x)
    d_il = -k_l * p.l / (p.l + rw * t / 2) ** 2
    d_m = (p.rho * (ip - m0) / p.n ** 2 + p.k) / p.l_m
    return (ip, il, m), p.n * d_il + d_m - d_ip


def shared_f(p, e, r, ip0, il0, m0, t):
    """n·i_L + i_m − i_p (2n times the outgoing rectifier's current, both on) and its
    time derivative."""
    (ip, il, m), slope = shared(p, e, r, ip0, il0, m0, t, slope=True)
    return p.n * il + m - ip, slope


def single(p, e, r, ip0, il0, m0, dt):
    """One rectifier on, trapezoidal step of length dt: (i_p, i_L, i_m, v_tx)."""
    eps = 1e-12 * p.ts
    dt = np.where(np.abs(dt) < eps, eps, dt)
    rw = p.dcr + p.r1
    w0 = p.vo + p.c1 + rw * il0
    g = p.l_lk / dt + r / 2
    h = 1.0 / (p.l / dt + rw / 2)
    v_tx = (e - r * ip0 + g * p.n * h * w0) / (1 + g * p.n ** 2 * h + g * dt / p.l_m)
    d_il = h * (p.n * v_tx - w0)
    d_m = v_tx * dt / p.l_m
    return ip0 + p.n * d_il + d_m, il0 + d_il, m0 + d_m, v_tx


def shared_rises(p, e, r, ip, il, m):
    """Whether the outgoing rectifier turns on at once (d/dt of n·i_L + i_m − i_p > 0
    in the both-on state, from a start where it carries nothing)."""
    r_eff = r + p.rho / p.n ** 2
    dip = (e - p.k + p.rho * m / p.n ** 2 - r_eff * ip) / p.l_lk
    dil = -(p.vo + p.c2 + (p.dcr + p.r2) * il) / p.l
    dm = (p.rho * (ip - m) / p.n ** 2 + p.k) / p.l_m
    return p.n * dil + dm - dip > 0


def zero_crossing(p, e, r, ip0, il0, m0):
    """Time for i_p, negative at the start, to reach zero with both rectifiers on [s]:
    the exponential i_∞ + (i_p0 − i_∞)·exp(−t/τ) in closed form, τ = L_lk/(R + ρ/n²)."""
    r_eff = r + p.rho / p.n ** 2
    a = np.maximum(e - p.k + p.rho * m0 / p.n ** 2, 1e-30)  # L_lk·di_p/dt at i_p = 0
    y = -ip0 * r_eff / a
    t = p.l_lk * (-ip0) / a * ratio(y, 1e-8, lambda z: np.log1p(z) / z, lambda z: 1 - z / 2)
    return np.where(ip0 < 0, t, 0.0)


def last_nonnegative(f, hi, guess=None):
    """Root t in (0, hi] of f, where f >= 0 from 0 up to the root and < 0 after it;
    hi where f(hi) >= 0. ``f(t) -> (value, slope)``. Newton steps inside a shrinking
    bracket, bisection where a step would leave it."""
    lo = np.zeros_like(hi)
    f_hi, _ = f(hi)
    keep = f_hi >= 0
    top = hi.copy()
    t = hi.copy() if guess is None else np.clip(guess, 0.0, hi)
    tol = ROOT_TOL * np.max(np.abs(hi))
    for _ in range(ROOT_ITER):
        val, slope = f(t)
        up = val >= 0
        lo = np.where(up, t, lo)
        top = np.where(up, top, t)
        step = np.where(slope < 0, t - val / np.where(slope < 0, slope, -1.0), np.nan)
        inside = (step >= lo) & (step <= top)
        t_new = np.where(inside, step, (lo + top) / 2)
        done = np.all((np.abs(t_new - t) <= tol) | keep)
        t = t_new
        if done:
            break
    val, _ = f(t)
    t = np.where(val >= 0, t, lo)  # stay on the side where the rectifier still conducts
    return np.where(keep, hi, t)
