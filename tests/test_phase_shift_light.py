"""Light load of the phase-shifted full bridge with diode rectifiers (phase_shift_light):
DCM against the textbook relation, the CCM/DCM boundary on both sides, no load.

Reference: Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., §5.2–5.3
(buck in DCM, M = 2/(1 + √(1 + 4K/D²)), K = 2L/(R·T), boundary K_crit = 1 − D), applied
to each half period (V_g = n·V_in, T = Ts/2, D_half = 2·D). In DCM the outgoing rectifier
carries nothing at the lagging transition, so there is no commutation interval; the
leakage inductance stays in series with the output inductor, L_eff = L + n²·L_lk
(lossless parts, L_m = 1 H: the relation holds to the solver's precision; tolerance
1e-3 relative). With a negligible magnetizing current the lagging leg's body diode
carries next to nothing at its transition: the primary stays open (the incoming body
diode blocks the positive current) until the lagging channel turns on t_d later, so the
textbook duty is the applied interval D − t_d·fs (derived here from the switch states).
"""

import math

import numpy as np
import pytest

from builders_bridge_ext import case, ext_parts, values

N, FS, L_OUT, L_LK, VO, T_D = 0.5, 100e3, 10e-6, 1e-6, 12.0, 100e-9
L_EFF = L_OUT + N * N * L_LK


def _ps(tmp_path, io):
    parts = ext_parts(lossless=True, l_m="1 H", c_in="1 F", l_out="10 uH", l_leak="1 uH")
    return case(tmp_path, "full-bridge", "center-tap", parts=parts, modulation="phase-shift", dead_time="100 ns",
                io={"min": io, "max": "10 A"})


def textbook_duty(v_in, io):
    m = VO / (N * v_in)
    k = 2 * L_EFF / ((VO / io) * (0.5 / FS))
    return math.sqrt(4 * k / ((2 / m - 1) ** 2 - 1)) / 2 + T_D * FS


def test_dcm_duty_peak_and_reverse_voltage(tmp_path):
    ev = _ps(tmp_path, "0.5 A")
    i = np.flatnonzero(ev.corners["output_current"] == 0.5)
    assert set(ev.result.regime[i]) == {"DCM"}
    vin = ev.corners["input_voltage"][i]
    d = ev.result.duty[i]
    assert d == pytest.approx([textbook_duty(v, 0.5) for v in vin], rel=1e-3)
    peak = (N * vin - VO) * (d - T_D * FS) / FS / L_EFF
    assert values(ev, "L1", "i_peak")[i] == pytest.approx(peak, rel=1e-3)
    # during a pulse the idle center-tap rectifier blocks 2·n·v_tx, v_tx the primary
    # voltage less the leakage's share (the one-rectifier relation)
    v_tx = (vin + L_LK * N * VO / L_OUT) / (1 + N * N * L_LK / L_OUT)
    assert values(ev, "D1", "v_reverse_peak")[i] == pytest.approx(2 * N * v_tx, rel=1e-3)


def test_ccm_dcm_boundary_both_sides(tmp_path):
    """Boundary at 60 V (E&M §5.2): I_o = ΔI_L/2 with the CCM duty; 2 % either side."""
    v = 60.0
    d_eff = VO / (2 * N * v)
    i_bound = (N * v - VO) * d_eff / FS / L_EFF / 2
    above = _ps(tmp_path / "a", f"{1.02 * i_bound} A")
    below = _ps(tmp_path / "b", f"{0.98 * i_bound} A")
    ia = np.flatnonzero((above.corners["output_current"] < 5)
                        & (above.corners["input_voltage"] == v))
    ib = np.flatnonzero((below.corners["output_current"] < 5)
                        & (below.corners["input_voltage"] == v))
    assert set(above.result.regime[ia]) == {"CCM"}
    assert set(below.result.regime[ib]) == {"DCM"}
    assert below.result.duty[ib] == pytest.approx(textbook_duty(v, 0.98 * i_bound), rel=1e-3)
    # continuous across the boundary: the duties differ by the 4 % load step's effect only
    assert np.all(np.abs(above.result.duty[ia] / below.result.duty[ib] - 1) < 0.03)


def test_no_load_skips_pulses_and_keeps_voltage_stresses(tmp_path):
    ev = _ps(tmp_path, "0 A")
    i = np.flatnonzero(ev.corners["output_current"] == 0)
    assert set(ev.result.regime[i]) == {"pulse-skipping"}
    assert np.all(ev.result.duty[i] < 1e-4)
    vin = ev.corners["input_voltage"][i]
    # each occasional pulse applies the full on-interval voltage (as in the DCM test)
    v_tx = (vin + L_LK * N * VO / L_OUT) / (1 + N * N * L_LK / L_OUT)
    assert values(ev, "D1", "v_reverse_peak")[i] == pytest.approx(2 * N * v_tx, rel=1e-3)
    assert np.all(values(ev, "Q1", "v_peak")[i] >= vin * (1 - 1e-3))
