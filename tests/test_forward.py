"""Forward and two-switch forward, the topology and its primary side (``forward``,
``forward_primary``): layout and refused options, duty limit, core reset, flux.
The rectifier models are tested in test_forward_diode.py and test_forward_sync.py.

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

import numpy as np
import pytest

from builders import write_case
from builders_forward import (AREA, N_P, N_R, REL, SYNC, TOPOLOGIES, case, evaluate, load,
                              values)
from stresscheck.design import load_design
from stresscheck.devices import build_devices
from stresscheck.engine import build_stage, run
from stresscheck.errors import InputError, RegulationError
from stresscheck.topologies import forward as fwd_model


@pytest.mark.parametrize("topology", TOPOLOGIES)
def test_flux_from_volt_seconds_unipolar(tmp_path, topology):
    """B_peak = V·t_on/(N_p·A_e) from zero flux (Faraday's law; the forward's flux swings
    one way only, twice the peak of a symmetric swing with the same volt-seconds)."""
    ev = evaluate(tmp_path, topology)
    c = ev.corners
    t_on = ev.result.duty / c["switching_frequency"]
    n_p = ev.stage.transformer.n_p
    np.testing.assert_allclose(values(ev, "T1", "b_peak"),
                               c["input_voltage"] * t_on / (n_p * AREA), rtol=REL)


def test_duty_limit_from_turns(tmp_path):
    ev = evaluate(tmp_path, "forward")
    np.testing.assert_allclose(ev.stage.duty_limit, N_P / (N_P + N_R))
    ev2 = evaluate(tmp_path / "two", "two-switch-forward")
    np.testing.assert_allclose(ev2.stage.duty_limit, 0.5)


def test_duty_above_reset_limit_refused(tmp_path):
    # with N_r = 16 the limit is 8/24 = 0.333; 5 V at 36 V needs D = 5·8/(3·36) = 0.37
    design, parts = case("forward", n_r=16)
    # refused either by the engine's duty limit or by the model's reset check (whichever
    # the engine tests first); both name the limit
    with pytest.raises(RegulationError, match=r"N_p/\(N_p \+ N_r\) = 8/\(8 \+ 16\)"):
        run(load_design(write_case(tmp_path, design, parts)))


def test_reset_check_at_every_corner(tmp_path):
    """The model itself flags the corners where the magnetizing current does not return
    to zero in the off-time (with the drops), independently of the static limit."""
    design, parts = case("forward", lossless=False, n_r=16)
    d = load_design(write_case(tmp_path, design, parts))
    from stresscheck.corners import build_corners
    corners = build_corners(d)
    devices = build_devices(d, corners)
    # every device at 25 degC: the switch's R_DS(on) is its 30 mohm headline value
    t = {dev.key: np.full(corners.size, 25.0) for dev in devices}
    stage = build_stage(d, corners, devices, t)
    np.testing.assert_allclose(stage.devices[("switch", 0)].r_on, 0.03)
    res = fwd_model.evaluate(stage)
    mask, reason = res.invalid[0]
    ts = 1 / corners["switching_frequency"]
    t_r = res.grid.dt[:, 1]  # CCM: segment 1 is the reset (clipped to the off-time)
    assert "does not reset" in reason
    # low line needs D ~ 0.38 > 1/3: no reset; high line D ~ 0.2: resets with room to spare
    vin = corners["input_voltage"]
    assert mask[vin == 36].all() and not mask[vin == 72].any()
    assert (t_r[vin == 72] < (1 - res.duty[vin == 72]) * ts[vin == 72]).all()


def test_forward_needs_reset_turns(tmp_path):
    design, _ = case("forward")
    _, parts = case("two-switch-forward")
    with pytest.raises(InputError, match="no reset_turns"):
        load(tmp_path, design, parts)


def test_two_switch_refuses_reset_winding(tmp_path):
    design, _ = case("two-switch-forward")
    _, parts = case("forward")
    with pytest.raises(InputError, match="has no reset winding"):
        load(tmp_path, design, parts)


@pytest.mark.parametrize("key,value,match", [
    ("rectifier", "center-tap", "has its own rectifier"),
    ("dead_time", "100 ns", "no complementary switches"),
    ("modulation", "phase-shift", "pwm modulation only"),
])
def test_converter_options_refused(tmp_path, key, value, match):
    design, parts = case("forward")
    design["converter"][key] = value
    with pytest.raises(InputError, match=match):
        load(tmp_path, design, parts)


def test_two_switch_needs_two_clamp_diodes(tmp_path):
    design, parts = case("two-switch-forward")
    design["components"][4]["refs"] = ["D3"]
    with pytest.raises(InputError, match="2 'reset' position"):
        load(tmp_path, design, parts)


def test_sync_duty_limit_holds_two_dead_times(tmp_path):
    design, parts = case("forward", sync=SYNC, dead_time="1 us")
    ev = run(load_design(write_case(tmp_path, design, parts)))
    fs = ev.corners["switching_frequency"]
    np.testing.assert_allclose(ev.stage.duty_limit,
                               np.minimum(N_P / (N_P + N_R), 1 - 2 * 1e-6 * fs))
    assert (ev.stage.duty_limit < N_P / (N_P + N_R)).all()


def test_dead_time_refused_with_freewheel_diode(tmp_path):
    design, parts = case("forward", sync=("rectifier",), dead_time="100 ns")
    with pytest.raises(InputError, match="no complementary switches"):
        load(tmp_path, design, parts)

