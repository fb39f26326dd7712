"""Forward and two-switch forward: the analytic engine against ngspice, at low and high
line, in CCM and in DCM of the output inductor (diode rectifiers), and with synchronous
rectifiers (MOSFETs in the rectifier and freewheel roles, 100 ns dead time; CCM).

Method, tolerances and reference files: tests/spice_support.py.
"""

from __future__ import annotations

import pytest

from builders_forward import forward_design, forward_parts
from spice_support import (assert_energy_balance, assert_reference_reproduced,
                           corner_index, evaluate, kept_results, ngspice,  # noqa: F401
                           report_worst, simulate_corner, simulated_cases)
from stresscheck.verify import TOL_AVERAGE, TOL_PEAK, compare_at

AMBIENT = {"min": "25 degC", "max": "25 degC"}
# case -> (topology, output current, line: "low" | "high")
CASES = {
    "forward-diode-ccm-5v-lowline": ("forward", "10 A", "low"),
    "forward-diode-ccm-5v-highline": ("forward", "10 A", "high"),
    "forward-diode-dcm-5v-lowline": ("forward", "0.5 A", "low"),
    "forward-diode-dcm-5v-highline": ("forward", "0.5 A", "high"),
    "2sw-forward-diode-ccm-24v-lowline": ("two-switch-forward", "8 A", "low"),
    "2sw-forward-diode-ccm-24v-highline": ("two-switch-forward", "8 A", "high"),
    "2sw-forward-diode-dcm-24v-highline": ("two-switch-forward", "1 A", "high"),
}
# synchronous rectifiers (MOSFETs in the rectifier and freewheel positions, 100 ns dead
# time: the freewheel body diode conducts around each of its transitions), full load
SYNC_CASES = {
    "forward-sync-deadtime-5v-lowline": ("forward", "10 A", "low"),
    "forward-sync-deadtime-5v-highline": ("forward", "10 A", "high"),
    "forward-sync-2sw-deadtime-24v-lowline": ("two-switch-forward", "8 A", "low"),
    "forward-sync-2sw-deadtime-24v-highline": ("two-switch-forward", "8 A", "high"),
    "forward-sync-negative-5v-highline": ("forward", "0.7 A", "high"),
}
# Light load without dead time: forced continuous conduction with the inductor current
# negative at the end of each off-time. The output capacitor's ESR is raised to 100 mΩ
# here: at 0.7 A the load barely damps the output L-C (Q ~ 50 with 5 mΩ), whose ringing
# (period ~ 100 switching periods, the length of one simulation run) the steady-state
# search of stresscheck.spice.simulate cannot tell from a settled state.
SYNC_OPTIONS = {"forward-sync-negative-5v-highline": {"dead_time": "0 ns",
                                                      "esr_out": "100 mohm"}}
ALL_CASES = {**CASES, **SYNC_CASES}
DEAD_TIME = "100 ns"


def design_and_parts(topology: str, io: str, sync: bool = False, dead_time: str = DEAD_TIME,
                     esr_out: str = "5 mohm"):
    """36-72 V -> 5 V at 250 kHz (N_p : N_s : N_r = 8 : 3 : 6), or 300-400 V -> 24 V at
    120 kHz (40 : 8, clamp diodes); ``sync``: MOSFETs (4 mΩ, body diode 0.8 V) in the
    rectifier and freewheel roles with DEAD_TIME."""
    kw = dict(sync=("rectifier", "freewheel"), dead_time=dead_time) if sync else {}
    if topology == "forward":
        design = forward_design(topology, vin={"min": "36 V", "max": "72 V"},
                                io={"min": io, "max": io}, ambient=AMBIENT, **kw)
        parts = forward_parts(c_in="10 uF", c_out="470 uF", esr_out=esr_out)
    else:
        design = forward_design(topology, vin={"min": "300 V", "max": "400 V"}, vo="24 V",
                                io={"min": io, "max": io}, fs="120 kHz", ambient=AMBIENT,
                                **kw)
        parts = forward_parts(two_switch=True, n_p=40, n_s=8, l_m="5 mH", l_out="47 uH",
                              core_area="150 mm^2", c_in="2 uF", c_out="220 uF",
                              esr_out="20 mohm", v_fet="650 V")
    return design, parts


def run_case(case: str, folder):
    topology, io, line = ALL_CASES[case]
    ev = evaluate(folder, *design_and_parts(topology, io, sync=case in SYNC_CASES,
                                            **SYNC_OPTIONS.get(case, {})))
    i = corner_index(ev, line)
    return (ev, i, *simulate_corner(ev, i, folder, case))


simulated = simulated_cases(run_case)


@pytest.mark.parametrize("case", list(ALL_CASES))
def test_engine_matches_ngspice(simulated, case):
    ev, i, c, sim, _ = simulated(case)
    regime = "DCM" if "-dcm-" in case else "CCM"
    assert ev.result.regime[i] == regime
    # duty: the regulation loop's 1e-4 on v_out against the model's drops taken at the
    # mean current of each interval
    assert sim.duty == pytest.approx(ev.result.duty[i], rel=2e-3)
    comparisons = compare_at(ev, i, sim)
    # every stress of every ref that the simulation measures is compared
    refs = {cmp.ref for cmp in comparisons}
    assert refs >= {"Q1", "T1", "D1", "D2", "D3", "L1", "C1", "C2"}
    for cmp in comparisons:
        assert cmp.tolerance == (TOL_PEAK if cmp.quantity in ("i_peak", "i_ripple_rms",
                                                              "b_peak") else TOL_AVERAGE)
    bad = report_worst(case, comparisons)
    assert not bad, "\n".join(bad)


@pytest.mark.parametrize("case", list(ALL_CASES))
def test_simulation_energy_and_charge_balance(simulated, case):
    _, _, c, r, _ = simulated(case)
    assert_energy_balance(case, c, r)
    # capacitor charge balance: inductor mean = load current + mean output-capacitor
    # current. The load current is i_out within the 1e-4 regulation tolerance; at light
    # load the output's R·C (milliseconds) still settles by a few 1e-4 over the window,
    # which the capacitor's mean current shows (5e-4 allowed for the sum).
    i_cap = r.diagnostics["output-capacitor-0.i_mean"]
    assert r.diagnostics["i_l_mean"] == pytest.approx(c.i_out + i_cap, rel=5e-4)
    assert abs(i_cap) < 2e-3 * c.i_out


@pytest.mark.parametrize("case", [k for k in CASES if "-ccm-" in k])
def test_simulated_voltages_textbook(simulated, case):
    """The simulated switch and reset-diode voltages against the lossless relations
    (Erickson & Maksimović, 2nd ed., §6.3.3; Mohan, Undeland & Robbins, 3rd ed., §10.4 —
    from memory); 2 % covers the drops (a reset-diode drop is 0.5-2 % of V_in here) and
    the bus ripple."""
    _, _, c, r, _ = simulated(case)
    if c.topology == "forward":
        v_sw, v_reset = c.v_in * (1 + c.n_p / c.n_r), c.v_in * (1 + c.n_r / c.n_p)
    else:
        v_sw = v_reset = c.v_in
    for k in range(len(c.switches)):
        assert r.positions[("switch", k)]["v_peak"] == pytest.approx(v_sw, rel=0.02)
    for k in range(len(c.resets)):
        assert r.positions[("reset", k)]["v_reverse_peak"] == pytest.approx(v_reset, rel=0.02)
    n_r = c.n_r or c.n_p
    assert r.positions[("rectifier", 0)]["v_reverse_peak"] == pytest.approx(
        c.v_in * c.n_s / n_r, rel=0.02)
    # freewheel diode: the secondary voltage less the conducting forward diode's drop
    # (v_f0 + r_d·I, 2 % of n·V_in at 5 V output); 1 % covers the rest of the drops
    fwd = c.rectifiers[0]
    assert r.positions[("freewheel", 0)]["v_reverse_peak"] == pytest.approx(
        c.v_in * c.n_s / c.n_p - fwd.v_f0 - fwd.r_d * c.i_out, rel=0.01)


@pytest.mark.parametrize("case", list(ALL_CASES))
def test_reference_reproduced(simulated, case):
    _, _, c, r, folder = simulated(case)
    fresh = kept_results(folder, case)
    # same models and simulator: the stresses reproduce to far better than 1e-3
    assert_reference_reproduced(case, fresh["duty"], fresh["positions"])


@pytest.mark.parametrize("case", [k for k in SYNC_CASES if k not in SYNC_OPTIONS])
def test_simulated_sync_voltages_textbook(simulated, case):
    """Synchronous rectifiers in the simulation against the lossless relations (same
    books): the forward MOSFET blocks V_in·N_s/N_r in the reset (two-switch V_in·N_s/N_p),
    2 % for the reset-path drops; the freewheel MOSFET n·V_in less the forward channel's
    R_DS(on)·I (1 % for the other drops); the body diode of the freewheel MOSFET
    carries the inductor current for the two dead times, 2·t_d·f_s·I_o on average (2 %:
    the current moves by ~0.1 A in a dead time)."""
    _, _, c, r, _ = simulated(case)
    n_r = c.n_r or c.n_p
    n = c.n_s / c.n_p
    assert r.positions[("rectifier", 0)]["v_peak"] == pytest.approx(c.v_in * c.n_s / n_r,
                                                                    rel=0.02)
    fwd = c.rectifiers[0]
    assert r.positions[("freewheel", 0)]["v_peak"] == pytest.approx(
        n * c.v_in - fwd.r_on * c.i_out, rel=0.01)
    assert r.diagnostics["freewheel-0.i_body_avg"] == pytest.approx(
        2 * c.dead_time * c.f_sw * c.i_out, rel=0.02)


def test_sync_negative_current_simulated(simulated):
    """The light-load case does run with a negative inductor current at the end of the
    off-time (the engine's valley current, and the simulated freewheel MOSFET carrying
    current drain -> source), and without dead time no body diode conducts."""
    ev, i, c, r, _ = simulated("forward-sync-negative-5v-highline")
    assert ev.result.i_l_start[i] < -0.05
    assert ev.result.currents[("freewheel", 0)].max()[i] > 0.05
    assert r.diagnostics["freewheel-0.i_body_avg"] < 1e-3 * c.i_out
