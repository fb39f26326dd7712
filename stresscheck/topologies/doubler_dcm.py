"""Light-load regimes of the PWM current doubler with diode rectifiers (full-bridge,
half-bridge and push-pull primaries): each inductor's current may stop on its own, and
the magnetizing current decides which rectifier stops first.

Layout (:mod:`.bridge_pwm`): one secondary winding X–Y, L1 from X and L2 from Y to the
output, diode A from the return to Y, diode B from the return to X. With the magnetizing
inductance referred to the secondary, L_ms = n²·L_m (n = N_s/N_p), across the winding and
its current i_ms flowing X → Y inside the winding (it rises during ON1), Kirchhoff's laws
and the ampere-turn balance of the ideal transformer (primary open between the
on-intervals, so the winding carries exactly i_ms) give, in each half-period (the second
is the mirror image: L1 ↔ L2, A ↔ B, i_ms negated). Relations derived here; the textbook
limit is checked by the tests:

  ON1   D·Ts    E = n·emf across the winding, A conducts i_1 + i_2 (so L2's current
                may go negative: A carries the sum, not L2 alone):
                L·di_1/dt = E − v_A − V_o − (R_s + DCR)·i_1 = u_on,
                L·di_2/dt = −v_A − V_o − DCR·i_2 = u_a,  L_ms·di_ms/dt = E
  then, if i_2 ≥ i_ms at the end of ON1:
  AB            both diodes on, winding clamped (di_ms/dt = 0): i_A = i_2 − i_ms,
                i_B = i_1 + i_ms; L·di_1/dt = u_b = −v_B − V_o − DCR·i_1, L·di_2/dt = u_a;
                ends when i_A or i_B reaches zero;
  else (i_2 < i_ms: A cannot carry i_2 − i_ms):
  BD            the winding current must stay i_2, so the primary current continues
                through the switches' body diodes (the coming on-interval's switches,
                against their forward direction) and the winding takes the coming
                polarity at E' = n·(V_src + v_f0 of the body diodes in the path: two on a
                full bridge): L·di_2/dt = E' − v_B − V_o = u_bd, L·di_1/dt = u_b,
                L_ms·di_ms/dt = −E'; B carries i_1 + i_2, A blocks E' − v_B; the
                magnetizing energy returns to the source; ends when i_2 = i_ms
  B only        (A stopped first: L2's current has fallen to the magnetizing current)
                i_2 = i_ms: L2 and L_ms discharge in series, (L + L_ms)·di_2/dt = u_b;
                L·di_1/dt = u_b; i_B = i_1 + i_2; A blocks v_Y = V_o + L·di_2/dt
  A only        (mirror: B stopped first) i_1 = −i_ms, (L + L_ms)·di_1/dt = u_a,
                L·di_2/dt = u_a; i_A = i_1 + i_2; B blocks v_X = V_o + L·di_1/dt
  IDLE          the remaining diode's current i_1 + i_2 has reached zero: no rectifier
                conducts; L1, L_ms and L2 form one loop with no source (the output at
                both ends): i_1 = −i_ms, i_2 = i_ms stay constant; both diodes block V_o

On the grid of :mod:`.bridge_pwm` a half-period is [ON, AB or BD, one diode, IDLE].
Corners with an IDLE interval are the regime ``DCM``, and so are those whose series
current (L with L_ms) is below 1e-3 of the inductor peak (a very large n²·L_m: the
stopped inductor carries next to nothing); with L_m → ∞ each inductor's current rises
from zero in its on-interval, falls to zero through the other diode, falls below zero
during the other on-interval (the conducting diode carries the sum) and returns to zero
in BD. Corners where a diode stops but the series current carries on are
``magnetizing-valley``. In the one-diode and IDLE states the winding sees at most
V_o + drops (< n·V_src in any corner that regulates), so the body diodes conduct only in
BD. The on-interval always starts with i_1 + i_2 ≥ 0 (every freewheel state ends so),
and E > 2·V_o keeps the sum rising. Refused (corner named): B would have to carry a
negative current in BD.

Drops are linear, v_f0 + r_d·i, evaluated at the mean current of each interval of the
previous pass (three passes). The steady state is the fixed point S = mirror(half(S))
of the start state S = (i_1, i_2, i_ms), found by Newton's method on the piecewise-affine
map, jointly with the duty and the charge balance of the output, mean(i_1 + i_2) = I_o. At zero output current (no minimum load) the duty tends to zero: the stage
skips pulses (``pulse-skipping``) and every voltage stress is taken at the full
on-interval voltage, which each occasional pulse still applies.
"""

from __future__ import annotations

import numpy as np

_NEWTON = 30


def half_period(d, s, p):
    """Segments [ON, AB, second, IDLE] of one half-period from the state ``s``.

    Parameters
    ----------
    d : numpy.ndarray
        Duty per switch [1] (M,).
    s : numpy.ndarray
        (3, M): i_1, i_2, i_ms at the start of ON1 [A].
    p : dict
        ts [s], l, lms [H], e, u_on, u_a, u_b [V] (module docstring), each (M,).

    Returns
    -------
    tuple
        dt (M, 4) [s]; i_1, i_2, i_ms at the segment starts and ends, each (M, 4) [A]
        (six arrays); the state at the end (3, M); A stopped first (M,) bool; and the
        on-interval's end state (3, M) [A].
    """
    ts, l, lms = p["ts"], p["l"], p["lms"]
    i1, i2, im = s
    t_on = d * ts
    i1b = i1 + p["u_on"] * t_on / l
    i2b = i2 + p["u_a"] * t_on / l
    imb = im + p["e"] * t_on / lms
    t_left = np.maximum((0.5 - d) * ts, 0.0)
    u_a, u_b = p["u_a"], p["u_b"]
    xa, xb = i2b - imb, i1b + imb
    # BD: L2's current below the magnetizing current at the end of ON1 (module docstring)
    bd = xa < 0
    rate_bd = p["u_bd"] / l + p["e_bd"] / lms
    t_bd = np.minimum(np.maximum(-xa, 0.0) / np.maximum(rate_bd, 1e-12), t_left)
    t_a = np.maximum(xa, 0.0) * l / np.maximum(-u_a, 1e-12)
    t_b = np.maximum(xb, 0.0) * l / np.maximum(-u_b, 1e-12)
    t1 = np.where(bd, t_bd, np.minimum(np.minimum(t_a, t_b), t_left))
    i1c = i1b + u_b * t1 / l
    i2c = np.where(bd, i2b + p["u_bd"] * t1 / l, i2b + u_a * t1 / l)
    imc = np.where(bd, imb - p["e_bd"] * t1 / lms, imb)
    a_first = bd | (t_a <= t_b)
    stopped = t1 < t_left
    u_s = np.where(a_first, u_b, u_a)
    s_ser, s_oth = u_s / (l + lms), u_s / l
    rest = t_left - t1
    total = np.maximum(i1c + i2c, 0.0)
    t2 = np.where(stopped, np.minimum(rest, total / np.maximum(-(s_ser + s_oth), 1e-12)), 0.0)
    i1d = np.where(a_first, i1c + s_oth * t2, i1c + s_ser * t2)
    i2d = np.where(a_first, i2c + s_ser * t2, i2c + s_oth * t2)
    imd = np.where(stopped, np.where(a_first, i2d, -i1d), imc)
    t3 = rest - t2
    dt = np.stack([t_on, t1, t2, t3], axis=1)
    st = np.stack
    i1_s, i1_e = st([i1, i1b, i1c, i1d], 1), st([i1b, i1c, i1d, i1d], 1)
    i2_s, i2_e = st([i2, i2b, i2c, i2d], 1), st([i2b, i2c, i2d, i2d], 1)
    m_c = np.where(stopped, np.where(a_first, i2c, -i1c), imc)
    im_s, im_e = st([im, imb, m_c, imd], 1), st([imb, imc, imd, imd], 1)
    return (dt, i1_s, i1_e, i2_s, i2_e, im_s, im_e, np.stack([i1d, i2d, imd]), a_first,
            np.stack([i1b, i2b, imb]), bd & (t1 > 0))


def _mirror(s):
    return np.stack([s[1], s[0], -s[2]])


def _residual(x, p, i_o):
    """S − mirror(half(S)) and mean(i_1 + i_2) − I_o [A], (4, M), at x = (S, d)."""
    d = np.clip(x[3], 1e-9, 0.5)
    out = half_period(d, x[:3], p)
    dt = out[0]
    both = (out[1] + out[2] + out[3] + out[4]) / 2
    mean = (dt * both).sum(axis=1) / (p["ts"] / 2)  # the half-period's: mirror symmetry
    return np.concatenate([x[:3] - _mirror(out[7]), (mean - i_o)[None, :]])


def solve(p, i_o, d_max, d0):
    """Duty [1] (M,) and start state (3, M) [A] of the periodic solution with
    mean(i_1 + i_2) = I_o: Newton's method on :func:`_residual` in (S, D) jointly (the
    periodicity alone leaves the current level free wherever both diodes conduct to the
    end of the freewheel), Jacobian by differences, steps halved until the residual
    falls; then :func:`half_period`'s output at that duty."""
    m = i_o.size
    x = np.concatenate([np.zeros((3, m)), np.clip(d0, 1e-6, d_max)[None, :]])
    r = _residual(x, p, i_o)
    scale = np.array([1.0, 1.0, 1.0, 1e-6])[:, None]
    for _ in range(_NEWTON):
        jac = np.empty((m, 4, 4))
        for k in range(4):
            h = np.zeros_like(x)
            h[k] = scale[k] * np.maximum(1e-6, 1e-6 * np.abs(x[k]) / scale[k])
            jac[:, :, k] = ((_residual(x + h, p, i_o) - r) / h[k]).T
        step = np.linalg.solve(jac + 1e-15 * np.eye(4), -r.T[:, :, None])[:, :, 0].T
        alpha = np.ones(m)
        norm = np.abs(r).max(axis=0)
        for _ in range(30):
            x_new = x + alpha * step
            x_new[3] = np.clip(x_new[3], 1e-9, d_max)
            r_new = _residual(x_new, p, i_o)
            better = np.abs(r_new).max(axis=0) < norm
            if np.all(better | (norm < 1e-12)):
                break
            alpha = np.where(better, alpha, alpha / 2)
        ok = np.abs(r_new).max(axis=0) < norm
        x = np.where(ok, x_new, x)
        r = np.where(ok, r_new, r)
        if np.all(np.abs(r).max(axis=0) <= 1e-10 * np.maximum(1.0, np.abs(i_o))):
            break
    d = np.clip(x[3], 1e-9, 0.5)
    return d, x[:3], half_period(d, x[:3], p), np.abs(r).max(axis=0)


def _c(x, size):
    return np.broadcast_to(np.asarray(x, dtype=float), (size,))


class DoublerLight:
    """The light-load solution of the corners in ``mask`` of a PWM current doubler with
    diodes; ``apply`` overrides those rows of the grid and the waveforms."""

    def __init__(self, st, ga, gb, mask, v_src, r_prim, d_max, v_body):
        idx = np.flatnonzero(mask)
        self.idx = idx
        size = st.io.size
        xf = st.transformer
        n = xf.n_s / xf.n_p
        vo, io = st.vo[idx], st.io[idx]
        dcr = _c(st.inductors[0].dcr, size)[idx]
        r_s = _c(xf.r_s, size)[idx]
        vfa, rda = _c(ga.v_f0, size)[idx], _c(ga.r_d, size)[idx]
        vfb, rdb = _c(gb.v_f0, size)[idx], _c(gb.r_d, size)[idx]
        l = _c(st.inductors[0].l, size)[idx]
        lms = n * n * _c(xf.l_m, size)[idx]
        p = {"ts": 1.0 / st.fs[idx], "l": l, "lms": lms}
        i_on, i_fw, i_prim = io, io / 2, n * io / 2  # first guesses of the mean currents
        # first duty: each inductor in the textbook DCM (E&M §5.3, buck with V_g = E and
        # the period Ts, load share I_o/2), or the CCM duty V_o/E if that is lower
        e0 = n * v_src[idx]
        m0 = np.clip(vo / e0, 1e-6, 0.999)
        k0 = 2 * l * np.maximum(io / 2, 1e-9) / (vo * p["ts"])
        d0 = np.minimum(np.sqrt(k0 * 4 / np.maximum((2 / m0 - 1) ** 2 - 1, 1e-12)) / 1,
                        m0)
        for _ in range(3):
            emf = v_src[idx] - _c(r_prim, size)[idx] * i_prim
            p["e"] = n * emf
            p["u_on"] = n * emf - vfa - rda * i_on - vo - (r_s + dcr) * io / 2
            p["u_a"] = -vfa - rda * i_fw - vo - dcr * io / 2
            p["u_b"] = -vfb - rdb * i_fw - vo - dcr * io / 2
            # BD: the winding at the next on-interval's polarity, the source plus the
            # conducting body diode's threshold (its current runs against the source)
            p["e_bd"] = n * (v_src[idx] + _c(v_body, size)[idx])
            p["u_bd"] = p["e_bd"] - vfb - rdb * i_fw - vo - dcr * io / 2
            d, s, out, self.residual = solve(p, io, d_max[idx], d0)
            dt, i1s, i1e, i2s, i2e, ims, ime = out[:7]
            i_on = (i1s[:, 0] + i1e[:, 0] + i2s[:, 0] + i2e[:, 0]) / 2
            busy = np.maximum(dt[:, 1:3].sum(axis=1), 1e-30)
            i_fw = ((dt[:, 1:3] * (i1s[:, 1:3] + i1e[:, 1:3] + i2s[:, 1:3] + i2e[:, 1:3])
                     / 2).sum(axis=1) / busy)
            i_prim = n * (i1s[:, 0] + i1e[:, 0] + ims[:, 0] + ime[:, 0]) / 2
        p["lm"] = _c(xf.l_m, size)[idx]
        self.n, self.p, self.duty, self.out = n, p, d, out
        on_end = out[9]
        self.bd = out[10]  # magnetizing current returned through the body diodes
        # B must conduct i_1 + i_2 during BD (it does whenever L1's current dominates)
        self.clamp = self.bd & (i1e[:, 1] + i2e[:, 1] < 0)
        self.i_m_peak = n * on_end[2]  # referred to the primary [A]
        ts = p["ts"]
        t_idle, t_two = dt[:, 3], dt[:, 2]
        # DCM: an idle interval, or a series current (L and L_ms) below 1e-3 of the
        # inductor peak (a very large n²·L_m: the stopped inductor carries next to
        # nothing, electrically the discontinuous current of that inductor)
        residual = np.abs(ims[:, 3]) < 1e-3 * np.abs(i1e[:, 0])
        regime = np.where((t_idle > 1e-6 * ts) | ((t_two > 1e-9 * ts) & residual), "DCM",
                          np.where(t_two > 1e-9 * ts, "magnetizing-valley", "CCM"))
        self.regime = np.where(io <= 0, "pulse-skipping", regime).astype(object)
        # reverse voltage of the stopped diode [V]: V_o + L·di/dt in the one-diode state,
        # V_o in IDLE
        a_first = out[8]
        u_s = np.where(a_first, p["u_b"], p["u_a"])
        v_one = np.where(t_two > 0, vo + l * u_s / (l + lms), 0.0)
        v_bd = np.where(self.bd, p["e_bd"] - vfb, 0.0)
        self.v_stop = np.maximum(np.maximum(v_one, np.where(t_idle > 0, vo, 0.0)), v_bd)

    def apply(self, grid_dt, l1, l2, mag):
        """(N, 8) arrays (copies) with the light-load rows: durations, then start and end
        values of i_1, i_2 and the magnetizing current referred to the primary [A]."""
        dt, i1s, i1e, i2s, i2e, ims, ime = self.out[:7]
        n = self.n
        cat = np.concatenate
        new = {"dt": cat([dt, dt], 1),
               "l1a": cat([i1s, i2s], 1), "l1b": cat([i1e, i2e], 1),
               "l2a": cat([i2s, i1s], 1), "l2b": cat([i2e, i1e], 1),
               "ma": n * cat([ims, -ims], 1), "mb": n * cat([ime, -ime], 1)}
        res = []
        for arr, key in ((grid_dt, "dt"), (l1.a, "l1a"), (l1.b, "l1b"), (l2.a, "l2a"),
                         (l2.b, "l2b"), (mag.a, "ma"), (mag.b, "mb")):
            arr = np.array(arr, dtype=float, copy=True)
            arr[self.idx] = new[key]
            res.append(arr)
        return res

    def blocking(self, v_o, drop_other):
        """Reverse voltage of a diode after it stops [V] (M,) (same for A and B)."""
        return self.v_stop

    def body_diode_clamp(self):
        """Corners (M,) where diode B would have to carry a negative current during
        BD (not modelled)."""
        return self.clamp

    def patch(self, cur_a, cur_b, i_s):
        """Rectifier currents and the winding current (PWL, copies) in the BD segments:
        after ON1 (segment 1) A is off, B carries i_1 + i_2 and the winding i_2 (as in
        ON2); after ON2 (segment 5) the mirror image. Returns them and the switches'
        body-diode currents of those segments, (first, second) on-path [A]."""
        idx, bd = self.idx, self.bd
        l1a, l1b, l2a, l2b = (np.concatenate([self.out[k], self.out[j]], 1)
                              for k, j in ((1, 3), (2, 4), (3, 1), (4, 2)))
        ma = np.concatenate([self.out[5], -self.out[5]], 1)
        mb = np.concatenate([self.out[6], -self.out[6]], 1)
        n = self.n
        new = {}
        for name, w in (("a", cur_a), ("b", cur_b), ("s", i_s)):
            new[name] = [w.a.copy(), w.b.copy()]
        sw = {"1": [np.zeros_like(cur_a.a), np.zeros_like(cur_a.a)],
              "2": [np.zeros_like(cur_a.a), np.zeros_like(cur_a.a)]}
        rows = idx[bd]
        for seg, stop, cond, wind, sign, key in ((1, "a", "b", (l2a, l2b), -1.0, "2"),
                                                 (5, "b", "a", (l1a, l1b), 1.0, "1")):
            for e, (la, lb, wa, mg) in enumerate(((l1a, l2a, wind[0], ma),
                                                  (l1b, l2b, wind[1], mb))):
                new[stop][e][rows, seg] = 0.0
                new[cond][e][rows, seg] = (la + lb)[bd, seg]
                new["s"][e][rows, seg] = sign * wa[bd, seg]
                # the switch of the coming on-interval, through its body diode (negative)
                prim = n * sign * wa[bd, seg] + n * mg[bd, seg]
                sw[key][e][rows, seg] = prim if key == "1" else -prim
        g = cur_a.grid
        return (g.wave(*new["a"]), g.wave(*new["b"]), g.wave(*new["s"]),
                g.wave(*sw["1"]), g.wave(*sw["2"]))
