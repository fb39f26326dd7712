"""Losses beyond conduction inside the engine: named terms per ref, the terms a sheet
leaves out, gate drive apart, devices sharing a heatsink, the energy balance, the
phase-shifted bridge's zero-voltage decision and a loop that does not settle.

References beside each check; the relations themselves are tested in test_losses.py,
test_magnetics_loss.py, test_thermal_network.py and against ngspice in
test_spice_switching_loss.py.
"""

from pathlib import Path

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from invariants import assert_energy_balance
from stresscheck import engine
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.devices import total_loss
from stresscheck.engine import run
from stresscheck.policy import load_policy

ROOT = Path(__file__).parent.parent
DEMO = ROOT / "stresscheck" / "demo" / "design.toml"


def stress(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s


@pytest.fixture(scope="module")
def demo():
    return run(load_design(DEMO))


def test_demo_reports_every_loss_term(demo):
    # the demo's sheets carry t_rise, t_fall, c_oss, q_g, q_rr of the body diodes, c_j of
    # the rectifiers and core-loss data: every term is there, adds up to the p_loss row,
    # and the model's energy balance still closes with the extra losses drawn from the
    # input (input power = output power + every computed loss, tests/invariants.py)
    q1 = demo.losses["Q1"]
    assert {"conduction", "overlap", "c_oss", "commutation"} <= set(q1)
    assert all((v >= 0).all() for v in q1.values())
    assert {"copper", "core"} <= set(demo.losses["T1"]) and \
        {"copper", "core"} <= set(demo.losses["L1"])
    n = demo.corners.size
    for ref in ("Q1", "D1"):
        np.testing.assert_allclose(total_loss(demo.losses[ref], n),
                                   stress(demo, ref, "p_loss").values, rtol=1e-12)
    heating = demo.corners.steady_mask()  # a surge is too short to heat: no terms there
    assert (demo.p_extra[heating] > 0).all()
    assert (demo.losses["Q1"]["overlap"][~heating] == 0).all()
    assert_energy_balance(demo)


def test_gate_drive_is_a_driver_loss(demo):
    # Q_g·V_gs·f_s (Graovac, Pürschel, Kiep, application note 2006, §4 — from memory):
    # 35 nC · 10 V · 200 kHz = 70 mW, in driver_losses and not in the switch's terms
    assert "gate_drive" not in demo.losses["Q1"]
    np.testing.assert_allclose(demo.driver_losses["Q1"]["gate_drive"], 0.070, rtol=1e-9)


def test_rectifiers_on_a_shared_heatsink(demo):
    # T_s = T_a + R_sa·(P_D1 + P_D2) and T_j = T_s + P·(R_jc + R_cs) (series thermal
    # resistances, common practice) with the demo's 1.0 K/W sink, 0.5 K/W pads and the
    # sheet's R_jc, from the engine's own final losses; to the loop's 1 mK
    d1 = demo.design.by_role("rectifier")[0]
    r_jc = d1.part.thermal["r_th_jc"]
    t_a = demo.corners["ambient_temperature"]
    p1 = stress(demo, "D1", "p_loss").values
    p2 = stress(demo, "D2", "p_loss").values
    t_s = t_a + 1.0 * (p1 + p2)
    steady = demo.corners.steady_mask()
    np.testing.assert_allclose(stress(demo, "D1", "t_j").values[steady],
                               (t_s + p1 * (r_jc + 0.5))[steady], atol=2e-3)


def test_switch_and_diode_on_one_heatsink_couple(tmp_path):
    # a buck's switch and freewheel diode on one 4 K/W sink: each junction sits at the
    # shared sink temperature plus its own rise (common practice), so the diode runs
    # hotter than on a sink of its own
    design = cell_design("buck", ambient="40 degC")
    design["heatsinks"] = [{"id": "hs", "r_th": "4 K/W"}]
    for entry in design["components"][:2]:
        entry.pop("r_th_ca")
        entry.update({"heatsink": "hs", "r_th_cs": "0.5 K/W"})
    ev = run(load_design(write_case(tmp_path, design, cell_parts())))
    pq, pd = (stress(ev, r, "p_loss").values for r in ("Q1", "D1"))
    t_s = 40.0 + 4.0 * (pq + pd)
    np.testing.assert_allclose(stress(ev, "Q1", "t_j").values, t_s + pq * (1.0 + 0.5),
                               atol=2e-3)  # R_jc 1 K/W (builders_buck_boost)
    np.testing.assert_allclose(stress(ev, "D1", "t_j").values, t_s + pd * (1.5 + 0.5),
                               atol=2e-3)  # R_jc 1.5 K/W
    assert (stress(ev, "D1", "t_j").values > 40.0 + pd * 6.0).all()


def test_missing_timing_is_left_out_and_named(tmp_path):
    # the test MOSFET gives no t_rise, t_fall, c_oss or q_g: no silent zero, the terms are
    # absent and the p_loss and t_j rows say which and why
    ev = run(load_design(write_case(tmp_path, cell_design("buck"), cell_parts())))
    assert set(ev.losses["Q1"]) <= {"conduction", "body_diode", "commutation"}
    checks = {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}
    for quantity in ("p_loss", "t_j"):
        note = checks[("Q1", quantity)].note
        assert "no t_rise" in note and "no t_fall" in note and "no c_oss" in note
    assert "Q1" not in ev.driver_losses


def test_phase_shift_states_zero_voltage_per_leg():
    # the phase-shifted bridge: zero-voltage turn-on decided per leg and corner from the
    # energy relation ½·L·I² ≥ 2·E_oss(V_in) (Sabaté et al., APEC 1990 — from memory),
    # stated in the notes; the example's 40 µH leakage does not reach it everywhere, so
    # the switches carry a c_oss term where it is lost
    ev = run(load_design(ROOT / "examples" / "full-bridge-phase-shift" / "design.toml"))
    texts = [n["text"] for n in ev.notes]
    assert any("leading leg" in t for t in texts) and any("lagging leg" in t for t in texts)
    assert "c_oss" in ev.losses["Q3"]


def test_loop_that_does_not_settle_is_not_computed(tmp_path, monkeypatch):
    # one pass of the loop cannot settle a switch that heats: its loss and temperature
    # rows are not computed (NaN, status not-computed), never a pass; the operating point
    # there is not a solution, so the other rows at those corners are not computed
    # either (checks.py)
    monkeypatch.setattr(engine, "THERMAL_MAX_ITER", 1)
    ev = run(load_design(write_case(tmp_path, cell_design("buck"), cell_parts())))
    assert np.isnan(stress(ev, "Q1", "t_j").values).all()
    checks = {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}
    assert checks[("Q1", "t_j")].status == "not-computed"
    assert "did not settle" in checks[("Q1", "t_j")].note
    assert checks[("Q1", "v_peak")].status == "not-computed"


def test_gate_charge_overlap_equals_the_times_it_implies(tmp_path):
    # gate-charge method (Balogh, gate-driver application report 2002/2017, §3;
    # Graovac, Pürschel, Kiep 2006, §3 — from memory): t = (Q_gd + Q_gs/2)/I_G with
    # I_G,on = (V_drive − V_pl)/R and I_G,off = V_pl/R. Worked here by hand for
    # Q_gd 8 nC, Q_gs 6 nC, V_pl 4.5 V, R = 3.3 + 1.7 Ω, V_drive 10 V:
    # Q_sw 11 nC, I_on 1.1 A -> 10 ns, I_off 0.9 A -> 12.22 ns. The same buck with those
    # times on the sheet must give the same overlap loss.
    from stresscheck.errors import InputError

    gate = {"q_gd": "8 nC", "q_gs": "6 nC", "v_plateau": "4.5 V", "r_g": "1.7 ohm"}
    parts = cell_parts()
    parts["t-fet"]["electrical"].update(gate)
    design = cell_design("buck")
    design["converter"].update({"overlap_method": "gate-charge",
                                "gate_resistance": "3.3 ohm", "gate_voltage": "10 V"})
    ev = run(load_design(write_case(tmp_path / "a", design, parts)))
    parts_t = cell_parts()
    parts_t["t-fet"]["electrical"].update({"t_rise": "10 ns", "t_fall": f"{11 / 0.9} ns"})
    ev_t = run(load_design(write_case(tmp_path / "b", cell_design("buck"), parts_t)))
    np.testing.assert_allclose(ev.losses["Q1"]["overlap"], ev_t.losses["Q1"]["overlap"],
                               rtol=1e-9)
    assert (ev.losses["Q1"]["overlap"][ev.corners.steady_mask()] > 0).all()
    assert "gate-charge method: t_rise 10 ns, t_fall 12.2 ns" in stress(ev, "Q1", "t_j").note
    assert "from the sheet's t_rise, t_fall" in stress(ev_t, "Q1", "t_j").note
    # a value missing: the term is left out and named, never a silent zero
    parts["t-fet"]["electrical"].pop("r_g")
    ev_m = run(load_design(write_case(tmp_path / "c", design, parts)))
    assert "overlap" not in ev_m.losses["Q1"]
    assert "gate-charge method, no r_g" in stress(ev_m, "Q1", "t_j").note
    # the method without its resistance, or an unknown method: the key is named
    design["converter"].pop("gate_resistance")
    with pytest.raises(InputError, match="gate_resistance"):
        load_design(write_case(tmp_path / "d", design, parts))
    design["converter"]["overlap_method"] = "charge"
    with pytest.raises(InputError, match="overlap_method"):
        load_design(write_case(tmp_path / "e", design, parts))
