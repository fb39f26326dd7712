"""Flyback: the analytic engine against ngspice, at low and high line, in continuous (CCM)
and discontinuous (DCM) conduction of the magnetizing current (diode rectifier), and with
a synchronous rectifier MOSFET with dead time (forced continuous conduction; its body
diode carries the secondary current in the dead times).

Method, tolerances and reference files: tests/spice_support.py.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from builders_flyback import flyback_design, flyback_parts
from spice_support import (assert_energy_balance, assert_reference_reproduced, evaluate,
                           kept_results, ngspice, report_worst,  # noqa: F401
                           simulate_corner, simulated_cases)
from stresscheck.spice.elements import R_OFF
from stresscheck.verify import TOL_AVERAGE, TOL_PEAK, compare_at

EXAMPLES = Path(__file__).parent.parent / "examples"

# case -> (family, input voltage, output current)
CASES = {
    "flyback-diode-ccm-12v-lowline": ("12v", "36 V", "2 A"),
    "flyback-diode-ccm-12v-highline": ("12v", "75 V", "2 A"),
    "flyback-diode-dcm-12v-lowline": ("12v", "36 V", "0.3 A"),
    "flyback-diode-dcm-12v-highline": ("12v", "75 V", "0.3 A"),
    "flyback-diode-dcm-5v-lowline": ("5v", "120 V", "2 A"),
    "flyback-diode-dcm-5v-highline": ("5v", "375 V", "2 A"),
}
# synchronous rectifier, 100 ns dead time: case -> (family, input voltage, output current)
SYNC_CASES = {
    "flyback-sync-12v-lowline": ("12v-sync", "36 V", "2 A"),
    "flyback-sync-12v-highline": ("12v-sync", "75 V", "2 A"),
}
ALL_CASES = {**CASES, **SYNC_CASES}
SYNC_DEAD_TIME = "100 ns"


def design_and_parts(family: str, vin: str, io: str):
    """One corner of 36-75 V -> 12 V at 150 kHz (20 : 10, 100 uH; "12v-sync": with the
    synchronous rectifier, body diode v_sd 0.8 V, r_sd 20 mohm, dead time 100 ns), or of
    120-375 V -> 5 V at 65 kHz (56 : 4, 800 uH, 650 V switch)."""
    ambient = "25 degC"
    if family == "12v-sync":
        return (flyback_design(vin=vin, io=io, ambient=ambient, sync=True,
                               dead_time=SYNC_DEAD_TIME),
                flyback_parts(c_in="10 uF", c_out="470 uF", rectifier_kind="mosfet",
                              v_sd="0.8 V", r_sd="20 mohm"))
    if family == "12v":
        return (flyback_design(vin=vin, io=io, ambient=ambient),
                flyback_parts(c_in="10 uF", c_out="470 uF"))
    parts = flyback_parts(n_p=56, n_s=4, l_m="800 uH", core_area="52 mm^2", c_in="2 uF",
                          c_out="470 uF", esr_out="10 mohm")
    parts["t-fet"]["ratings"]["v_ds"] = "650 V"
    parts["t-fet"]["electrical"]["r_ds_on"] = "190 mohm"
    parts["t-xfmr"]["electrical"]["r_primary"] = "900 mohm"
    parts["t-xfmr"]["electrical"]["r_secondary"] = "6 mohm"
    design = flyback_design(vin=vin, io=io, vo="5 V", fs="65 kHz", ambient=ambient)
    design["components"][-1]["refs"] = ["C2", "C3", "C4"]
    return design, parts


def run_case(case: str, folder):
    ev = evaluate(folder, *design_and_parts(*ALL_CASES[case]))
    assert ev.corners.size == 1
    c, sim, kept = simulate_corner(ev, 0, folder, case)
    return ev, c, sim, kept


simulated = simulated_cases(run_case)


@pytest.mark.parametrize("case", list(CASES))
def test_engine_matches_ngspice(simulated, case):
    ev, c, sim, _ = simulated(case)
    regime = "DCM" if "-dcm-" in case else "CCM"
    assert ev.result.regime[0] == regime
    # duty: the regulation loop's 1e-4 on v_out against the model's drops; a duty from
    # the wrong regime would be off by tens of percent
    assert sim.duty == pytest.approx(ev.result.duty[0], rel=2e-3)
    comparisons = compare_at(ev, 0, sim)
    # every stress of every ref that the simulation measures is compared
    assert {cmp.ref for cmp in comparisons} >= {"Q1", "T1", "D1", "C1", "C2", "C3"}
    assert {cmp.quantity for cmp in comparisons} == {
        "v_peak", "i_peak", "i_rms", "v_reverse_peak", "i_avg", "b_peak", "i_ripple_rms"}
    for cmp in comparisons:
        assert cmp.tolerance == (TOL_PEAK if cmp.quantity in ("i_peak", "i_ripple_rms",
                                                              "b_peak") else TOL_AVERAGE)
    bad = report_worst(case, comparisons)
    assert not bad, "\n".join(bad)


def off_resistance_loss(ev, c, r) -> float:
    """Leakage of the simulated switch's off resistance R_OFF, v²/R_OFF [W]: the drain
    sits near the simulated v_peak while the rectifier conducts and at V_in in the idle
    interval (fractions of the period from the engine's grid). At 375 V that is about
    1.5e-3 of the power, more than the energy balance allows, so it must be counted."""
    from stresscheck.topologies.flyback import MASK_IDLE, MASK_OFF
    share = ev.result.grid.fraction()[0]
    v_off = r.positions[("switch", 0)]["v_peak"]
    return (share[MASK_OFF].sum() * v_off ** 2 + share[MASK_IDLE].sum() * c.v_in ** 2) / R_OFF


@pytest.mark.parametrize("case", list(CASES))
def test_simulation_energy_and_charge_balance(simulated, case):
    ev, c, r, _ = simulated(case)
    assert_energy_balance(case, c, r, extra=off_resistance_loss(ev, c, r))
    # charge balance of the output bank: the rectifier's mean current is the load current
    # plus the bank's mean current; the load takes i_out within the 1e-4 regulation, and
    # the slow output mode still moves the bank by a few 1e-4 over the window
    i_cap = r.diagnostics["output-capacitor-0.i_mean"]
    assert r.positions[("rectifier", 0)]["i_avg"] == pytest.approx(c.i_out + i_cap, rel=5e-4)
    assert abs(i_cap) < 2e-3 * c.i_out
    # the switch's body diode never conducts (no leakage, no ringing)
    assert r.diagnostics["switch-0.i_body_rms"] < 1e-6 * r.positions[("switch", 0)]["i_rms"]


@pytest.mark.parametrize("case", list(CASES))
def test_simulated_voltages_textbook(simulated, case):
    """The simulated switch and rectifier voltages against the relations of the lossless
    flyback, V_in + V_o/n and V_o + n·V_in with n = N_s/N_p (Erickson & Maksimović, 2nd
    ed., §6.3.4 — from memory), the switch's with the drops at the start of the off-time
    added to V_o: rectifier v_f0 + r_d·I_s0, secondary R_s·I_s0 and the output ESR step
    ESR·(I_s0 − I_o), I_s0 the simulated peak secondary current. These drops are 4 % of
    the reflected voltage at 5 V. What is left is the ripple of the banks, the
    rectifier's ~3 mV/decade departure from its straight line and, for the rectifier, the
    primary drop at the start of the on-time: 0.5 % on the switch, 1 % on the rectifier."""
    _, c, r, _ = simulated(case)
    n = c.n_s / c.n_p
    (d,) = c.rectifiers
    i_s0 = r.positions[("rectifier", 0)]["i_peak"]
    drops = d.v_f0 + (d.r_d + c.r_secondary) * i_s0 + c.c_out.esr * (i_s0 - c.i_out)
    assert r.positions[("switch", 0)]["v_peak"] == pytest.approx(
        c.v_in + (c.v_out + drops) / n, rel=0.005)
    assert r.positions[("rectifier", 0)]["v_reverse_peak"] == pytest.approx(
        c.v_out + n * c.v_in, rel=0.01)


@pytest.mark.parametrize("case", list(ALL_CASES))
def test_reference_reproduced(simulated, case):
    _, c, r, folder = simulated(case)
    fresh = kept_results(folder, case)
    # same models and simulator: the stresses reproduce to far better than 1e-3
    assert_reference_reproduced(case, fresh["duty"], fresh["positions"])


@pytest.mark.parametrize("case", list(SYNC_CASES))
def test_sync_engine_matches_ngspice(simulated, case):
    """Synchronous rectifier (ref Q2, a MOSFET): every stress within the tolerances of
    stresscheck.verify (2 % voltages, averages, rms; 4 % peaks and capacitor ripple),
    and the body-diode conduction of the dead times, mean and rms, within 2 %."""
    ev, c, sim, _ = simulated(case)
    assert set(ev.result.regime) == {"CCM"}
    assert sim.duty == pytest.approx(ev.result.duty[0], rel=2e-3)
    comparisons = compare_at(ev, 0, sim)
    assert {cmp.ref for cmp in comparisons} >= {"Q1", "Q2", "T1", "C1", "C2", "C3"}
    assert {cmp.quantity for cmp in comparisons} == {
        "v_peak", "i_peak", "i_rms", "b_peak", "i_ripple_rms"}
    assert {cmp.quantity for cmp in comparisons if cmp.ref == "Q2"} == {
        "v_peak", "i_peak", "i_rms"}
    for cmp in comparisons:
        assert cmp.tolerance == (TOL_PEAK if cmp.quantity in ("i_peak", "i_ripple_rms",
                                                              "b_peak") else TOL_AVERAGE)
    body = ev.result.body[("rectifier", 0)]
    dg = sim.diagnostics
    extra = [("Q2", "i_body_avg", float(body.mean()[0]), dg["rectifier-0.i_body_avg"]),
             ("Q2", "i_body_rms", float(body.rms()[0]), dg["rectifier-0.i_body_rms"]),
             ("Q2", "i_channel_rms", float(ev.result.currents[("rectifier", 0)].rms()[0]),
              dg["rectifier-0.i_channel_rms"])]
    rels = [(ref, q, x, y, x / y - 1) for ref, q, x, y in extra]
    worst = max(comparisons, key=lambda x: abs(x.rel))
    print(f"\n{case}: {len(comparisons)} comparisons, worst {worst.ref} {worst.quantity} "
          f"{100 * worst.rel:+.3f} %; " + ", ".join(f"{q} {100 * r:+.3f} %"
                                                     for _, q, _, _, r in rels))
    bad = [f"{x.ref} {x.quantity}: {x.computed:.6g} vs {x.simulated:.6g} "
           f"({100 * x.rel:+.2f} %)" for x in comparisons if not x.ok]
    bad += [f"{ref} {q}: {x:.6g} vs {y:.6g} ({100 * r:+.2f} %)"
            for ref, q, x, y, r in rels if abs(r) > TOL_AVERAGE]
    assert not bad, "\n".join(bad)


def sync_off_resistance_loss(ev, r) -> float:
    """Leakage of the off resistance R_OFF of each simulated switch while it blocks [W]:
    the primary switch over the off-time near its v_peak, the rectifier over the on-time
    near its v_peak."""
    from stresscheck.topologies.flyback import MASK_OFF, MASK_ON
    pos = r.positions
    share = ev.result.grid.fraction()[0]
    return (share[MASK_OFF].sum() * pos[("switch", 0)]["v_peak"] ** 2
            + share[MASK_ON].sum() * pos[("rectifier", 0)]["v_peak"] ** 2) / R_OFF


@pytest.mark.parametrize("case", list(SYNC_CASES))
def test_sync_simulation_energy_balance_and_textbook_voltages(simulated, case):
    """Energy conservation in the simulation (1e-3 of p_in, as for the diode cases), and
    the simulated voltages against the lossless relations V_in + V_o/n (switch) and
    V_o + n·V_in (rectifier drain-source; Erickson & Maksimović, 2nd ed., §6.3.4 — from
    memory), the switch's with the drops at the start of the off-time, where the body
    diode conducts: v_f0,body + (r_d,body + R_s)·I_s0 + ESR·(I_s0 − I_o), I_s0 the
    simulated peak secondary current; 0.5 % on the switch, 1 % on the rectifier (bank
    ripple, the diode fit's ~3 mV/decade, the primary drop), as for the diode cases."""
    ev, c, r, _ = simulated(case)
    assert_energy_balance(case, c, r, extra=sync_off_resistance_loss(ev, r))
    # the primary switch's body diode never conducts (the current stays positive)
    assert r.diagnostics["switch-0.i_body_rms"] < 1e-6 * r.positions[("switch", 0)]["i_rms"]
    assert r.diagnostics["rectifier-0.i_body_avg"] > 0
    n = c.n_s / c.n_p
    body = c.rectifiers[0].body
    i_s0 = r.positions[("rectifier", 0)]["i_peak"]
    drops = (body.v_f0 + (body.r_d + c.r_secondary) * i_s0
             + c.c_out.esr * (i_s0 - c.i_out))
    assert r.positions[("switch", 0)]["v_peak"] == pytest.approx(
        c.v_in + (c.v_out + drops) / n, rel=0.005)
    assert r.positions[("rectifier", 0)]["v_peak"] == pytest.approx(
        c.v_out + n * c.v_in, rel=0.01)


def test_sync_without_dead_time_is_not_simulated(simulated):
    """Zero dead time: the two gates would switch at the same instant; the netlist
    builder refuses it rather than letting ngspice's time step collapse."""
    from dataclasses import replace

    from stresscheck.spice.deck_flyback import check_supported
    _, c, _, _ = simulated("flyback-sync-12v-lowline")
    with pytest.raises(NotImplementedError, match="without dead time"):
        check_supported(replace(c, dead_time=0.0))


def test_dcm_example_verifies(capsys):
    """`stresscheck verify` on the shipped DCM example: every governing corner within the
    tolerances above (exit status 0)."""
    from stresscheck.verify import verify_design
    status = verify_design(EXAMPLES / "flyback-375v-5v" / "design.toml", [], "commercial")
    out = capsys.readouterr().out
    assert status == 0, out
    assert "0 comparison(s) outside tolerance" in out
