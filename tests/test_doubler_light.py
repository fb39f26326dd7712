"""Current doubler with synchronous rectifiers at light load (doubler_light): the
reverse current at a channel's turn-off carried by the coming switch's body diode.

References: the inductor volt-second balance (Erickson & Maksimović, Fundamentals of
Power Electronics, 2nd ed., §2.2.1) applied to each doubler inductor: it charges at
n·V_src − V_o during its on-interval and, when the reverse current lasts the whole dead
time t_d, also during that dead time (the winding already at the coming polarity), so
n·V_src·(D·Ts + t_d) = V_o·Ts; Faraday's law for the flux swing λ = V_src·(D·Ts + t_d)
per half-cycle (B_peak = λ/(2·N_p·A_e)); Balogh, "The current-doubler rectifier",
Unitrode application note U-165 (V_o = n·D·V_src in CCM, from memory). Lossless test
parts (L_m = 1 H, zero drops), so the relations hold to the solver's precision: 1e-4
relative (builders_bridge_ext.REL).
"""

import numpy as np
import pytest

from builders_bridge_ext import REL, case, ext_parts, values
from stresscheck.topologies.doubler_light import F1C, F2C

TOPS = ["full-bridge", "half-bridge"]
T_D, FS, L_OUT = 100e-9, 100e3, 47e-6


def lossless_sync_cd(tmp_path, topology, io):
    n_s = 8 if topology == "half-bridge" else 4  # n = 1 (half-bridge: 2)
    parts = ext_parts(lossless=True, n_p=4, n_s=n_s, l_m="1 H", c_in="1 F", l_out="47 uH")
    return case(tmp_path, topology, "current-doubler", parts=parts, sync=True,
                dead_time="100 ns", io={"min": io, "max": "10 A"})


def _setup(ev, topology):
    c = ev.corners
    n = ev.stage.transformer.n_s / ev.stage.transformer.n_p
    v_src = c["input_voltage"] / (2 if topology == "half-bridge" else 1)
    return c, n, v_src


@pytest.mark.parametrize("topology", TOPS)
def test_reverse_dead_time_volt_second_balance(tmp_path, topology):
    """0.5 A: each inductor swings ±1 A around 0.25 A; at every corner with 0.5 A the
    reverse current lasts the whole dead time: n·V_src·(D·Ts + t_d) = V_o·Ts; the coming
    switch carries the reflected reverse current (negative) in the dead time; the
    flux swing holds the dead time's volt-seconds too."""
    ev = lossless_sync_cd(tmp_path, topology, "0.5 A")
    c, n, v_src = _setup(ev, topology)
    i = np.flatnonzero(c["output_current"] == 0.5)
    d, vo, ts = ev.result.duty[i], c["output_voltage"][i], 1 / c["switching_frequency"][i]
    np.testing.assert_allclose(n * v_src[i] * (d * ts + T_D), vo * ts, rtol=REL)
    assert set(ev.result.regime[i]) == {"forced-CCM"}
    for k, seg in ((0, F2C), (1, F1C)):
        sw = ev.result.currents[("switch", k)]
        assert np.all(sw.a[i, seg] < 0) and np.all(sw.b[i, seg] < 0)
        # the inductor rises through the dead time at (n·V_src − V_o)/L from its valley
        ind = ev.result.currents[("inductor", k)]
        np.testing.assert_allclose(ind.b[i, seg] - ind.a[i, seg],
                                   (n * v_src[i] - vo) * T_D / L_OUT, rtol=REL)
    lam = v_src[i] * (d * ts + T_D)
    xf = ev.stage.transformer
    np.testing.assert_allclose(ev.result.b_peak[i], lam / (2 * xf.n_p * xf.core_area[i]
                                                          if np.ndim(xf.core_area) else
                                                          2 * xf.n_p * xf.core_area),
                               rtol=REL)
    # every stress computed at the light-load corners
    for ref in ("Q1", "Q2", "SR1", "SR2", "L1", "L2"):
        for q in ("i_rms", "i_peak"):
            assert np.all(np.isfinite(values(ev, ref, q)[i])), (ref, q)


@pytest.mark.parametrize("topology", TOPS)
def test_boundary_both_sides(tmp_path, topology):
    """Above the load where each inductor's valley reaches zero (I_o/2 = ΔI_L/2 at high
    line, ΔI_L = V_o·(1 − D)·Ts/L, D = V_o/(n·V_src)) the dead-time relations leave the
    CCM solution untouched (duty exactly Balogh's V_o/(n·V_src), no reverse current in a
    switch); just below, the body diode's current stops within the dead time and the
    duty falls below it by less than t_d/Ts (continuous across the boundary)."""
    probe = lossless_sync_cd(tmp_path / "p", topology, "1 A")
    c, n, v_src = _setup(probe, topology)
    hi = np.flatnonzero((c["output_current"] == 1.0) & (v_src == v_src.max()))
    vo, ts = c["output_voltage"][hi][0], 1 / c["switching_frequency"][hi][0]
    d_ccm = vo / (n * v_src[hi][0])
    i_bound = vo * (1 - d_ccm) * ts / L_OUT  # I_o at which I_o/2 = ΔI_L/2
    above = lossless_sync_cd(tmp_path / "a", topology, f"{1.02 * i_bound} A")
    below = lossless_sync_cd(tmp_path / "b", topology, f"{0.98 * i_bound} A")
    for ev, sign in ((above, 1), (below, -1)):
        c, n, v_src = _setup(ev, topology)
        j = np.flatnonzero((c["output_current"] < 5) & (v_src == v_src.max()))
        d = ev.result.duty[j]
        if sign > 0:
            np.testing.assert_allclose(d, d_ccm, rtol=1e-6)  # 1e-9 ohm parts
            for k, seg in ((0, F2C), (1, F1C)):
                assert np.all(ev.result.currents[("switch", k)].a[j, seg] == 0)
        else:
            assert np.all(d < d_ccm) and np.all(d > d_ccm - T_D * FS)
