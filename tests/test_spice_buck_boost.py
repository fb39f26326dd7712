"""Buck and boost: the analytic engine against ngspice, at low and high line, diode
versions in CCM and DCM, synchronous versions with dead time (forced continuous, the
inductor current going negative at high line).

Each case is a small design (tests/builders_buck_boost.py) evaluated by the engine; the
circuit of the corner (the engine's R_DS(on), duty and part values) is simulated to its
regulated steady state (stresscheck.spice.simulate) and every stress is compared with
``stresscheck.verify.compare_at``, the comparison of ``stresscheck verify``:
  voltages, averages and rms values  2 %
  peaks and capacitor ripple         4 %
(the tolerances of stresscheck.verify; never widened here). Measured worst relative
differences are printed with ``pytest -s``.

The netlists and results of each case are committed in tests/reference/spice/ (file name =
case); rerun with STRESSCHECK_UPDATE_REFERENCE=1 to rewrite them. Without ngspice the
module is skipped, unless STRESSCHECK_REQUIRE_NGSPICE=1.
"""

from __future__ import annotations

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from spice_support import (assert_reference_reproduced, keep_folder, kept_results,
                           ngspice, report_worst)  # noqa: F401  (ngspice: autouse)
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.spice.circuit import circuit_at
from stresscheck.verify import TOL_AVERAGE, TOL_PEAK, compare_at

AMBIENT = {"min": "25 degC", "max": "25 degC"}
DEAD_TIME = "50 ns"
# case -> (topology, synchronous, output current, line, regime of the engine)
# Buck 16-36 V -> 12 V, boost 12-24 V -> 48 V, 200 kHz, 10 uH. The synchronous loads are
# chosen so that the valley current is positive at low line and negative at high line
# (the second dead time then returns the current through the switch's body diode); in
# "zero-in-deadtime" it is slightly negative, and reaches zero inside that dead time.
CASES = {
    "buck-diode-ccm-12v-lowline": ("buck", False, "5 A", "low", "CCM"),
    "buck-diode-ccm-12v-highline": ("buck", False, "5 A", "high", "CCM"),
    "buck-diode-dcm-12v-lowline": ("buck", False, "0.3 A", "low", "DCM"),
    "buck-diode-dcm-12v-highline": ("buck", False, "0.3 A", "high", "DCM"),
    "buck-sync-deadtime-12v-lowline": ("buck", True, "1 A", "low", "CCM"),
    "buck-sync-deadtime-12v-highline": ("buck", True, "1 A", "high", "CCM"),
    "buck-sync-zero-in-deadtime-12v-highline": ("buck", True, "1.97 A", "high", "CCM"),
    "boost-diode-ccm-48v-lowline": ("boost", False, "2 A", "low", "CCM"),
    "boost-diode-ccm-48v-highline": ("boost", False, "2 A", "high", "CCM"),
    "boost-diode-dcm-48v-lowline": ("boost", False, "0.1 A", "low", "DCM"),
    "boost-diode-dcm-48v-highline": ("boost", False, "0.1 A", "high", "DCM"),
    "boost-sync-deadtime-48v-lowline": ("boost", True, "1 A", "low", "CCM"),
    "boost-sync-deadtime-48v-highline": ("boost", True, "1 A", "high", "CCM"),
}


def design_and_parts(topology: str, sync: bool, io: str):
    vin = ({"min": "16 V", "max": "36 V"} if topology == "buck"
           else {"min": "12 V", "max": "24 V"})
    design = cell_design(topology, sync=sync, vin=vin, io={"min": io, "max": io},
                         ambient=AMBIENT, dead_time=DEAD_TIME if sync else None)
    return design, cell_parts(c_in="20 uF", c_out="200 uF")


_RESULTS: dict = {}


@pytest.fixture(scope="module")
def simulated(tmp_path_factory):
    from stresscheck.spice.simulate import simulate

    def get(case: str):
        if case not in _RESULTS:
            topology, sync, io, line, _ = CASES[case]
            folder = tmp_path_factory.mktemp(case)
            ev = run(load_design(write_case(folder, *design_and_parts(topology, sync, io))))
            vin = ev.corners["input_voltage"]
            i = int(np.argmin(vin) if line == "low" else np.argmax(vin))
            target = keep_folder(folder) / f"{case}.cir"
            c = circuit_at(ev, i)
            _RESULTS[case] = (ev, i, c, simulate(c, keep_netlist=target), target.parent)
        return _RESULTS[case]
    return get


def passive_ref(case: str) -> str:
    return "Q2" if CASES[case][1] else "D1"


@pytest.mark.parametrize("case", list(CASES))
def test_engine_matches_ngspice(simulated, case):
    ev, i, c, sim, _ = simulated(case)
    assert ev.result.regime[i] == CASES[case][4]
    # duty: the regulation loop's 1e-4 on v_out against the model's drops taken at the
    # mean current of each piece of the intervals
    assert sim.duty == pytest.approx(ev.result.duty[i], rel=2e-3)
    comparisons = compare_at(ev, i, sim)
    # every stress of every ref that the simulation measures is compared
    refs = {cmp.ref for cmp in comparisons}
    assert refs == {"Q1", passive_ref(case), "L1", "C1", "C2"}
    assert len(comparisons) == (12 if CASES[case][1] else 13)
    for cmp in comparisons:
        assert cmp.tolerance == (TOL_PEAK if cmp.quantity in ("i_peak", "i_ripple_rms")
                                 else TOL_AVERAGE)
    bad = report_worst(case, comparisons)
    assert not bad, "\n".join(bad)


def test_zero_current_inside_the_dead_time(simulated):
    """The engine's period starts at zero current where the negative valley current
    returns to zero inside the second dead time (its IDLE interval is the rest of it)."""
    from stresscheck.topologies.switching_cell import DEAD_B, IDLE, first, last
    ev, i, c, sim, _ = simulated("buck-sync-zero-in-deadtime-12v-highline")
    dt = ev.result.grid.dt[i]
    assert ev.result.i_l_start[i] == 0
    t_body = dt[first(DEAD_B):last(DEAD_B) + 1].sum()
    assert 0 < t_body < c.dead_time
    assert dt[first(IDLE):].sum() == pytest.approx(c.dead_time - t_body)


def test_negative_current_and_body_diodes(simulated):
    """At high line the synchronous buck's valley current is negative: the high side's
    body diode conducts in the second dead time, and the low side blocks V_in plus that
    drop (engine: body[("switch", 0)]; ngspice: the switch's body-diode current)."""
    ev, i, c, sim, _ = simulated("buck-sync-deadtime-12v-highline")
    assert ev.result.i_l_start[i] < 0
    body_hs = ev.result.body[("switch", 0)].mean()[i]
    assert body_hs > 0
    # the body-diode charge of a few-ns interval: 4 % (its ramp is resolved by the
    # simulator's time step of Ts/400 = 12.5 ns only with the breakpoints of the gates)
    assert sim.diagnostics["switch-0.i_body_avg"] == pytest.approx(body_hs, rel=0.04)
    body_ls = ev.result.body[("freewheel", 0)].mean()[i]
    assert sim.diagnostics["freewheel-0.i_body_avg"] == pytest.approx(body_ls, rel=0.04)
    assert sim.positions[("freewheel", 0)]["v_peak"] > c.v_in


def losses(c, r) -> float:
    """Conduction losses from the measured currents and the circuit's resistances [W]
    (Joule R·I_rms², straight-line diodes v_f0·I_avg + r_d·I_rms²; Erickson &
    Maksimović, Fundamentals of Power Electronics, 2nd ed., ch. 3 — from memory)."""
    pos, dg = r.positions, r.diagnostics
    p = 0.0
    fets = [("switch", 0, c.switches[0])]
    passive = c.freewheels if c.topology == "buck" else c.rectifiers
    role = "freewheel" if c.topology == "buck" else "rectifier"
    if hasattr(passive[0], "r_on"):
        fets.append((role, 0, passive[0]))
    else:
        q = pos[(role, 0)]
        p += passive[0].v_f0 * q["i_avg"] + passive[0].r_d * q["i_rms"] ** 2
    for name, k, sw in fets:
        p += sw.r_on * dg[f"{name}-{k}.i_channel_rms"] ** 2
        p += sw.body.v_f0 * dg[f"{name}-{k}.i_body_avg"] + sw.body.r_d * dg[
            f"{name}-{k}.i_body_rms"] ** 2
    p += c.dcr_out * pos[("inductor", 0)]["i_rms"] ** 2
    p += c.c_out.esr * pos[("output-capacitor", 0)]["i_ripple_rms"] ** 2
    p += c.c_in.esr * pos[("input-capacitor", 0)]["i_ripple_rms"] ** 2
    return p


@pytest.mark.parametrize("case", list(CASES))
def test_simulation_energy_and_charge_balance(simulated, case):
    _, _, c, r, _ = simulated(case)
    # energy conservation in the simulation: p_in = p_out + losses + damping loss +
    # change of stored energy; 1e-3 as in the bridge smoke tests (the diode fit departs
    # by ~3 mV per decade of current, the steady state is accepted at 1e-4)
    balance = r.p_out + losses(c, r) + r.diagnostics["p_damp"] + r.diagnostics["p_stored"]
    print(f"\n{case}: energy balance {(r.p_in - balance) / r.p_in:+.2e} of p_in")
    assert abs(r.p_in - balance) / r.p_in < 1e-3
    # capacitor charge balance: mean currents ~0 against amperes of ripple
    for name, value in r.diagnostics.items():
        if "capacitor" in name and name.endswith(".i_mean"):
            assert abs(value) < 1e-3 * c.i_out, name


@pytest.mark.parametrize("case", list(CASES))
def test_reference_reproduced(simulated, case):
    _, _, _, r, folder = simulated(case)
    fresh = kept_results(folder, case, netlist=False)
    assert fresh["duty"] == pytest.approx(r.duty)
    # same models and simulator: the stresses reproduce to far better than 1e-3
    assert_reference_reproduced(case, fresh["duty"], fresh["positions"])
