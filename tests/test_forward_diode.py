"""Forward and two-switch forward with diode rectifiers (``forward_diode``): textbook
lossless-limit relations in CCM and DCM, and the shared invariants with losses.

Source for the ideal relations: R. W. Erickson and D. Maksimović, *Fundamentals of Power
Electronics*, 2nd ed., §6.3.3 (forward converter, with n1 : n2 : n3 = N_p : N_r : N_s), and
N. Mohan, T. Undeland and W. Robbins, *Power Electronics*, 3rd ed., §10.4 (forward and
two-switch forward) — from memory. With n = N_s/N_p and the duty ratio D = t_on·f_s:
  V_o = D·V_in·N_s/N_p                                   (CCM)
  reset time t_r = D·Ts·N_r/N_p; D_max = N_p/(N_p + N_r)   (two-switch: 1/2)
  switch voltage V_in·(1 + N_p/N_r)                      (two-switch: V_in)
  reset diode V_in·(1 + N_r/N_p)                         (two-switch clamp diodes: V_in)
  forward diode V_in·N_s/N_r in the reset                (two-switch: V_in·N_s/N_p)
  freewheel diode V_in·N_s/N_p in the on-time
  magnetizing current from zero: I_m,pk = V_in·D·Ts/L_m; B_peak = V_in·D·Ts/(N_p·A_e)
Buck-derived DCM (same book, §5.3, applied with n·V_in as the input — from memory):
  M = V_o/(n·V_in) = 2/(1 + sqrt(1 + 4K/D²)), K = 2L/(R·Ts), R = V_o/I_o,
  freewheel interval D_2 = D·(1 − M)/M.
Triangular ripple, rms = ΔI/(2√3), and trapezoid rms: same book §2.3, §2.4 and
appendix A (from memory).

The lossless limit: every resistance ~0, v_f0 = 0, input capacitor of 1 F (bus ripple
below 1e-5 of V_in). Tolerance 1e-4 relative: the relations are exact there; the margin
covers the residual bus ripple only.

Note on the duty limit: the core resets at −V_in·N_p/N_r, so t_r = D·Ts·N_r/N_p and the
limit is N_p/(N_p + N_r). Its complement N_r/(N_p + N_r) is the shortest off-time
fraction; the two coincide only for N_p = N_r.
"""

import math

import numpy as np
import pytest

from builders import write_case
from builders_forward import (N_P, N_R, N_S, REL, TOPOLOGIES, case, evaluate, turns, values)
from invariants import assert_charge_balance, assert_energy_balance, \
    assert_one_rating_row_per_stress
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.policy import load_policy


@pytest.mark.parametrize("topology", TOPOLOGIES)
def test_ideal_conversion_ratio(tmp_path, topology):
    ev = evaluate(tmp_path, topology)
    c = ev.corners
    n_p, n_s, _ = turns(ev)
    assert set(ev.result.regime) == {"CCM"}
    np.testing.assert_allclose(ev.result.duty,
                               c["output_voltage"] * n_p / (n_s * c["input_voltage"]), rtol=REL)


@pytest.mark.parametrize("topology", TOPOLOGIES)
def test_ideal_voltage_stresses(tmp_path, topology):
    ev = evaluate(tmp_path, topology)
    vin = ev.corners["input_voltage"]
    n_p, n_s, n_r = turns(ev)
    two = topology == "two-switch-forward"
    switches = ("Q1", "Q2") if two else ("Q1",)
    resets = ("D3", "D4") if two else ("D3",)
    # single switch: bus plus the reset voltage reflected by N_p/N_r; two-switch: each
    # switch and each clamp diode spans the bus once
    v_switch = vin if two else vin * (1 + n_p / n_r)
    v_reset = vin if two else vin * (1 + n_r / n_p)
    for ref in switches:
        np.testing.assert_allclose(values(ev, ref, "v_peak"), v_switch, rtol=REL)
    for ref in resets:
        np.testing.assert_allclose(values(ev, ref, "v_reverse_peak"), v_reset, rtol=REL)
    # forward diode in the reset (the primary at −V_in·N_p/N_r, two-switch −V_in),
    # freewheel diode in the on-time
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), vin * n_s / n_r, rtol=REL)
    np.testing.assert_allclose(values(ev, "D2", "v_reverse_peak"), vin * n_s / n_p, rtol=REL)
    if not two:  # the numbers of the test transformer, spelled out
        np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin * (1 + 8 / 6), rtol=REL)
        np.testing.assert_allclose(values(ev, "D3", "v_reverse_peak"), vin * (1 + 6 / 8),
                                   rtol=REL)


@pytest.mark.parametrize("topology", TOPOLOGIES)
def test_ideal_currents(tmp_path, topology):
    ev = evaluate(tmp_path, topology)
    c = ev.corners
    io, vo, fs, vin = (c["output_current"], c["output_voltage"], c["switching_frequency"],
                       c["input_voltage"])
    d = ev.result.duty
    n_p, n_s, n_r = turns(ev)
    n = n_s / n_p
    ripple = (n * vin - vo) * d / fs / ev.stage.inductors[0].l
    i_min, i_max = io - ripple / 2, io + ripple / 2
    np.testing.assert_allclose(values(ev, "L1", "i_peak"), i_max, rtol=REL)
    np.testing.assert_allclose(values(ev, "L1", "i_rms"), np.sqrt(io ** 2 + ripple ** 2 / 12),
                               rtol=REL)
    np.testing.assert_allclose(values(ev, "C1", "i_ripple_rms"), ripple / (2 * math.sqrt(3)),
                               rtol=REL)
    # forward diode conducts in the on-time, freewheel diode in the off-time
    np.testing.assert_allclose(values(ev, "D1", "i_avg"), d * io, rtol=REL)
    np.testing.assert_allclose(values(ev, "D2", "i_avg"), (1 - d) * io, rtol=REL)
    # switch: reflected inductor current plus the magnetizing ramp from zero
    i_m = vin * d / fs / ev.stage.transformer.l_m
    np.testing.assert_allclose(values(ev, "Q1", "i_peak"), n * i_max + i_m, rtol=REL)
    a, b = n * i_min, n * i_max + i_m
    np.testing.assert_allclose(values(ev, "Q1", "i_rms"),
                               np.sqrt(d * (a * a + a * b + b * b) / 3), rtol=REL)
    # reset diode: the magnetizing current reflected to the reset winding, falling to zero
    # in t_r = D·Ts·N_r/N_p; its mean D·I_m/2 returns ½·L_m·I_m²·f_s to the bus at V_in
    np.testing.assert_allclose(values(ev, "D3", "i_peak"), i_m * n_p / n_r, rtol=REL)
    np.testing.assert_allclose(values(ev, "D3", "i_avg"), d * i_m / 2, rtol=REL)
    t_reset = ev.result.grid.dt[:, 1]
    np.testing.assert_allclose(t_reset * fs, d * n_r / n_p, rtol=REL)


@pytest.mark.parametrize("topology", TOPOLOGIES)
def test_ideal_dcm(tmp_path, topology):
    ev = evaluate(tmp_path, topology, io={"min": "0.2 A", "max": "0.3 A"})
    c = ev.corners
    assert set(ev.result.regime) == {"DCM"}
    n_p, n_s, n_r = turns(ev)
    vin, vo, io, fs = (c["input_voltage"], c["output_voltage"], c["output_current"],
                       c["switching_frequency"])
    m = vo / (vin * n_s / n_p)
    k = 2 * ev.stage.inductors[0].l * fs / (vo / io)
    d = m * np.sqrt(k / (1 - m))
    np.testing.assert_allclose(ev.result.duty, d, rtol=REL)
    dt = ev.result.grid.dt * fs[:, None]
    d2 = d * (1 - m) / m
    # the inductor current reaches zero after D_2·Ts; the rest of the period it stays there
    t_r = d * n_r / n_p
    np.testing.assert_allclose(np.maximum(dt[:, 1], dt[:, 1] + dt[:, 2] * (d2 > t_r)), d2,
                               rtol=REL)
    np.testing.assert_allclose(dt[:, 3], 1 - d - np.maximum(d2, t_r), rtol=1e-3, atol=1e-9)
    np.testing.assert_allclose(values(ev, "D2", "i_avg"), io * d2 / (d + d2), rtol=REL)
    np.testing.assert_allclose(values(ev, "L1", "i_peak"), 2 * io / (d + d2), rtol=REL)
    # freewheel diode still blocks n·V_in in the on-time; while both diodes block the
    # cathode node sits at V_o
    np.testing.assert_allclose(values(ev, "D2", "v_reverse_peak"), vin * n_s / n_p, rtol=REL)


def test_dcm_forward_diode_sees_output_voltage(tmp_path):
    """Two-switch, DCM with the reset lasting longer than the freewheel interval: the
    forward diode blocks the reflected reset voltage plus V_o (its cathode floats at the
    output voltage once the inductor current is zero)."""
    ev = evaluate(tmp_path, "two-switch-forward", n_s=6, io={"min": "0.2 A", "max": "0.3 A"},
                  vin={"min": "290 V", "max": "300 V"})
    c = ev.corners
    vin, vo = c["input_voltage"], c["output_voltage"]
    dt = ev.result.grid.dt
    assert set(ev.result.regime) == {"DCM"}
    assert (dt[:, 2] > 0).all()  # segment 2 = reset at zero inductor current
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), vin * 6 / 40 + vo, rtol=REL)


@pytest.mark.parametrize("topology", TOPOLOGIES)
@pytest.mark.parametrize("io", [{"min": "6 A", "max": "10 A"}, {"min": "0.3 A", "max": "10 A"}],
                         ids=["ccm", "with-dcm"])
def test_invariants_with_losses(tmp_path, topology, io):
    design, parts = case(topology, lossless=False, io=io, c_in="20 uF")
    two = topology == "two-switch-forward"
    design["operating"]["input_surge"] = "450 V" if two else "80 V"
    design["operating"]["current_limit"] = "12 A"
    ev = run(load_design(write_case(tmp_path, design, parts)))
    if io["min"] == "0.3 A":
        assert "DCM" in set(ev.result.regime) and "CCM" in set(ev.result.regime)
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    checks = run_checks(ev, load_policy("commercial"))
    assert_one_rating_row_per_stress(checks, ev)


def test_drops_with_losses(tmp_path):
    """Conduction drops raise the duty; the reset diode's drop adds to the switch voltage
    reflected by N_p/N_r (ngspice notes, 'Physics')."""
    ev = evaluate(tmp_path, "forward", lossless=False, c_in="1 F", esr_in="0 ohm")
    c = ev.corners
    vin = c["input_voltage"]
    ideal = c["output_voltage"] * N_P / (N_S * vin)
    assert (ev.result.duty > ideal).all()
    i_r = values(ev, "D3", "i_peak")
    v_reset = 0.8 + (0.1 + 0.02) * i_r  # v_f0 + (r_d + r_reset)·I at the reset's start
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"),
                               vin + N_P / N_R * (vin + v_reset), rtol=1e-5)

