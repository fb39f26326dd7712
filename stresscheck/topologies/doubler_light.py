"""Current doubler with synchronous rectifiers at light load: the dead time before each
on-interval when the rectifier that turns off carries reverse current.

Layout (:mod:`.bridge_pwm`): one secondary winding X–Y of N_s turns, L1 from X and L2 from
Y to the output, rectifier A from the return to Y (conducts with the first half-cycle),
rectifier B from the return to X. Both channels are on in the freewheel; channel A turns
off a dead time t_b before ON2 (segment F1C), channel B a dead time before ON1 (F2C).
During F1C rectifier A should carry x = i_L2 − i_m/n (i_m the magnetizing current,
referred to the primary; n = N_s/N_p). In forced continuous conduction (light load) x
can be negative there: A's body diode cannot carry it. Then (relations derived here
from Kirchhoff's laws and the ampere-turn balance of the ideal transformer, with the
magnetizing current constant over the interval — it moves by n·V_src·t_b/(n²·L_m), a few
percent of its peak):

* reverse part, t_r = min(t_b, −x_0·L/u_on): node Y has no path but the winding, so the
  winding carries i_L2 and the primary current n·x flows against the coming switch's
  forward direction, through its body diode: the winding takes the coming on-interval's
  polarity (the source voltage; its body-diode and path drops, a few tenths of a volt
  for at most t_b, are taken as in the on-interval) and L2 sees u_on, the ON2 voltage;
  x rises at u_on/L;
* forward part (x_0 > 0), t_f = min(t_b, x_0·L/(−u_fw)): A's body diode carries x, which
  falls at the freewheel slope u_fw/L;
* series part, the rest of t_b once x has reached zero: neither A nor the primary
  conducts; L2 and the magnetizing inductance referred to the secondary (n²·L_m) carry
  the same current in series, L2 sees u_fw·L/(L + n²·L_m).

L2's voltage over F1C is the time average of its parts (exact for the current at the
segment's ends, which is what the period's balance and the peaks need; the current is
drawn straight between them over the segment). The rectifier current over the segment
is drawn from max(x_0, 0) to 0 (forward then stop: its mean over-estimated by at most
t_b/t_f, conservative), the switch current from n·x_0 to n·x(t_r) in the reverse part
(a negative current: the coming switch's body diode). The mirror image holds for F2C
(rectifier B, L1, x = i_L1 + i_m/n). The winding current of these segments keeps the
freewheel value (−i_m/n), which leaves the winding loss of at most 2·t_b per period
out. At corners where x stays positive for the whole t_b nothing changes.
"""

from __future__ import annotations

import numpy as np

ON1, F1C, ON2, F2C = 0, 3, 4, 7
# (dead-time segment, inductor index, the coming on-interval, sign of i_m/n in x)
PAIRS = ((F1C, 1, ON2, -1.0), (F2C, 0, ON1, 1.0))


def parts(x0, u_on, u_fw, l_ind, t_b):
    """Durations of the reverse and forward parts of a dead-time interval [s].

    Parameters
    ----------
    x0 : numpy.ndarray
        Rectifier current at the interval's start [A] (N,).
    u_on, u_fw : numpy.ndarray
        Inductor voltage of the coming on-interval and of the freewheel [V] (N,).
    l_ind : numpy.ndarray
        Output inductance [H] (N,).
    t_b : numpy.ndarray
        Length of the interval [s] (N,).

    Returns
    -------
    tuple
        t_r, t_f [s] (N,) each; the series part lasts t_b − t_r − t_f.
    """
    rev = x0 < 0
    t_r = np.where(rev, np.minimum(t_b, -x0 * l_ind / np.maximum(u_on, 1e-12)), 0.0)
    t_f = np.where(rev, 0.0, np.minimum(t_b, x0 * l_ind / np.maximum(-u_fw, 1e-12)))
    return t_r, t_f


class DeadTimeReverse:
    """The dead-time intervals F1C and F2C of a synchronous current doubler (module
    docstring), from the rectifier currents at their starts of the previous pass."""

    def __init__(self, n, l_ind, l_m, t_b):
        self.n, self.l, self.lm, self.t_b = n, l_ind, l_m, t_b
        self.x0 = None  # {segment: x at its start} once a pass has run

    def voltages(self, u, du_rev):
        """Inductor voltages (list of two (N, 8) arrays [V]) with the averaged F1C/F2C;
        ``du_rev`` [V] (N,) is added to the on-interval voltage in the reverse part (the
        winding at n·(V_src + v_f0 of the body diode) instead of n·(V_src − R·I))."""
        if self.x0 is None:
            return u
        u = [uk.copy() for uk in u]
        self.t = {}
        for seg, k, on, _ in PAIRS:
            u_fw = u[k][:, seg]
            u_rev = u[k][:, on] + du_rev
            t_r, t_f = parts(self.x0[seg], u_rev, u_fw, self.l, self.t_b)
            changed = (self.t_b > 0) & ((self.x0[seg] < 0) | (t_f < self.t_b))
            u_ser = u_fw * self.l / (self.l + self.n ** 2 * self.lm)
            mean = (t_r * u_rev + t_f * u_fw + (self.t_b - t_r - t_f) * u_ser)
            u[k][:, seg] = np.where(changed, mean / np.where(changed, self.t_b, 1.0), u_fw)
            self.t[seg] = (t_r, changed, u_rev / self.l)
        return u

    def observe(self, i_l, share, t_b):
        """Store x at the start of F1C and F2C from the pass's waveforms [A] and the
        interval t_b [s] (N,); True when nothing changed at any corner or x and t_b
        have settled (relative 1e-9)."""
        l1, l2 = i_l
        x0 = {F1C: l2.a[:, F1C] - share.a[:, F1C], F2C: l1.a[:, F2C] + share.a[:, F2C]}
        active = any(np.any(x < 0) for x in x0.values()) or any(
            np.any(v[1]) for v in getattr(self, "t", {}).values())
        old, old_t = self.x0, self.t_b
        self.x0, self.t_b = x0, t_b
        if not active:
            return True
        return old is not None and np.allclose(old_t, t_b, rtol=1e-9, atol=0) and all(
            np.allclose(old[s], x0[s], rtol=1e-9, atol=1e-12) for s in x0)

    def patch(self, cur_a, cur_b, i_a, i_b, i_l, share):
        """Rectifier and switch currents with the dead-time parts (PWL, copies)."""
        if self.x0 is None or not hasattr(self, "t"):
            return cur_a, cur_b, i_a, i_b
        out = {"a": cur_a, "b": cur_b, "sa": i_a, "sb": i_b}
        for seg, k, _, sign in PAIRS:
            t_r, changed, rise = self.t[seg]
            x_start = i_l[k].a[:, seg] + sign * share.a[:, seg]
            rect, sw = ("a", "sb") if seg == F1C else ("b", "sa")
            x_r = np.where(t_r > 0, np.minimum(x_start + rise * t_r, 0.0), 0.0)
            w = out[rect]
            a, b = w.a.copy(), w.b.copy()
            a[:, seg] = np.where(changed, np.maximum(x_start, 0.0), a[:, seg])
            b[:, seg] = np.where(changed, 0.0, b[:, seg])
            out[rect] = w.grid.wave(a, b)
            s = out[sw]
            a, b = s.a.copy(), s.b.copy()
            rev = changed & (t_r > 0)
            a[:, seg] = np.where(rev, self.n * x_start, a[:, seg])
            b[:, seg] = np.where(rev, self.n * x_r, b[:, seg])
            out[sw] = s.grid.wave(a, b)
        return out["a"], out["b"], out["sa"], out["sb"]

    def t_rev(self):
        """Reverse part of the dead time [s] (N,), the mean of F1C and F2C (equal by
        symmetry); zero before the first pass."""
        if not hasattr(self, "t"):
            return 0.0
        return (self.t[F1C][0] + self.t[F2C][0]) / 2

    def magnetizing(self, mag, i_m, frac):
        """Magnetizing current (PWL) ramping in the reverse parts too: ``frac`` (N,) is
        the reverse part's share of the volt-seconds of one half-cycle [1], ``i_m`` its
        peak [A] (N,) (Faraday's law: the ramp follows the volt-seconds)."""
        a, b = mag.a.copy(), mag.b.copy()
        for seg, on, sign in ((F1C, ON2, 1.0), (F2C, ON1, -1.0)):
            mid = sign * i_m * (1 - 2 * frac)
            b[:, seg] = mid
            a[:, on] = mid
        return mag.grid.wave(a, b)

    def blocking(self, v_src_max, v_rev_drop, drop_other):
        """Rectifier reverse voltage in the reverse part [V] (N,): the winding at
        n·(V_src + v_rev_drop) less the conducting rectifier's drop; zero where no
        reverse part occurs."""
        rev = self.t_rev() > 0
        return np.where(rev, self.n * (v_src_max + v_rev_drop) - drop_other, 0.0)
