"""Buck converter (``buck`` on the shared ``switching_cell``): textbook relations in
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


# -- buck ----------------------------------------------------------------------------------

def test_buck_regimes_and_conversion_ratio(tmp_path):
    ev = evaluate(tmp_path, "buck")
    vin, vo, io, fs, l = columns(ev)
    m = vo / vin
    k = k_factor(ev)
    d_ccm = m
    d_dcm = m * np.sqrt(k / (1 - m))  # M = 2/(1 + √(1 + 4K/D²)) solved for D
    dcm = k < 1 - d_ccm  # boundary K_crit = 1 − D
    assert dcm.any() and (~dcm).any()
    np.testing.assert_array_equal(ev.result.regime == "DCM", dcm)
    np.testing.assert_allclose(ev.result.duty, np.where(dcm, d_dcm, d_ccm), rtol=REL)
    # and the textbook form itself at the DCM corners
    d = ev.result.duty
    np.testing.assert_allclose((vo / vin)[dcm], (2 / (1 + np.sqrt(1 + 4 * k / d ** 2)))[dcm],
                               rtol=REL)


def test_buck_ccm_currents_and_voltages(tmp_path):
    ev = evaluate(tmp_path, "buck")
    vin, vo, io, fs, l = columns(ev)
    ccm = ev.result.regime == "CCM"
    d = vo / vin
    ripple = (vin - vo) * d / (fs * l)
    i_min, i_max = io - ripple / 2, io + ripple / 2
    for ref, q, expected in [
            ("L1", "i_peak", i_max), ("L1", "i_rms", np.sqrt(io ** 2 + ripple ** 2 / 12)),
            ("Q1", "i_peak", i_max),
            ("Q1", "i_rms", np.sqrt(d * (i_min ** 2 + i_min * i_max + i_max ** 2) / 3)),
            ("D1", "i_avg", (1 - d) * io),
            ("D1", "i_rms", np.sqrt((1 - d) * (i_min ** 2 + i_min * i_max + i_max ** 2) / 3)),
            ("C2", "i_ripple_rms", ripple / (2 * math.sqrt(3)))]:
        np.testing.assert_allclose(values(ev, ref, q)[ccm], expected[ccm], rtol=REL,
                                   err_msg=f"{ref} {q}")
    # both semiconductors block the input voltage, at every corner (DCM included)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin, rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), vin, rtol=REL)
    # the source supplies D·I_o; the input capacitor carries the rest of the switch current
    i_sw_rms = values(ev, "Q1", "i_rms")
    np.testing.assert_allclose(values(ev, "C1", "i_ripple_rms")[ccm],
                               np.sqrt(i_sw_rms ** 2 - (d * io) ** 2)[ccm], rtol=REL)


def test_buck_dcm_currents(tmp_path):
    ev = evaluate(tmp_path, "buck")
    vin, vo, io, fs, l = columns(ev)
    dcm = ev.result.regime == "DCM"
    d = ev.result.duty
    i_pk = (vin - vo) * d / (fs * l)  # rises from zero during the on-time
    d2 = d * (vin - vo) / vo  # falls back to zero (volt-second balance)
    np.testing.assert_allclose(values(ev, "L1", "i_peak")[dcm], i_pk[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "i_avg")[dcm], (i_pk * d2 / 2)[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "L1", "i_rms")[dcm],
                               (i_pk * np.sqrt((d + d2) / 3))[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "i_rms")[dcm], (i_pk * np.sqrt(d / 3))[dcm],
                               rtol=REL)
    assert np.all(ev.result.i_l_start[dcm] == 0)


def test_buck_output_ripple(tmp_path):
    """ΔV_pp = ΔI_pp·Ts/(8C) with ESR = 0 (E&M §2.5): at D = 1/2 the capacitor voltage
    is symmetric, so its peak is V_o + ΔV_pp/2 (24 V in, 12 V out)."""
    parts = cell_parts(lossless=True, c_in="1 F", c_out="1000 uF")
    ev = evaluate(tmp_path, "buck", parts=parts, vin="24 V", io={"min": "4 A", "max": "5 A"})
    vin, vo, io, fs, l = columns(ev)
    ripple = (vin - vo) * 0.5 / (fs * l)
    dv = ripple / (8 * fs * 1000e-6)
    # the model keeps the ripple in the inductor voltage, which bends the current by
    # about ΔV_pp/(V_in − V_o) = 8e-5 here (the textbook relation neglects it): 2e-4
    np.testing.assert_allclose(values(ev, "C2", "v_peak") - vo, dv / 2, rtol=2e-4)


def test_buck_synchronous_forced_continuous(tmp_path):
    """No dead time: V_o = D·V_in at every load (CCM relations hold with i_L < 0)."""
    ev = evaluate(tmp_path, "buck", sync=True, dead_time="0 s")
    vin, vo, io, fs, l = columns(ev)
    d = vo / vin
    assert np.all(ev.result.regime == "CCM")
    np.testing.assert_allclose(ev.result.duty, d, rtol=REL)
    ripple = (vin - vo) * d / (fs * l)
    i_min, i_max = io - ripple / 2, io + ripple / 2
    light = i_min < 0
    assert light.any()
    np.testing.assert_allclose(ev.result.i_l_start, i_min, rtol=REL)
    # low side: channel carries −i_L over (1 − D); its peak magnitude is the larger end
    np.testing.assert_allclose(values(ev, "Q2", "i_peak"),
                               np.maximum(np.abs(i_min), i_max), rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "i_rms"),
                               np.sqrt((1 - d) * (i_min ** 2 + i_min * i_max + i_max ** 2) / 3),
                               rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"), vin, rtol=REL)


def test_buck_dead_time(tmp_path):
    """Volt-second balance (E&M §2.2) over the dead times: with i_L > 0 throughout, the
    low side's body diode holds the switch node at −V_F in both dead times,
    D = (V_o + 2·t_d·fs·V_F)/V_in; with i_L < 0 at the end of the low-side interval
    (light load), the second dead time returns the current through the high side's body
    diode, the node sits at V_in + V_F, and D = V_o/V_in − t_d·fs. The high side blocks
    V_in + V_F; at light load the low side does too."""
    ev = evaluate(tmp_path, "buck", sync=True, dead_time="100 ns", parts=dead_time_parts())
    vin, vo, io, fs, l = columns(ev)
    heavy = ev.result.i_l_start > 0
    assert heavy.any() and (~heavy).any()
    expected = np.where(heavy, (vo + 2 * T_DEAD * fs * V_BODY) / vin, vo / vin - T_DEAD * fs)
    np.testing.assert_allclose(ev.result.duty, expected, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin + V_BODY, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"),
                               np.where(heavy, vin, vin + V_BODY), rtol=REL)
    # body-diode charge: about I·t_d per dead time at the current of that edge
    ripple = (vin - vo) * ev.result.duty / (fs * l)
    body = ev.result.body[("freewheel", 0)].mean()
    i_max, i_min = io + ripple / 2, io - ripple / 2
    expected_body = np.where(heavy, T_DEAD * fs * (i_max + i_min), T_DEAD * fs * i_max)
    np.testing.assert_allclose(body, expected_body, rtol=2e-2)  # ramp within t_d: ~1 %
