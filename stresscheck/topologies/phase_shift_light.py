"""Light load of the phase-shifted full bridge with diode rectifiers: discontinuous
conduction of the output inductor (``DCM``) and no load (``pulse-skipping``), solved in
the segment layout of :mod:`.bridge_phase_shift` so that its switch, body-diode,
rectifier and bus waveforms follow unchanged.

Why the PWM bridge's magnetizing-valley regime does not arise in the freewheel here:
the phase-shifted bridge freewheels with the primary *shorted* through two switches of
one rail, so the magnetizing current circulates in the primary (i_p = i_m) and no
rectifier has to carry it. It does arise inside the lagging leg's dead time where the
primary is open (segment OPEN below): there the secondary alone carries i_m.

First half period (the second mirrors it), inductor current zero at its start and the
magnetizing current i_m = −a circulating in the primary (i_p = −a); n = N_s/N_p:

  S0    lagging leg's dead time, its incoming switch's body diode carries −i_p: the
        bridge applies V_in + v_f0,b at once and rectifier A conducts from zero current
        (one rectifier on, L_lk in series with the output inductor). No commutation
        interval: the outgoing rectifier carries nothing (DCM), so the duty loss of
        the CCM case (Δt = L_lk·(I_p1 + I_p2)/V_in, Sabaté et al., APEC 1990 — from
        memory) shrinks to nothing; the leakage stays in series with L in the power
        interval (the one-rectifier relation of :mod:`.bridge_phase_shift_intervals`).
        S0 ends where i_p = n·i_L + i_m reaches zero or at the end of the dead time.
  OPEN  i_p has reached zero inside the dead time: the body diode blocks, the primary is
        open, rectifier A carries the magnetizing current: i_L = −i_m/n, and the
        magnetizing inductance referred to the secondary (n²·L_m) and L discharge in
        series into the output: (L + n²·L_m)·di_L/dt = −(V_o + v_1 + (DCR + r_1)·i_L)
        (the relation of :mod:`.bridge_light`'s FW1; the winding voltage keeps the ON
        polarity, v_tx = n·L_m/(L + n²·L_m)·(V_o + …) < V_in, so the floating leg node
        stays inside the bus). Until the dead time ends, or until i_L = 0 (then S3).
  S3    idle (no current anywhere) to the end of the dead time.
  P     the lagging channel is on: one rectifier, E = V_in, up to D·Ts.
  FA_SH the leading leg's dead time: one rectifier, the leading body diode in the loop
        (E = −v_f0,b), until i_L = 0;
  FA_SI ... then idle in the secondary: i_p = i_m circulates through that body diode,
        (L_lk + L_m)·di/dt = −v_f0,b − R·i.
  FB_SH[0] freewheel through both channels of one rail, one rectifier, until i_L = 0;
  FB_SH[1] then idle: i_p = i_m circulates, (L_lk + L_m)·di/dt = −R·i.
  (the other slots have zero length)

One rectifier conducting: i_p = n·i_L + i_m, v_tx·(1 + n²·L_lk/L + L_lk/L_m) = E − R·i_p
+ n·L_lk·W/L (:func:`.bridge_phase_shift_intervals.single`). The end of a conduction
(i_L = 0, i_p = 0) is placed by linear interpolation within the trapezoidal step (exact
for lossless parts, where the currents are linear).

Steady state: a the magnetizing current at the end of the half period (mirror
condition i_m(Ts/2) = −i_m(0), a fixed point, slope of the map about −1: averaged
iteration), and the duty from the charge balance of the output (mean i_L = I_o) by the
secant method on √(mean i_L) (nearly linear in D in DCM, where mean i_L ∝ D²). In the
lossless limit with L_m → ∞ and L_lk → 0 this is the textbook DCM of a buck-derived
converter (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed.,
§5.2–5.3, V_g = n·V_in, period Ts/2, D_half = 2·D). At zero output current without a
minimum load the duty tends to zero: the stage skips pulses (``pulse-skipping``) and
every voltage stress is taken at the full on-interval voltage, which each occasional
pulse still applies.

Rectifier reverse voltage after the current stops (idle): each rectifier blocks V_o
(on a bridge rectifier the pair shares it, taken whole for each device: conservative);
during OPEN the blocking one sees (2·)n·v_tx less the conducting drop, below that.
"""

from __future__ import annotations

import numpy as np

import copy

from . import bridge_phase_shift_intervals as iv

# the segment slots of bridge_phase_shift (HALF per half period; checked there)
S0, S1, OPEN, S3, P, FA_SH, FA_SI = range(7)
FB0, FB1 = 7, 8
HALF = 12
FIXED_ITER = 12
DUTY_ITER = 40
D_FLOOR = 1e-7


def _b(x, n_c):
    return np.broadcast_to(np.asarray(x, dtype=float), (n_c,)).copy()


def _single_until_zero(p, e, r, state, length):
    """One rectifier for ``length`` [s] or until i_L reaches zero: (duration, end)."""
    ip0, il0, m0 = state
    ip1, il1, m1, _ = iv.single(p, e, r, ip0, il0, m0, length)
    hit = il1 < 0
    t0 = np.where(hit, length * il0 / np.where(hit, il0 - il1, 1.0), length)
    t0 = np.where(il0 <= 0, 0.0, np.clip(t0, 0.0, length))
    ip2, il2, m2, _ = iv.single(p, e, r, ip0, il0, m0, t0)
    stop = hit | (il0 <= 0)
    il2 = np.where(stop, 0.0, il2)
    m2 = np.where(il0 <= 0, m0, m2)
    ip2 = np.where(stop, m2, ip2)  # no secondary current: the primary carries i_m
    return t0, (ip2, il2, m2)


def _circulate(p, e, r, i0, dt):
    """Idle secondary: i_p = i_m through L_lk + L_m, (L_lk + L_m)·di/dt = e − r·i,
    trapezoidal step; a body diode in the loop (e < 0) stops the current at zero."""
    lt = p.l_lk + p.l_m
    dt_s = np.maximum(dt, 1e-30)
    i1 = (i0 * (lt / dt_s - r / 2) + e) / (lt / dt_s + r / 2)
    i1 = np.where(dt > 0, i1, i0)
    return np.where((e < 0) & (i0 >= 0), np.maximum(i1, 0.0), i1)



def _series_discharge(p, n, il0, dur):
    """The output inductor discharging into the output in series with the magnetizing
    inductance referred to the secondary (primary open, one rectifier on):
    (L + n²·L_m)·di/dt = −(V_o + V_F + (DCR + R_1)·i), V_F and R_1 the drop and the
    resistance of the conducting rectifier path, one trapezoidal step of ``dur``
    [s] from ``il0`` [A]. Returns (i at the end [A], clipped at zero; time until the
    current stops [s], ``dur`` where it does not)."""
    l_ser = p.l + n * n * p.l_m
    rw, k = p.dcr + p.r1, p.vo + p.c1
    il1 = il0 - (k + rw * il0) * dur / (l_ser + rw * dur / 2)
    stop = il1 < 0
    t_stop = np.where(stop, dur * il0 / np.where(stop, il0 - il1, 1.0), dur)
    return np.maximum(il1, 0.0), t_stop

def half(p, v, d, a):
    """Segments of the first half period at duty ``d`` from i_m = −a (module docstring):
    (dt, (ip_a, ip_b), (il_a, il_b), (m_a, m_b), shared), each (N, HALF), as
    ``bridge_phase_shift._half`` returns them."""
    n_c = v.shape[0]
    n, ts = p.n, _b(p.ts, n_c)
    t_d = _b(p.t_d, n_c)
    dt = np.zeros((n_c, HALF))
    ip_a, ip_b, il_a, il_b, m_a, m_b = (np.zeros((n_c, HALF)) for _ in range(6))

    def put(k, dur, start, end):
        dt[:, k] = dur
        ip_a[:, k], il_a[:, k], m_a[:, k] = start
        ip_b[:, k], il_b[:, k], m_b[:, k] = end

    zero = np.zeros(n_c)
    t_on = d * ts
    t_lim = np.minimum(t_d, t_on)
    state = (-a, zero, -a)
    # S0: the lagging body diode in the loop, rectifier A from zero current
    e0, r0 = v + p.vf_body, p.r_lead + p.rd_body + p.r_p
    ip1 = iv.single(p, e0, r0, *state, t_lim)[0]
    cross = (ip1 > 0) & (a > 0)
    t_z = np.where(cross, t_lim * a / np.where(cross, ip1 + a, 1.0), t_lim)
    ip2, il2, m2, _ = iv.single(p, e0, r0, *state, t_z)
    end = (np.where(cross, 0.0, ip2), np.where(cross, -m2 / n, il2), m2)
    put(S0, t_z, state, end)
    state = end
    # OPEN: series discharge of n²·L_m and L, i_p = 0
    dur = t_lim - t_z
    il0 = state[1]
    il1, t2 = _series_discharge(p, n, il0, dur)
    put(OPEN, t2, state, (zero, il1, -n * il1))
    self_v = n * p.l_m / (p.l + n * n * p.l_m) * (p.vo + p.c1 + (p.dcr + p.r1)
                                                 * (il0 + il1) / 2)  # v_tx in OPEN [V]
    state = (zero, il1, -n * il1)
    put(S3, dur - t2, state, state)
    # P: the lagging channel on
    dur = np.maximum(t_on - t_lim, 0.0)
    r1 = p.r_diag
    ip3, il3, m3, _ = iv.single(p, v, r1, *state, dur)
    end = (ip3, il3, m3)
    put(P, dur, state, end)
    state = end
    # leading leg's dead time, then the freewheel through the channels
    e_a, r_a = -_b(p.vf_body, n_c), p.rd_body + p.r_lag + p.r_p
    fw = (0.5 - d) * ts - t_d
    for k_on, k_idle, e, r, length in ((FA_SH, FA_SI, e_a, r_a, t_d),
                                       (FB0, FB1, zero, r1, fw)):
        t_c, end = _single_until_zero(p, e, r, state, length)
        put(k_on, t_c, state, end)
        state = end
        rest = length - t_c
        i_end = _circulate(p, e, r, state[2], rest)
        idle = rest > 0
        end = tuple(np.where(idle, x, y) for x, y in zip((i_end, zero, i_end), state))
        put(k_idle, rest, state, end)
        state = end
    shared = np.zeros((n_c, HALF), dtype=bool)
    return dt, (ip_a, ip_b), (il_a, il_b), (m_a, m_b), shared, self_v


def _steady(p, v, d, a):
    """The fixed point a at duty d (averaged iteration) and the half at it."""
    for _ in range(FIXED_ITER):
        out = half(p, v, d, a)
        a_new = out[3][1][:, -1]
        a = (a + a_new) / 2
    return a, half(p, v, d, a)


def _mean(out):
    dt, _, (il_a, il_b) = out[:3]
    return (dt * (il_a + il_b) / 2).sum(axis=1) / dt.sum(axis=1)


def solve(p, v, d_max, start=None):
    """Duty [1], magnetizing start a [A] and the half-period arrays of every corner
    (lossless DCM estimate, then the secant method; module docstring)."""
    n_c = v.shape[0]
    io = _b(p.io, n_c)
    n, ts = p.n, _b(p.ts, n_c)
    if start is None:  # E&M §5.3 with V_g = n·V_in, period Ts/2
        m = np.clip(p.vo / (n * v), 1e-6, 1 - 1e-6)
        k = 2 * p.l / (p.vo / np.maximum(io, 1e-12) * ts / 2)
        d = np.sqrt(4 * k / ((2 / m - 1) ** 2 - 1)) / 2
        d = np.clip(d + 0 * io, 1e-4, d_max)
        a = v * d * ts / (2 * p.l_m)
    else:
        d, a = (np.array(x, dtype=float) for x in start)
    target = np.sqrt(np.maximum(io, 0.0))
    skip = io <= 0

    def g(dd, aa):
        aa, out = _steady(p, v, dd, aa)
        return np.sqrt(np.maximum(_mean(out), 0.0)) - target, aa

    d = np.where(skip, D_FLOOR, d)
    g0, a = g(d, a)
    d1 = np.where(skip, D_FLOOR, np.clip(d * 1.001, D_FLOOR, d_max))
    g1, a = g(d1, a)
    for _ in range(DUTY_ITER):
        den = g1 - g0
        ok = np.abs(den) > 0
        d2 = np.where(ok, d1 - g1 * (d1 - d) / np.where(ok, den, 1.0), d1)
        d2 = np.clip(d2, np.maximum(d1 / 4, D_FLOOR), np.minimum(d1 * 4, d_max))
        d2 = np.where(skip, D_FLOOR, d2)
        d, g0 = d1, g1
        d1 = d2
        g1, a = g(d1, a)
        if np.all(np.abs(d1 - d) <= 1e-12 * np.maximum(d1, 1e-6)):
            break
    d1 = np.where(skip, D_FLOOR, d1)
    a, out = _steady(p, v, d1, np.where(skip, 0.0, a))
    converged = skip | (np.abs(g1) <= 1e-6 * np.maximum(target, 1e-3))
    return d1, a, out, converged


def regime(out, ts, io):
    """``DCM`` (an idle interval), else ``CCM`` (the inductor current only touches
    zero), ``pulse-skipping`` at zero output current (module docstring)."""
    dt = out[0]
    idle = dt[:, [S3, FA_SI, FB1]].sum(axis=1)
    r = np.where(idle > 1e-9 * ts, "DCM", "CCM").astype(object)
    r[io <= 0] = "pulse-skipping"
    return r


def take(p, idx, size):
    """A copy of the circuit values ``p`` with its per-corner (size,) arrays at ``idx``."""
    q = copy.copy(p)
    for name, x in vars(p).items():
        if isinstance(x, np.ndarray) and x.shape == (size,):
            setattr(q, name, x[idx])
    return q


class Light:
    """The light-load corners of one evaluation (diode rectifiers where the CCM
    solution's inductor current reaches zero, and no-load corners), solved by
    :func:`solve`; ``apply`` overrides their rows of the CCM solution."""

    def __init__(self, p, st, il):
        io = st.io
        il_min = np.minimum(il[0].min(axis=1), il[1].min(axis=1))
        mask = (io <= 0) | ~(il_min > 0)
        if p.sync:
            mask[:] = False
        self.mask = mask
        self.idx = np.flatnonzero(mask)
        size = io.shape[0]
        self.q = take(p, self.idx, size)
        ts = np.broadcast_to(p.ts, (size,))[self.idx]
        self.ts = ts
        self.d_max = 0.5 - np.broadcast_to(p.t_d, (size,))[self.idx] / ts
        self.io = io[self.idx]
        self.state = None
        self.out = None

    def apply(self, p, v, start, arrays, converged):
        """(start, arrays, converged) of the CCM solver with the light rows replaced."""
        i = self.idx
        d, a, out, conv = solve(self.q, v[i], self.d_max, self.state)
        self.state = (d, a)
        self.out = out
        start = tuple(np.array(x, dtype=float, copy=True) for x in start)
        start[0][i], start[1][i], start[2][i], start[3][i] = d, 0.0, a, a
        dt, ip, il, m, shared = (np.array(arrays[0], copy=True),
                                 [np.array(x, copy=True) for x in arrays[1]],
                                 [np.array(x, copy=True) for x in arrays[2]],
                                 [np.array(x, copy=True) for x in arrays[3]],
                                 np.array(arrays[4], copy=True))
        dt[i] = out[0]
        for old, new in ((ip, out[1]), (il, out[2]), (m, out[3])):
            old[0][i], old[1][i] = new
        shared[i] = out[4]
        converged = np.array(converged, copy=True)
        converged[i] = conv
        return start, (dt, tuple(ip), tuple(il), tuple(m), shared), converged

    def regime(self):
        return regime(self.out, self.ts, self.io)

    def open_voltage(self):
        """Winding voltage v_tx during OPEN [V] (0 where OPEN has no length)."""
        return np.where(self.out[0][:, OPEN] > 0, self.out[5], 0.0)


def early_commutation(p, e0, r0, start, t_d, t_z):
    """Light load in continuous conduction: the outgoing rectifier's current reaches
    zero inside the lagging leg's dead time *before* i_p reverses (n·i_L below the
    magnetizing current). From there rectifier A conducts alone with the body diode
    still in the loop (segment S1, one rectifier: the lagging switch's current is
    booked as its channel's for the rest of the dead time, an approximation), and if
    i_p reaches zero inside the dead time the primary opens and the secondary carries
    the magnetizing current (OPEN, the series discharge of the module docstring),
    then S3 idle if i_L reaches zero.

    Returns None where no corner does so, else (mask, {slot: (dur, start, end,
    both)}, end state); ``mask`` only where the both-on S0 of the CCM model would make
    the outgoing rectifier's current negative beyond its noise floor (the corners it
    refuses), so every other corner keeps its solution exactly.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        return _early(p, e0, r0, start, t_d, t_z)


def _early(p, e0, r0, start, t_d, t_z):
    n = p.n
    n_c = start[0].shape[0]
    dur0 = np.minimum(_b(t_d, n_c), t_z)
    f_end = iv.shared_f(p, e0, r0, *start, dur0)[0]
    noise = 2 * n * 1e-6 * np.maximum(_b(p.io, n_c), 1.0)
    mask = f_end < -noise
    if not mask.any():
        return None
    t_c = iv.last_nonnegative(lambda t: iv.shared_f(p, e0, r0, *start, t), dur0)
    mid = iv.shared(p, e0, r0, *start, t_c)
    mid = (n * mid[1] + mid[2], mid[1], mid[2])  # one rectifier from here
    segs = {S0: (t_c, start, mid, True)}
    rest = _b(t_d, n_c) - t_c
    ip1 = iv.single(p, e0, r0, *mid, rest)[0]
    cross = ip1 > 0
    t_s = np.where(cross, rest * -mid[0] / np.where(cross, ip1 - mid[0], 1.0), rest)
    t_s = np.clip(t_s, 0.0, rest)
    ip2, il2, m2, _ = iv.single(p, e0, r0, *mid, t_s)
    end = (np.where(cross, 0.0, ip2), np.where(cross, -m2 / n, il2), m2)
    segs[S1] = (t_s, mid, end, False)
    dur = rest - t_s
    il1, t2 = _series_discharge(p, n, end[1], dur)
    z = np.zeros(n_c)
    fin = (np.where(cross, z, end[0]), np.where(cross, il1, end[1]),
           np.where(cross, -n * il1, end[2]))
    segs[OPEN] = (np.where(cross, t2, 0.0), end, fin, False)
    segs[S3] = (np.where(cross, dur - t2, 0.0), fin, fin, False)
    return mask, segs, fin


def solve_rows(solve_ccm, p, v, start, rows, size):
    """``solve_ccm`` (the CCM steady state) on the corners ``rows`` only, its results
    scattered into full-size arrays (zero elsewhere, for :class:`Light` to fill)."""
    if rows.all():
        return solve_ccm(p, v, start)
    idx = np.flatnonzero(rows)
    sub_start = None if start is None else tuple(np.asarray(x)[idx] for x in start)
    st, (dt, ip, il, m, sh), conv = solve_ccm(take(p, idx, size), v[idx], sub_start)

    def full(x, dtype=float):
        out = np.zeros((size,) + x.shape[1:], dtype=dtype)
        out[idx] = x
        return out

    st_full = tuple(full(x) if start is None else _put(np.asarray(y, float), idx, x)
                    for x, y in zip(st, start or st))
    return (st_full, (full(dt), tuple(full(x) for x in ip), tuple(full(x) for x in il),
                      tuple(full(x) for x in m), full(sh, bool)), full(conv, bool))


def _put(base, idx, x):
    out = np.array(base, dtype=float, copy=True)
    out[idx] = x
    return out
