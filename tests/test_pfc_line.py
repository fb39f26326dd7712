"""Line-cycle model of the PFC boost (stresscheck.pfc_line) against outside references.

References:
* CCM rms relations with negligible switching ripple, derived from the unity-power-factor
  waveforms (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., ch. 18 and
  the PWM-rectifier chapter — from memory; the same closed forms are printed in
  semiconductor makers' CCM PFC design application notes, from memory):
    I_sw,rms  = I_rms·sqrt(1 − 8√2·V_rms/(3π·V_bus))
    I_d,rms   = I_rms·sqrt(8√2·V_rms/(3π·V_bus)),   I_d,avg = I_o
    I_C,rms   = sqrt(I_d,rms² − I_o²)
  (they follow from mean(sin²θ) = 1/2 and mean(|sin θ|³) = 4/(3π)).
* Bus ripple ΔV_pp = I_o/(2π·f_line·C) (low-frequency capacitor current −I_o·cos 2θ;
  common practice).
* An independent time-stepping integration of the inductor current over switching periods
  (explicit Euler, 2,000 steps per period) with the model's on-time at each angle: its
  local average must equal the reference I_pk·|sin θ| in CCM and in DCM.
"""

from __future__ import annotations

import numpy as np
import pytest

from stresscheck.pfc_line import bus_ripple, hold_up_capacitance, line_angles, solve_line_cycle


def _solve(v_rms, l, i_o=0.75, v_bus=400.0, fs=100e3, f_line=50.0, m=96, **drops):
    n = len(v_rms)
    z = np.zeros(n)
    kw = {k: drops.get(k, z) for k in ("r_on", "dcr", "vf_boost", "rd_boost", "vf_bridge",
                                       "rd_bridge")}
    return solve_line_cycle(v_rms, np.full(n, f_line), np.full(n, fs), np.full(n, v_bus),
                            np.full(n, i_o), np.full(n, l), m=m, **kw)


def test_angles_include_both_crests():
    theta = line_angles(96)
    assert np.isclose(theta, np.pi / 2).any() and np.isclose(theta, 3 * np.pi / 2).any()
    assert np.allclose(np.diff(theta), 2 * np.pi / 96)


@pytest.mark.parametrize("v_rms", [90.0, 115.0, 230.0, 264.0])
def test_ccm_rms_relations_with_negligible_ripple(v_rms):
    v_bus, i_o = 400.0, 0.75
    cyc = _solve([v_rms], l=1.0, m=384)  # 1 H: ripple negligible, CCM everywhere
    assert not cyc.dcm.any()
    i_rms = v_bus * i_o / v_rms  # unity power factor, lossless
    k = 8 * np.sqrt(2) * v_rms / (3 * np.pi * v_bus)
    sw = np.sqrt(cyc.local_mean_square("on").mean())
    d_rms = np.sqrt(cyc.local_mean_square("off").mean())
    d_avg = cyc.local_mean("off").mean()
    # 0.2 %: the midpoint rule over 384 angles integrates sin² and |sin|³ to ~1e-5; the
    # remaining ripple of a 1 H inductor adds ~1e-6
    assert sw == pytest.approx(i_rms * np.sqrt(1 - k), rel=2e-3)
    assert d_rms == pytest.approx(i_rms * np.sqrt(k), rel=2e-3)
    assert d_avg == pytest.approx(i_o, rel=1e-9)  # charge balance is solved exactly
    assert np.sqrt(d_rms ** 2 - i_o ** 2) == pytest.approx(
        np.sqrt(i_rms ** 2 * k - i_o ** 2), rel=3e-3)
    assert cyc.p_line[0] == pytest.approx(v_bus * i_o, rel=1e-6)


def test_bus_ripple_against_closed_form():
    i_o, f_line, c = 0.75, 50.0, 220e-6
    cyc = _solve([230.0], l=1.0, m=384, i_o=i_o, f_line=f_line)
    v_max, v_min, _ = bus_ripple(cyc, [c])
    ref = i_o / (2 * np.pi * f_line * c)
    # 1 %: the switching-ripple term I_o·t_on/C adds ~0.01 V to 10.85 V, and the midpoint
    # integration of the sampled charge over 384 angles ~0.1 %
    assert (v_max - v_min)[0] == pytest.approx(ref, rel=1e-2)


def _time_stepped_average(v_on, v_off, t_on, ts, l, i0, periods=40, steps=2000):
    """Inductor current of a boost cell stepped in time; mean of the last period."""
    i, dt = i0, ts / steps
    for _ in range(periods):
        acc = 0.0
        for k in range(steps):
            t = (k + 0.5) * dt
            di = (v_on if t < t_on else -v_off) / l * dt
            i = max(i + di, 0.0)  # the boost diode blocks a reverse current
            acc += i
    return acc / steps


@pytest.mark.parametrize("v_rms, angle_index", [(230.0, 24), (230.0, 3), (90.0, 10)])
def test_local_average_follows_reference_by_time_stepping(v_rms, angle_index):
    l, fs, v_bus = 500e-6, 100e3, 400.0
    cyc = _solve([v_rms], l=l, fs=fs, v_bus=v_bus)
    j = angle_index
    v_in = cyc.v_in[0, j]
    i_ref = cyc.i_avg[0, j]
    avg = _time_stepped_average(v_in, v_bus - v_in, cyc.t_on[0, j], 1 / fs, l,
                                cyc.i_start[0, j], periods=3)
    # 0.5 %: Euler steps of Ts/2000 resolve the triangle to ~1e-3 of its height
    assert avg == pytest.approx(i_ref, rel=5e-3)
    # the regime decided by the model is the one the stepped current shows
    assert bool(cyc.dcm[0, j]) == (cyc.i_start[0, j] == 0.0)


def test_high_line_is_dcm_near_zero_crossings_only():
    cyc = _solve([264.0], l=300e-6, i_o=0.4)
    s = np.abs(np.sin(cyc.theta))
    assert cyc.dcm[0][s < 0.2].all() and not cyc.dcm[0][s > 0.95].any()


def test_losses_raise_line_power_and_keep_charge_balance():
    drops = dict(r_on=np.array([0.2]), dcr=np.array([0.1]), vf_boost=np.array([0.8]),
                 rd_boost=np.array([0.02]), vf_bridge=np.array([0.8]),
                 rd_bridge=np.array([0.02]))
    lossless = _solve([90.0], l=500e-6)
    lossy = _solve([90.0], l=500e-6, **drops)
    assert lossy.local_mean("off").mean() == pytest.approx(0.75, rel=1e-9)
    loss = lossy.p_line[0] - 300.0
    # the conduction losses estimated from the same currents, as a cross-check (5 %)
    ms_all = lossy.local_mean_square("all").mean()
    est = (0.2 * lossy.local_mean_square("on").mean() + 0.1 * ms_all
           + 0.8 * 0.75 + 0.02 * lossy.local_mean_square("off").mean()
           + 2 * (0.8 * lossy.local_mean("all").mean() + 0.02 * ms_all))
    assert loss == pytest.approx(est, rel=5e-2)
    assert lossless.p_line[0] == pytest.approx(300.0, rel=1e-6)


def test_hold_up_capacitance_energy_balance():
    # 300 W for 20 ms from 380 V down to 300 V: C = 2·300·0.02/(380² − 300²) = 220.6 µF
    assert hold_up_capacitance(300.0, 20e-3, 380.0, 300.0) == pytest.approx(
        2 * 300 * 0.02 / (380 ** 2 - 300 ** 2))


@pytest.mark.parametrize("v_rms, angle_index", [(90.0, 24), (230.0, 24), (230.0, 3)])
def test_switching_charge_by_numerical_integration(v_rms, angle_index):
    """Charge swing of the bulk capacitor in one switching period (CCM at the crest,
    DCM near the zero crossing) against the integral of the positive part of
    i_D − mean(i_D), sampled at 20,000 points (equal positive and negative areas)."""
    from stresscheck.pfc_line import switching_charge
    l, fs, v_bus = 500e-6, 100e3, 400.0
    cyc = _solve([v_rms], l=l, fs=fs, v_bus=v_bus)
    j, ts = angle_index, 1 / fs
    t = (np.arange(20000) + 0.5) / 20000 * ts
    t_on, t_off = cyc.t_on[0, j], cyc.t_off[0, j]
    slope = (v_bus - cyc.v_in[0, j]) / l
    i_d = np.where((t >= t_on) & (t < t_on + t_off),
                   np.maximum(cyc.i_peak[0, j] - slope * (t - t_on), 0.0), 0.0)
    dev = i_d - i_d.mean()
    q = np.sum(np.maximum(dev, 0.0)) * ts / t.size
    # 0.5 %: midpoint sampling of the on/off edges at Ts/20000
    assert switching_charge(cyc)[0, j] == pytest.approx(q, rel=5e-3)
