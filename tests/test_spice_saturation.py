"""Saturation roll-off (``inductance_vs_current``) against ngspice: a buck whose inductor
keeps a fraction f(|i|) of its inductance, simulated with v = L_0·f(|i|)·di/dt (the
behavioural series source of ``stresscheck.spice.elements.NetlistWriter.inductor``: the
exact integration of di/dt = v/L(i) across the swing).

- "plateau" cases: the swing lies on a flat part of the table (L = 0.6·L_0 there), where
  the engine's inductance at the peak current is exact: every stress within the
  tolerances of ``stresscheck verify`` (2 % averages and rms, 4 % peaks and ripple).
- "slope" cases: the swing crosses a falling part; the engine holds L at its value at
  the peak current over the whole swing, so its ripple and peak are above the
  simulation's (conservative), by about the ratio of the mean inductance over the swing
  to the inductance at the peak (the bound is computed below from the table and
  checked), and never below it.

Method, tolerances and reference files: tests/spice_support.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from builders_buck_boost import cell_design, cell_parts
from spice_support import (assert_energy_balance, assert_reference_reproduced,
                           corner_index, evaluate, kept_results, ngspice,  # noqa: F401
                           report_worst, simulate_corner, simulated_cases)
from stresscheck.verify import TOL_AVERAGE, TOL_PEAK, compare_at

AMBIENT = {"min": "25 degC", "max": "25 degC"}
# invented tables: flat at 0.6 from 2 A on; flat to 4 A, then down to 0.5 at 12 A
PLATEAU = {"0 A": 1.0, "2 A": 0.6, "30 A": 0.6}
SLOPE = {"0 A": 1.0, "4 A": 1.0, "12 A": 0.5}
# case -> (table, output current, line)
CASES = {
    "buck-rolloff-plateau-12v-lowline": (PLATEAU, "6 A", "low"),
    "buck-rolloff-plateau-12v-highline": (PLATEAU, "8 A", "high"),
    "buck-rolloff-slope-12v-lowline": (SLOPE, "6 A", "low"),
    "buck-rolloff-slope-12v-highline": (SLOPE, "6 A", "high"),
}


def run_case(case: str, folder):
    table, io, line = CASES[case]
    design = cell_design("buck", vin={"min": "16 V", "max": "36 V"},
                         io={"min": io, "max": io}, ambient=AMBIENT)
    parts = cell_parts(c_in="20 uF", c_out="200 uF")
    parts["t-ind"]["electrical"]["inductance_vs_current"] = table
    ev = evaluate(folder, design, parts)
    i = corner_index(ev, line)
    return (ev, i, *simulate_corner(ev, i, folder, case))


simulated = simulated_cases(run_case)


def fraction(table: dict, i):
    x = [float(k.split()[0]) for k in table]
    return np.interp(i, x, list(table.values()))


@pytest.mark.parametrize("case", [c for c in CASES if "plateau" in c])
def test_plateau_matches_ngspice(simulated, case):
    ev, i, c, sim, _ = simulated(case)
    assert ev.result.regime[i] == "CCM"
    i_l = ev.result.currents[("inductor", 0)]
    assert i_l.min()[i] > 2.0  # the whole swing on the flat part
    assert ev.result.inductance[("inductor", 0)][i] == pytest.approx(0.6 * 10e-6)
    comparisons = compare_at(ev, i, sim)
    assert {cmp.ref for cmp in comparisons} == {"Q1", "D1", "L1", "C1", "C2"}
    for cmp in comparisons:
        assert cmp.tolerance == (TOL_PEAK if cmp.quantity in ("i_peak", "i_ripple_rms")
                                 else TOL_AVERAGE)
    bad = report_worst(case, comparisons)
    assert not bad, "\n".join(bad)


@pytest.mark.parametrize("case", [c for c in CASES if "slope" in c])
def test_slope_is_conservative_against_ngspice(simulated, case):
    ev, i, c, sim, _ = simulated(case)
    assert ev.result.regime[i] == "CCM"
    i_l = ev.result.currents[("inductor", 0)]
    top, low = float(i_l.max()[i]), float(i_l.min()[i])
    # bound on the overstatement: the mean of L over the engine's swing over L at its top
    grid = np.linspace(low, top, 2001)
    bound = float(np.mean(fraction(SLOPE, grid)) / fraction(SLOPE, top)) - 1.0
    assert bound > 0.0
    sim_peak = sim.positions[("inductor", 0)]["i_peak"]
    eng_peak = next(s.values[i] for s in ev.stresses
                    if s.ref == "L1" and s.quantity == "i_peak")
    print(f"\n{case}: i_peak engine {eng_peak:.4f} A, ngspice {sim_peak:.4f} A "
          f"({100 * (eng_peak / sim_peak - 1):+.2f} %), bound on the ripple's "
          f"overstatement {100 * bound:.2f} %")
    # never below the simulation (2e-3: the regulation loop's and the peak's precision)
    assert eng_peak >= sim_peak * (1 - 2e-3)
    # above it by no more than the swing's half times the bound (and the 2e-3)
    assert eng_peak <= sim_peak + (top - low) / 2 * bound + 2e-3 * sim_peak
    # the averages and rms values stay within the verify tolerance
    for cmp in compare_at(ev, i, sim):
        if cmp.quantity in ("i_avg", "i_rms") and cmp.ref in ("Q1", "D1", "L1"):
            assert abs(cmp.rel) <= TOL_AVERAGE, (cmp.ref, cmp.quantity, cmp.rel)


@pytest.mark.parametrize("case", list(CASES))
def test_simulation_energy_balance(simulated, case):
    _, _, c, r, _ = simulated(case)
    assert_energy_balance(case, c, r)


@pytest.mark.parametrize("case", list(CASES))
def test_reference_reproduced(simulated, case):
    _, _, _, r, folder = simulated(case)
    fresh = kept_results(folder, case, netlist=False)
    assert fresh["duty"] == pytest.approx(r.duty)
    assert_reference_reproduced(case, fresh["duty"], fresh["positions"])
