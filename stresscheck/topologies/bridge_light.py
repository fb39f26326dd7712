"""Light-load regimes of the PWM bridge family with diode rectifiers (center-tap or
full-bridge rectifier; full-bridge, half-bridge and push-pull primaries).

Below the CCM boundary the output inductor current no longer keeps both rectifiers on
for the whole freewheel. Each half-period (the second is the mirror image: same inductor
current, magnetizing current negated) has four segments:

  0 ON     D·Ts        the primary drives emf (the on-path source less its drops);
                       rectifier group A carries i_L; di_m/dt = emf/L_m
  1 FW2    t_1         both groups on, the transformer clamped (winding voltage ≈ 0):
                       i_A = (i_L − i_m/n)/2, i_B = (i_L + i_m/n)/2; i_m constant
  2 FW1    t_2         i_L has fallen to i_m/n: group A stops, group B alone carries
                       i_L = i_m/n; the magnetizing inductance referred to the
                       secondary (n²·L_m) and the output inductor discharge in series
                       into the output
  3 IDLE   t_3         i_L = i_m = 0 (discontinuous conduction); no rectifier conducts

with n = N_s/N_p and t_1 + t_2 + t_3 = (1/2 − D)·Ts. Corners with t_3 > 0 are the regime
``DCM``, and so are those where the current left at the end of FW1 is below 1e-3 of the
inductor peak (a very large n²·L_m: the series discharge is too slow to finish, but it
carries next to nothing); the others with t_2 > 0 are ``magnetizing-valley``.

Interval equations (derived here; inductor current i_L, magnetizing current i_m referred
to the primary; drops linear, v_f0 + r_d·i, evaluated at each segment's mean current):

* ON:   L·di_L/dt = n·emf − V_o − k·v_f0 − (k·r_d + R_s + DCR)·i_L = u_on
        (k = 1 center-tap, 2 bridge rectifier)
* FW2:  L·di_L/dt = −V_o − v_fw − R_fw·i_L = u_fw
        (center-tap: v_fw = v_f0, R_fw = (r_d + R_s)/2 + DCR; bridge: 2·v_f0, r_d + DCR)
* FW1:  (L + n²·L_m)·di_L/dt = −V_o − k·v_f0 − (k·r_d + R_s + DCR)·i_L = u_1,
        i_m = n·i_L (ampere-turn balance with the primary open, N_s·i_L = N_p·i_m).
        The winding (half) that conducts carries v_w = −n²·L_m·di_L/dt
        = n²·L_m/(L + n²·L_m)·(−u_1) (reversed against the ON polarity: the magnetizing
        current falls). Group A blocks v_x + v_w = 2·v_w − (drop of B) on a center-tap
        rectifier (v_x the rectifier node), v_w on a bridge rectifier: about
        V_o + n·v_primary. The primary sees v_w/n: the switches' body diodes would
        clamp it at the source voltage and return the magnetizing current to the bus
        only if v_w/n exceeded it (v_w < V_o + drops < n·V_src in every regulating
        corner, so it does not happen; the model refuses a corner where it would).
* Primary switches: in FW1 the primary carries ±v_w/n, in IDLE nothing; each switch's
        off-state voltage stays within the bus (bridges) or 2·V_in (push-pull), already
        the on-interval values that the model reports.
* IDLE: all currents zero; each rectifier blocks V_o (center-tap; on a bridge
        rectifier the pair shares V_o, taken whole for each device: conservative).

Steady state: with a = i_m at the end of a half-period, the next ON starts at
i_m = −a, i_L = a/n (so the primary current starts from zero). The half-period map
a → a' is piecewise linear with slope (L − n²·L_m)/(L + n²·L_m) in |·| < 1 while FW1
ends the half-period, and 0 once IDLE is reached: its fixed point is unique and found by
bisection. The duty D is then set by the charge balance of the output: mean i_L = I_o
(the mean rises monotonically with D), again by bisection.

The limit L_m → ∞ gives the textbook DCM of a buck-derived converter (Erickson &
Maksimović, Fundamentals of Power Electronics, 2nd ed., §5.2–5.3, with the buck's
V_g replaced by n·V_src and the switching period by Ts/2): the IDLE interval, the duty
from the output voltage: M = 2/(1 + √(1 + 4·K/D_h²)), K = 2·L/(R·Ts/2), D_h = 2·D,
M = V_o/(n·V_src) on a center-tap rectifier — used by the tests as the limit check. At zero output current (no minimum load) the duty tends to zero: the stage skips
pulses; the regime ``pulse-skipping`` is reported and every voltage stress is taken at
the full on-interval voltage, which each occasional pulse still applies.
"""

from __future__ import annotations

import numpy as np

SEGMENTS_HALF = 4
_BISECT = 60


def half_period(d, a, p):
    """One half-period from i_m = −a, i_L = a/n with duty ``d`` [1] (arrays (M,)).

    ``p`` holds the per-corner constants (see :func:`solve`). Returns the segment
    durations (M, 4) [s], i_L at the segment starts and ends (M, 4) each [A], i_m the
    same (M, 4) [A], the segment inductor voltages (M, 4) [V] and a' (M,) [A].
    """
    n, ts, l, lm = p["n"], p["ts"], p["l"], p["lm"]
    l_ser = l + n * n * lm
    i0, m0 = a / n, -a
    t_on = d * ts
    u_on = p["u_on"]
    i1 = i0 + u_on * t_on / l
    m1 = m0 + p["emf"] * t_on / lm
    t_f = np.maximum((0.5 - d) * ts, 0.0)
    share = np.maximum(m1, 0.0) / n
    u_fw = p["u_fw"]
    t1 = np.clip((i1 - share) * l / np.maximum(-u_fw, 1e-12), 0.0, t_f)
    i2 = i1 + u_fw * t1 / l
    i2 = np.where(t1 < t_f, np.minimum(i2, share), i2)
    u_1 = p["u_1"]
    slope = u_1 / l_ser
    t_rem = t_f - t1
    t2 = np.minimum(t_rem, i2 / np.maximum(-slope, 1e-12))
    i3 = np.maximum(i2 + slope * t2, 0.0)
    t3 = t_rem - t2
    m2 = n * i2
    m3 = n * i3
    dt = np.stack([t_on, t1, t2, t3], axis=1)
    i_s = np.stack([i0, i1, i2, i3 * 0.0], axis=1)
    i_e = np.stack([i1, i2, i3, i3 * 0.0], axis=1)
    m_s = np.stack([m0, m1, m2, m3 * 0.0], axis=1)
    m_e = np.stack([m1, m1, m3, m3 * 0.0], axis=1)
    u = np.stack([u_on, u_fw, l * slope, 0.0 * u_on], axis=1)
    return dt, i_s, i_e, m_s, m_e, u, m3


def _fixed_point(d, p):
    """The a of the periodic steady state at duty ``d`` (bisection on a' − a)."""
    hi = half_period(d, np.zeros_like(d), p)[-1]
    lo = np.zeros_like(d)
    hi = np.maximum(hi, 0.0)
    for _ in range(_BISECT):
        mid = (lo + hi) / 2
        up = half_period(d, mid, p)[-1] > mid
        lo, hi = np.where(up, mid, lo), np.where(up, hi, mid)
    return (lo + hi) / 2


def _mean(d, p):
    a = _fixed_point(d, p)
    dt, i_s, i_e = half_period(d, a, p)[:3]
    return (dt * (i_s + i_e) / 2).sum(axis=1) / (p["ts"] / 2), a


def solve(p, i_o, d_max):
    """Duty [1] and the steady half-period of every corner in ``p`` (arrays (M,)).

    Parameters
    ----------
    p : dict
        n [1], ts [s], l, lm [H], emf [V] (primary during ON), u_on, u_fw, u_1 [V]
        (segment driving voltages at the segments' mean currents, module docstring).
    i_o : numpy.ndarray
        The output inductor's mean current [A].
    d_max : numpy.ndarray
        Upper bracket of the duty [1].

    Returns
    -------
    tuple
        duty (M,), then :func:`half_period`'s arrays at that duty.
    """
    lo = np.full(i_o.shape, 1e-6)
    hi = np.asarray(d_max, dtype=float) + 0 * i_o
    for _ in range(_BISECT):
        mid = (lo + hi) / 2
        up = _mean(mid, p)[0] < i_o
        lo, hi = np.where(up, mid, lo), np.where(up, hi, mid)
    d = (lo + hi) / 2
    a = _fixed_point(d, p)
    return (d,) + half_period(d, a, p)


def full_period(half):
    """Both half-periods (M, 8) from one: same i_L, magnetizing current negated."""
    dt, i_s, i_e, m_s, m_e, u = half[:6]
    cat = np.concatenate
    return (cat([dt, dt], axis=1), cat([i_s, i_s], axis=1), cat([i_e, i_e], axis=1),
            cat([m_s, -m_s], axis=1), cat([m_e, -m_e], axis=1), cat([u, u], axis=1))


def _c(x, size):
    return np.broadcast_to(np.asarray(x, dtype=float), (size,))


class LightLoad:
    """The light-load solution of the corners in ``mask`` of a PWM bridge with diodes.

    Built once per pass of the bridge model's fixed point; ``apply`` overrides those
    corners' rows of the grid, the inductor current and the magnetizing current.
    """

    def __init__(self, st, ga, gb, mask, v_src, r_prim, d_max):
        self.mask = mask
        idx = np.flatnonzero(mask)
        self.idx = idx
        size = st.io.size
        xf = st.transformer
        n = xf.n_s / xf.n_p
        k = 1.0 if st.rectifier == "center-tap" else 2.0
        vo = st.vo[idx]
        io = st.io[idx]
        dcr = st.inductors[0].dcr
        r_s = xf.r_s
        vfa, rda = _c(ga.v_f0, size)[idx], _c(ga.r_d, size)[idx]
        vfb, rdb = _c(gb.v_f0, size)[idx], _c(gb.r_d, size)[idx]
        p = {"n": n, "ts": 1.0 / st.fs[idx], "l": _c(st.inductors[0].l, size)[idx],
             "lm": _c(xf.l_m, size)[idx]}
        i_seg = np.stack([io, io, io, 0 * io], axis=1)
        i_prim = n * io
        for _ in range(3):  # drops at the segment mean currents
            i_on, i_fw, i_1 = i_seg[:, 0], i_seg[:, 1], i_seg[:, 2]
            emf = v_src[idx] - _c(r_prim, size)[idx] * i_prim
            p["emf"] = emf
            p["u_on"] = n * emf - vo - k * (vfa + rda * i_on) - (r_s + dcr) * i_on
            if k == 1.0:
                p["u_fw"] = (-vo - (vfa + vfb) / 2 - (rda + rdb) / 4 * i_fw - r_s * i_fw / 2
                             - dcr * i_fw)
            else:
                p["u_fw"] = -vo - (vfa + vfb) - (rda + rdb) / 2 * i_fw - dcr * i_fw
            p["u_1"] = -vo - k * (vfb + rdb * i_1) - (r_s + dcr) * i_1
            out = solve(p, io, d_max[idx])
            d, dt, i_s, i_e, m_s, m_e = out[:6]
            i_seg = (i_s + i_e) / 2
            i_prim = n * i_seg[:, 0] + (m_s[:, 0] + m_e[:, 0]) / 2
        self.n, self.k, self.p = n, k, p
        self.duty = d
        self.half = out[1:]
        dt = self.half[0]
        ts = p["ts"]
        self.t_idle = dt[:, 3]
        self.t_one = dt[:, 2]
        self.i_m_peak = m_e[:, 0]
        self.a = -m_s[:, 0]
        l_ser = p["l"] + n * n * p["lm"]
        # winding voltage during FW1 (against the ON polarity) [V]
        self.v_w = np.where(self.t_one > 1e-9 * ts, n * n * p["lm"] / l_ser * -p["u_1"], 0.0)
        self.v_src = v_src[idx]
        # DCM: an idle interval, or a current left at the end of FW1 below 1e-3 of the
        # peak (huge n²·L_m: the series discharge is too slow to end within the period,
        # but what it carries is negligible — electrically the textbook DCM)
        i_peak = self.half[2][:, 0]
        residual = self.a / n < 1e-3 * i_peak
        regime = np.where((self.t_idle > 1e-6 * ts) | residual, "DCM",
                          np.where(self.t_one > 1e-9 * ts, "magnetizing-valley", "CCM"))
        self.regime = np.where(io <= 0, "pulse-skipping", regime).astype(object)

    def apply(self, grid_dt, l_a, l_b, m_a, m_b):
        """Override the light-load rows of (N, 8) arrays (copies); returns them."""
        dt, i_s, i_e, m_s, m_e, _ = full_period(self.half)
        out = []
        for arr, new in ((grid_dt, dt), (l_a, i_s), (l_b, i_e), (m_a, m_s), (m_b, m_e)):
            arr = np.array(arr, dtype=float, copy=True)
            arr[self.idx] = new
            out.append(arr)
        return out

    def blocking(self, v_o, drop_b):
        """Rectifier reverse voltage after a group stops [V] (M,): in FW1 (center-tap
        2·v_w less the conducting drop, bridge v_w) and in IDLE (V_o)."""
        fw1 = 2 * self.v_w - drop_b if self.k == 1.0 else self.v_w
        fw1 = np.where(self.v_w > 0, fw1, 0.0)
        idle = np.where(self.t_idle > 0, v_o[self.idx], 0.0)
        return np.maximum(fw1, idle)

    def body_diode_clamp(self):
        """Corners (M,) where the FW1 primary voltage v_w/n would exceed the source."""
        return self.v_w / self.n > self.v_src
