"""Forward and two-switch forward with synchronous rectifiers (``forward_sync``).

A MOSFET in the rectifier and/or freewheel position ("t-sr"; refs D1, D2 kept). Lossless
limit (same books, with the buck-like output stage of Erickson & Maksimović §2.2–2.3 and
its dead-time reading of the volt-second balance — from memory): the channels replace
the diodes, so V_o = D·n·V_in, the forward MOSFET blocks V_in·N_s/N_r in the reset
(two-switch V_in·N_s/N_p), the freewheel MOSFET n·V_in in the on-time; each carries the
inductor current in its interval (rms of a trapezoid). With dead time t_d and a body
diode of drop V_F (r = 0), the freewheel body diode carries the inductor current for
2·t_d per period: volt-second balance D·n·V_in = V_o + 2·t_d·f_s·V_F, and its loss
V_F·I_body,avg ≈ 2·V_F·t_d·f_s·I_o.

The ideal relations of the diode rectifier and their sources: test_forward_diode.py.
"""

import numpy as np
import pytest

from builders import write_case
from builders_forward import (N_P, N_S, REL, SYNC, TOPOLOGIES, case, sync_case, turns, values)
from invariants import assert_charge_balance, assert_energy_balance, \
    assert_one_rating_row_per_stress
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import RegulationError
from stresscheck.policy import load_policy


@pytest.mark.parametrize("topology", TOPOLOGIES)
@pytest.mark.parametrize("sync", [SYNC, ("rectifier",), ("freewheel",)],
                         ids=["both", "forward-fet", "freewheel-fet"])
def test_sync_ideal_relations(tmp_path, topology, sync):
    ev = sync_case(tmp_path, topology, sync=sync,
                   dead_time="100 ns" if "freewheel" in sync else None)
    c = ev.corners
    vin, vo, io, fs = (c["input_voltage"], c["output_voltage"], c["output_current"],
                       c["switching_frequency"])
    n_p, n_s, n_r = turns(ev)
    n = n_s / n_p
    d = ev.result.duty
    assert set(ev.result.regime) == {"CCM"}
    np.testing.assert_allclose(d, vo / (n * vin), rtol=REL)
    ripple = (n * vin - vo) * d / fs / ev.stage.inductors[0].l
    a, b = io - ripple / 2, io + ripple / 2
    trap = (a * a + a * b + b * b) / 3
    v1 = "v_peak" if "rectifier" in sync else "v_reverse_peak"
    v2 = "v_peak" if "freewheel" in sync else "v_reverse_peak"
    np.testing.assert_allclose(values(ev, "D1", v1), vin * n_s / n_r, rtol=REL)
    np.testing.assert_allclose(values(ev, "D2", v2), vin * n_s / n_p, rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "i_rms"), np.sqrt(d * trap), rtol=REL)
    np.testing.assert_allclose(values(ev, "D2", "i_rms"), np.sqrt((1 - d) * trap), rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "i_peak"), b, rtol=REL)
    np.testing.assert_allclose(values(ev, "D2", "i_peak"), b, rtol=REL)
    np.testing.assert_allclose(values(ev, "L1", "i_peak"), b, rtol=REL)
    v_switch = vin if topology == TOPOLOGIES[1] else vin * (1 + n_p / n_r)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), v_switch, rtol=REL)


@pytest.mark.parametrize("topology", TOPOLOGIES)
def test_sync_dead_time_body_diode(tmp_path, topology):
    """Lossless but for the body diodes (v_sd = 0.7 V, r = 0): the dead times add
    2·t_d·f_s·V_F to the volt-seconds the on-time must supply, and the freewheel body
    diode dissipates V_F·I_avg ≈ 2·V_F·t_d·f_s·I_o (the current changes by only
    (V_o + V_F)·t_d/L in a dead time, a few mA here: 2e-3)."""
    t_d = 100e-9
    ev = sync_case(tmp_path, topology, dead_time="100 ns", sr_lossless_body=False,
                   sr_v_sd="0.7 V", sr_r_sd="0 ohm")
    # the engine's straight-line body diode: v_f0 = 0.85·v_sd (CONTRACT.md)
    v_f = ev.stage.devices[("freewheel", 0)].v_f0
    np.testing.assert_allclose(v_f, 0.85 * 0.7)
    c = ev.corners
    vin, vo, io, fs = (c["input_voltage"], c["output_voltage"], c["output_current"],
                       c["switching_frequency"])
    n_p, n_s, _ = turns(ev)
    np.testing.assert_allclose(ev.result.duty, (vo + 2 * t_d * fs * v_f) / (n_s / n_p * vin),
                               rtol=REL)
    body = ev.result.body[("freewheel", 0)]
    np.testing.assert_allclose(body.mean(), 2 * t_d * fs * io, rtol=2e-3)
    np.testing.assert_allclose(values(ev, "D2", "p_loss"), 2 * v_f * t_d * fs * io, rtol=2e-3)
    # the forward MOSFET's body diode does not conduct: its drop equals the freewheel
    # body diode's, so the idle interval leaves the transformer unclamped
    assert np.all(ev.result.body[("rectifier", 0)].peak() < 1e-9)


@pytest.mark.parametrize("topology", TOPOLOGIES)
@pytest.mark.parametrize("sync,dead_time,io", [
    (SYNC, "100 ns", {"min": "6 A", "max": "10 A"}),
    (("rectifier",), None, {"min": "6 A", "max": "10 A"}),
    (("freewheel",), "100 ns", {"min": "6 A", "max": "10 A"}),
    (SYNC, "0 ns", {"min": "0.3 A", "max": "10 A"}),
], ids=["both", "forward-fet", "freewheel-fet", "light-load-no-dead-time"])
def test_sync_invariants_with_losses(tmp_path, topology, sync, dead_time, io):
    """Energy and charge balance, one rating row per stress. At 0.3 A (negative inductor
    current at every light-load corner) the residual of the energy balance is the few
    mW of the reset-path drops taken at their mean current, shared with the diode
    model, against ~1.5 W of output (within the 2e-3 of tests/invariants.py)."""
    ev = sync_case(tmp_path, topology, sync=sync, dead_time=dead_time, lossless=False, io=io,
                   c_in="20 uF")
    assert set(ev.result.regime) == {"CCM"}
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    design_checks = run_checks(ev, load_policy("commercial"))
    assert_one_rating_row_per_stress(design_checks, ev)
    for (role, k), body in ev.result.body.items():
        assert (body.min() >= -1e-12).all(), (role, k)


def test_sync_light_load_negative_current(tmp_path):
    """Forced continuous conduction without dead time: at 0.2 A the inductor current
    turns negative at the end of the off-time; the freewheel channel then conducts drain
    -> source (positive in the MOSFET convention) and the duty stays at the CCM value."""
    ev = sync_case(tmp_path, "forward", dead_time="0 ns", lossless=True,
                   io={"min": "0.2 A", "max": "0.2 A"})
    c = ev.corners
    vin, vo = c["input_voltage"], c["output_voltage"]
    assert (ev.result.currents[("inductor", 0)].min() < 0).all()
    np.testing.assert_allclose(ev.result.duty, vo / (N_S / N_P * vin), rtol=REL)
    assert (ev.result.currents[("freewheel", 0)].max() > 0).all()
    assert (ev.result.currents[("rectifier", 0)].max() > 0).all()


def test_sync_light_load_with_dead_time_refused(tmp_path):
    design, parts = case("forward", lossless=False, sync=SYNC, dead_time="100 ns",
                         io={"min": "0.2 A", "max": "10 A"})
    with pytest.raises(RegulationError, match="negative when the freewheel MOSFET turns off"):
        run(load_design(write_case(tmp_path, design, parts)))


def test_sync_forward_fet_with_freewheel_diode_dcm_refused(tmp_path):
    design, parts = case("forward", lossless=False, sync=("rectifier",),
                         io={"min": "0.2 A", "max": "10 A"})
    with pytest.raises(RegulationError, match="freewheel diode is not modelled"):
        run(load_design(write_case(tmp_path, design, parts)))

