"""Boost converter (``boost`` on the shared ``switching_cell``): textbook relations in
the lossless limit, regimes and the dead-time relations.

Source of the ideal relations: R. W. Erickson and D. Maksimović, *Fundamentals of Power
Electronics*, 2nd ed. (from memory):
  ch. 2 (§2.2–2.5), CCM steady state by volt-second and charge balance:
    buck   V_o = D·V_in,  ΔI_pp = (V_in − V_o)·D·Ts/L,  output ripple ΔV_pp = ΔI_pp·Ts/(8C)
    boost  V_o = V_in/(1 − D),  I_L = I_o/(1 − D),  ΔI_pp = V_in·D·Ts/L,
           output ripple ΔV_pp = I_o·D·Ts/C
    switch and diode block V_in (buck) or V_o (boost); triangular ripple has rms
    ΔI_pp/(2·√3), a trapezoid [I_1, I_2] over a fraction f has rms √(f·(I_1² + I_1·I_2 +
    I_2²)/3) (appendix A).
  ch. 5 (§5.1–5.3, Table 5.2), discontinuous conduction, K = 2L/(R·Ts), R = V_o/I_o:
    buck   M = 2/(1 + √(1 + 4K/D²)), DCM where K < 1 − D
    boost  M = (1 + √(1 + 4D²/K))/2, DCM where K < D·(1 − D)²
Lossless limit: R_DS(on) = 1 nΩ, every other resistance and drop zero, capacitors of 1 F
(ripple below 1e-6 of the voltages). Tolerance 1e-6 relative where only the 1 nΩ and the
residual ripple differ from the ideal; the capacitor-ripple tests use finite C.
"""

import math

import numpy as np

from builders_buck_boost import (REL, T_DEAD, V_BODY, cell_parts, columns, dead_time_parts,
                                 evaluate, k_factor, values)


# -- boost ---------------------------------------------------------------------------------

def test_boost_regimes_and_conversion_ratio(tmp_path):
    ev = evaluate(tmp_path, "boost")
    vin, vo, io, fs, l = columns(ev)
    m = vo / vin
    k = k_factor(ev)
    d_ccm = 1 - 1 / m
    d_dcm = np.sqrt(k * m * (m - 1))  # M = (1 + √(1 + 4D²/K))/2 solved for D
    dcm = k < d_ccm * (1 - d_ccm) ** 2  # boundary K_crit = D·(1 − D)²
    assert dcm.any() and (~dcm).any()
    np.testing.assert_array_equal(ev.result.regime == "DCM", dcm)
    np.testing.assert_allclose(ev.result.duty, np.where(dcm, d_dcm, d_ccm), rtol=REL)
    d = ev.result.duty
    np.testing.assert_allclose(m[dcm], ((1 + np.sqrt(1 + 4 * d ** 2 / k)) / 2)[dcm], rtol=REL)


def test_boost_ccm_currents_and_voltages(tmp_path):
    ev = evaluate(tmp_path, "boost")
    vin, vo, io, fs, l = columns(ev)
    ccm = ev.result.regime == "CCM"
    d = 1 - vin / vo
    i_l = io / (1 - d)
    ripple = vin * d / (fs * l)
    i_min, i_max = i_l - ripple / 2, i_l + ripple / 2
    tri = (i_min ** 2 + i_min * i_max + i_max ** 2) / 3
    for ref, q, expected in [
            ("L1", "i_peak", i_max), ("L1", "i_rms", np.sqrt(i_l ** 2 + ripple ** 2 / 12)),
            ("Q1", "i_peak", i_max), ("Q1", "i_rms", np.sqrt(d * tri)),
            ("D1", "i_avg", io), ("D1", "i_peak", i_max), ("D1", "i_rms", np.sqrt((1 - d) * tri)),
            # output capacitor: diode current less the load, rms² = I_D,rms² − I_o²
            ("C2", "i_ripple_rms", np.sqrt((1 - d) * tri - io ** 2)),
            ("C1", "i_ripple_rms", ripple / (2 * math.sqrt(3)))]:
        np.testing.assert_allclose(values(ev, ref, q)[ccm], expected[ccm], rtol=REL,
                                   err_msg=f"{ref} {q}")
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vo, rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), vo, rtol=REL)


def test_boost_dcm_currents(tmp_path):
    ev = evaluate(tmp_path, "boost")
    vin, vo, io, fs, l = columns(ev)
    dcm = ev.result.regime == "DCM"
    d = ev.result.duty
    i_pk = vin * d / (fs * l)
    d2 = d * vin / (vo - vin)
    np.testing.assert_allclose(values(ev, "L1", "i_peak")[dcm], i_pk[dcm], rtol=REL)
    # charge balance: the diode's triangle carries the load current
    np.testing.assert_allclose(values(ev, "D1", "i_avg")[dcm], (i_pk * d2 / 2)[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "i_avg")[dcm], io[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "i_rms")[dcm], (i_pk * np.sqrt(d / 3))[dcm],
                               rtol=REL)


def test_boost_output_ripple(tmp_path):
    """ΔV_pp = I_o·D·Ts/C (E&M §2.3): the capacitor alone feeds the load in the
    on-interval and the diode current stays above I_o in the off-interval."""
    from stresscheck.waveforms import capacitor_voltage_samples
    parts = cell_parts(lossless=True, c_in="1 F", c_out="200 uF", l="47 uH")
    ev = evaluate(tmp_path, "boost", parts=parts, io={"min": "1.5 A", "max": "2 A"})
    vin, vo, io, fs, l = columns(ev)
    d = ev.result.duty
    assert np.all(ev.result.i_l_start > io)  # the diode current stays above I_o
    v = capacitor_voltage_samples(ev.result.currents[("output-capacitor", 0)], 200e-6, 0.0, vo)
    # the ripple (< 1e-3 of V_o) bends the inductor current slightly: 1e-4
    np.testing.assert_allclose(np.ptp(v, axis=(1, 2)), io * d / (fs * 200e-6), rtol=1e-4)
    np.testing.assert_allclose(values(ev, "C2", "v_peak"), v.max(axis=(1, 2)), rtol=1e-12)


def test_boost_synchronous_forced_continuous(tmp_path):
    ev = evaluate(tmp_path, "boost", sync=True, dead_time="0 s")
    vin, vo, io, fs, l = columns(ev)
    d = 1 - vin / vo
    assert np.all(ev.result.regime == "CCM")
    np.testing.assert_allclose(ev.result.duty, d, rtol=REL)
    ripple = vin * d / (fs * l)
    i_min = io / (1 - d) - ripple / 2
    assert (i_min < 0).any()
    np.testing.assert_allclose(ev.result.i_l_start, i_min, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"), vo, rtol=REL)


def test_boost_dead_time(tmp_path):
    """Volt-second balance over the dead times: with i_L > 0 throughout, the rectifier's
    body diode holds the switch node at V_o + V_F in both dead times,
    D = 1 − (V_in − 2·t_d·fs·V_F)/V_o; with i_L < 0 at the end of the rectifier interval,
    the low side's body diode holds it at −V_F in the second, D = 1 − V_in/V_o − t_d·fs.
    The low side blocks V_o + V_F; at light load the rectifier does too."""
    ev = evaluate(tmp_path, "boost", sync=True, dead_time="100 ns", parts=dead_time_parts())
    vin, vo, io, fs, l = columns(ev)
    heavy = ev.result.i_l_start > 0
    assert heavy.any() and (~heavy).any()
    expected = np.where(heavy, 1 - (vin - 2 * T_DEAD * fs * V_BODY) / vo,
                        1 - vin / vo - T_DEAD * fs)
    np.testing.assert_allclose(ev.result.duty, expected, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vo + V_BODY, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"),
                               np.where(heavy, vo, vo + V_BODY), rtol=REL)
