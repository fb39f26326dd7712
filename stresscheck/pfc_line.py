"""Line-cycle model of a power-factor-correcting boost stage (average-current control).

The stage is fed from the utility through a diode bridge; the controller makes the local
average inductor current (averaged over one switching period) follow the rectified line
voltage, ``i_avg(θ) = I_pk·|sin θ|``, and regulates the mean bus voltage. The line cycle
is sampled at ``M`` angles (midpoints of equal slices of one full cycle, the crest angles
π/2 and 3π/2 included when M is a multiple of 4); at each angle one switching period is
solved in continuous (CCM) or discontinuous (DCM) conduction, so the regime is found per
angle (high line is mostly DCM near the zero crossings).

All arrays are (N, M): N corners (or Monte Carlo samples), M line angles.

Relations (lossless forms; conduction drops enter as stated per function):
* unity power factor: P_line = V_rms·I_rms, I_pk = √2·I_rms (any power-electronics text,
  e.g. Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., ch. 18 "Power
  and harmonics in nonsinusoidal systems" and ch. 21 "Line-commutated rectifiers" /
  "Pulse-width modulated rectifiers" — from memory);
* boost CCM volt-second balance D = 1 − v_in/V_bus (same book §2.3) with the conduction
  drops of the boost cell (same book ch. 3);
* boost DCM, one period: i_p = v_on·t_on/L, t_off = i_p·L/v_off, local average
  i_p·(t_on + t_off)/(2·T_s) (same book §5.3 — from memory);
* bulk-capacitor low-frequency current: with unity power factor the local average diode
  current is 2·I_o·sin²θ = I_o·(1 − cos 2θ), so the capacitor carries −I_o·cos 2θ and the
  bus ripple is ΔV_pp = I_o/(2π·f_line·C) (common practice; the model integrates the
  sampled currents instead of using this closed form, and the tests compare the two).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

DEFAULT_ANGLES = 96  # line-cycle samples; a multiple of 4 puts samples at both crests
DCM_PASSES = 8  # fixed-point passes on the DCM peak current (drops at i_p/2)


def line_angles(m: int = DEFAULT_ANGLES) -> np.ndarray:
    """Sample angles of one full line cycle [rad]: midpoints of ``m`` equal slices,
    shifted so that π/2 and 3π/2 are samples when ``m`` is a multiple of 4."""
    k = np.arange(m)
    return 2 * np.pi * (k + 0.5) / m + (np.pi / 2 - 2 * np.pi * (m // 4 + 0.5) / m)


@dataclass
class LineCycle:
    """One solved line cycle, (N, M) arrays unless stated [SI]."""

    theta: np.ndarray  # (M,) [rad]
    v_in: np.ndarray  # rectified voltage after the bridge drops [V]
    i_avg: np.ndarray  # local average inductor current [A]
    t_on: np.ndarray  # switch on-time [s]
    t_off: np.ndarray  # boost-diode conduction time [s]
    i_start: np.ndarray  # inductor current at turn-on [A]
    i_peak: np.ndarray  # inductor current at turn-off [A]
    dcm: np.ndarray  # bool: discontinuous at this angle
    ts: np.ndarray  # (N,) switching period [s]
    t_line: np.ndarray  # (N,) line period [s]
    p_line: np.ndarray | None  # (N,) power drawn from the line [W]
    i_o: np.ndarray  # (N,) load current of the bus [A]

    # ---- one switching period at each angle as three segments: on, off, idle ------------
    def segments(self):
        """(a, b, dt_fraction) of the inductor current, (N, M, 3) each; the fractions of
        the switching period sum to one at each angle."""
        ts = self.ts[:, None]
        a = np.stack([self.i_start, self.i_peak, np.zeros_like(self.i_start)], axis=-1)
        end_off = np.where(self.dcm, 0.0, self.i_start)
        b = np.stack([self.i_peak, end_off, np.zeros_like(self.i_start)], axis=-1)
        idle = np.maximum(ts - self.t_on - self.t_off, 0.0)
        frac = np.stack([self.t_on, self.t_off, idle], axis=-1) / ts[..., None]
        return a, b, frac

    def local_mean_square(self, which: str) -> np.ndarray:
        """Mean square over one switching period at each angle of the inductor current
        restricted to ``which`` ("all", "on" = switch, "off" = boost diode) [A²]."""
        a, b, frac = self.segments()
        sq = frac * (a * a + a * b + b * b) / 3
        pick = {"all": slice(None), "on": slice(0, 1), "off": slice(1, 2)}[which]
        return sq[..., pick].sum(axis=-1)

    def local_mean(self, which: str) -> np.ndarray:
        """Mean over one switching period at each angle, as ``local_mean_square`` [A]."""
        a, b, frac = self.segments()
        m = frac * (a + b) / 2
        pick = {"all": slice(None), "on": slice(0, 1), "off": slice(1, 2)}[which]
        return m[..., pick].sum(axis=-1)


def _solve_angles(theta, v_pk, i_pk, v_bus, ts, l, r_on, dcr, vf_boost, rd_boost,
                  vf_bridge, rd_bridge):
    """Solve one switching period at every angle for given crest current ``i_pk``."""
    s = np.abs(np.sin(theta))[None, :]
    i_avg = i_pk[:, None] * s
    v_in = v_pk[:, None] * s - 2 * (vf_bridge[:, None] + rd_bridge[:, None] * i_avg)
    conducting = v_in > 0
    v_in = np.maximum(v_in, 0.0)
    i_avg = np.where(conducting, i_avg, 0.0)
    vb, tsc, lc = v_bus[:, None], ts[:, None], l[:, None]
    r_on_c, dcr_c = r_on[:, None], dcr[:, None]
    v_f = vf_boost[:, None] + rd_boost[:, None] * i_avg
    # CCM: x = 1 − D from the volt-second balance with drops at the local average current
    # v_in − DCR·i − D·R_on·i − (1 − D)·(V_bus + v_f) = 0 with x = 1 − D
    x = (v_in - (dcr_c + r_on_c) * i_avg) / (vb + v_f - r_on_c * i_avg)
    d = np.clip(1.0 - x, 0.0, 1.0)
    v_on = np.maximum(v_in - (r_on_c + dcr_c) * i_avg, 0.0)
    ripple = v_on * d * tsc / lc
    ccm = i_avg >= ripple / 2
    # DCM: average of a triangle pulse equals the reference. The drops are taken at each
    # interval's own mean current, i_p/2 (not at the local average), so that the
    # volt-second integral of every interval is exact for the straight-line current;
    # i_p is found by a short fixed point from the drops at the local average.
    vf0_c, rd_c = vf_boost[:, None], rd_boost[:, None]
    i_mid = i_avg
    for _ in range(DCM_PASSES):
        v_on_d = np.maximum(v_in - (r_on_c + dcr_c) * i_mid, 0.0)
        v_off = np.maximum(vb + vf0_c + (rd_c + dcr_c) * i_mid - v_in, 1e-12)
        with np.errstate(divide="ignore", invalid="ignore"):
            t_on_dcm = np.sqrt(2 * lc * tsc * i_avg / (v_on_d * (1 + v_on_d / v_off)))
        t_on_dcm = np.where(v_on_d > 0, t_on_dcm, 0.0)
        i_p_dcm = v_on_d * t_on_dcm / lc
        i_mid = i_p_dcm / 2
    t_off_dcm = i_p_dcm * lc / v_off
    t_on = np.where(ccm, d * tsc, t_on_dcm)
    t_off = np.where(ccm, (1 - d) * tsc, np.minimum(t_off_dcm, tsc - t_on_dcm))
    i_start = np.where(ccm, i_avg - ripple / 2, 0.0)
    i_peak = np.where(ccm, i_avg + ripple / 2, i_p_dcm)
    return v_in, i_avg, t_on, t_off, i_start, i_peak, ~ccm & conducting


def solve_line_cycle(v_rms, f_line, fs, v_bus, i_o, l, *, r_on, dcr, vf_boost, rd_boost,
                     vf_bridge, rd_bridge, m: int = DEFAULT_ANGLES,
                     iterations: int = 6) -> LineCycle:
    """Solve the PFC boost over one line cycle at every corner.

    Parameters
    ----------
    v_rms : (N,) line voltage [V rms]
    f_line : (N,) line frequency [Hz]
    fs : (N,) switching frequency [Hz]
    v_bus : (N,) regulated mean bus voltage [V]
    i_o : (N,) DC load current drawn from the bus [A]
    l : (N,) boost inductance [H]
    r_on, dcr : (N,) switch channel resistance and inductor DCR [Ω]
    vf_boost, rd_boost : (N,) boost diode straight-line model [V], [Ω]
    vf_bridge, rd_bridge : (N,) one bridge diode's straight-line model [V], [Ω]
    m : number of line angles
    iterations : passes of the fixed point on the crest current

    Returns
    -------
    LineCycle
        The crest current is set by the charge balance of the bulk capacitor (the boost
        diode delivers I_o on average over the line cycle), found by a fixed point that
        converges in a few passes (the delivered charge is nearly proportional to I_pk);
        ``p_line`` is then the mean of v_line·i_L, which covers the output and every
        conduction loss.
    """
    def col(x):
        return np.asarray(x, dtype=float).reshape(-1)

    v_rms, f_line, fs, v_bus, i_o, l = map(col, (v_rms, f_line, fs, v_bus, i_o, l))
    n = v_rms.shape[0]
    r_on, dcr, vf_boost, rd_boost, vf_bridge, rd_bridge = (
        np.broadcast_to(col(x), (n,)) for x in (r_on, dcr, vf_boost, rd_boost, vf_bridge,
                                                  rd_bridge))
    theta = line_angles(m)
    ts, v_pk = 1.0 / fs, np.sqrt(2.0) * v_rms
    s = np.abs(np.sin(theta))[None, :]
    # first guess: lossless unity power factor, P_line = V_bus·I_o
    i_pk = v_bus * i_o / np.maximum((v_pk[:, None] * s * s).mean(axis=1), 1e-30)
    for _ in range(iterations):
        sol = _solve_angles(theta, v_pk, i_pk, v_bus, ts, l, r_on, dcr, vf_boost,
                            rd_boost, vf_bridge, rd_bridge)
        cyc = LineCycle(theta, *sol[:-1], sol[-1], ts, 1.0 / f_line, None, i_o)
        # charge balance of the bulk capacitor: the boost diode delivers I_o on average
        delivered = cyc.local_mean("off").mean(axis=1)
        i_pk = i_pk * np.divide(i_o, delivered, out=np.ones_like(i_o), where=delivered > 0)
    cyc.p_line = (v_pk[:, None] * s * cyc.local_mean("all")).mean(axis=1)
    return cyc


def switching_charge(cyc: LineCycle) -> np.ndarray:
    """Charge swing of the bulk capacitor within one switching period at each angle [C],
    (N, M): the area of the capacitor current below its local mean.

    The capacitor carries i_D − I_o; about its local mean that is i_D − ī_D, negative by
    ī_D wherever the boost diode is off (on-time and DCM idle time) and below ī_D over
    the falling end of the diode's conduction: Q = ī_D·(T_s − t_off) + ∫ max(ī_D − i_D, 0)
    over t_off (exact for the straight-line diode current; the DC boost's closed form
    Q = I_o·D·T_s of Erickson & Maksimović, 2nd ed., §2.3, when i_D stays above ī_D).
    """
    a, b, _ = cyc.segments()
    i_hi, i_lo = a[..., 1], b[..., 1]  # diode current at the start and end of t_off
    i_bar = cyc.local_mean("off")
    t_off = cyc.t_off
    with np.errstate(divide="ignore", invalid="ignore"):
        partial = 0.5 * (i_bar - i_lo) ** 2 * t_off / (i_hi - i_lo)
    whole = (i_bar - (i_hi + i_lo) / 2) * t_off
    below = np.where(i_lo >= i_bar, 0.0, np.where(i_hi <= i_bar, whole, partial))
    return i_bar * (cyc.ts[:, None] - t_off) + np.nan_to_num(below)


def bus_ripple(cyc: LineCycle, c_bus, esr=0.0):
    """Bulk-capacitor voltage excursion about the mean bus voltage over one line cycle.

    The low-frequency part integrates the local average capacitor current
    (boost-diode current − I_o) over the sampled line cycle (midpoint rule, time step
    T_line/M); the switching part at each angle is the swing ``switching_charge``/C,
    taken half above and half below the local value, plus ESR times the capacitor
    current at the diode's peak (up) and at the load current alone (down).

    Parameters
    ----------
    cyc : LineCycle
        The solved line cycle.
    c_bus : (N,) bulk capacitance [F]
    esr : (N,) or float, its equivalent series resistance [Ω]

    Returns
    -------
    (v_max, v_min) : (N,) highest and lowest excursion from the mean [V]
    v_lf : (N, M) the low-frequency excursion at each angle [V]
    """
    c = np.asarray(c_bus, dtype=float).reshape(-1)[:, None]
    esr = np.asarray(esr, dtype=float).reshape(-1)[:, None]
    i_c = cyc.local_mean("off") - cyc.i_o[:, None]
    dt = (cyc.t_line / cyc.theta.size)[:, None]
    q = np.cumsum(i_c * dt, axis=1) - i_c * dt / 2  # charge at each sample's midpoint
    v_lf = q / c
    v_lf = v_lf - v_lf.mean(axis=1, keepdims=True)
    v_hf = switching_charge(cyc) / c
    up = v_lf + v_hf / 2 + esr * np.maximum(cyc.i_peak - cyc.i_o[:, None], 0.0)
    down = v_lf - v_hf / 2 - esr * cyc.i_o[:, None]
    return up.max(axis=1), down.min(axis=1), v_lf


def hold_up_capacitance(p_out, t_hold, v_start, v_hold):
    """Bulk capacitance that keeps the bus above ``v_hold`` for ``t_hold`` after the line
    drops out at bus voltage ``v_start``: C = 2·P·t/(V_start² − V_hold²) [F]
    (energy balance ½·C·(V_start² − V_hold²) = P·t; common practice)."""
    return 2 * np.asarray(p_out) * t_hold / (np.asarray(v_start) ** 2 - v_hold ** 2)
