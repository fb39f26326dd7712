"""Current doubler with diode rectifiers at light load (doubler_dcm: each inductor's
current stopping on its own, the magnetizing current returned through the switches'
body diodes after each on-interval, the series discharge of an output inductor with the
magnetizing inductance) against an ngspice simulation of the same circuit at high line.

Reference: ngspice transient simulation (stresscheck.spice.deck_bridge_ext: ideal
transformer from controlled sources plus magnetizing inductance, switches with R_DS(on)
and body diodes, straight-line diodes, L with DCR, C with ESR, a DC-only input source),
regulated to the same output voltage and measured over whole periods in steady state.
The diodes and body diodes conduct and stop by themselves in the simulation: nothing of
the analytic regime is imposed on it.

Tolerances (stated by the project, verify.TOL_AVERAGE and verify.TOL_PEAK, not tuned to
pass): 2 % on voltages, averages and rms values; 4 % on peaks and capacitor ripple. What
they cover: each drop taken at its interval's mean current, the body diodes at their
threshold only, the bus at its mean.

Cases (test parts of tests/builders.py and builders_bridge_ext.py: 4:8 transformer on
the half bridge, 4:4 on the full bridge, L_m = 200 µH, two 47 µH inductors, 40–60 V to
12 V, 100 kHz): 0.3 A load at high line (regime checked on the model before the
comparison). The netlists and results are committed in tests/reference/spice/ (file
name = case and line); rerun with STRESSCHECK_UPDATE_REFERENCE=1 to rewrite them after
a model change.
"""

import pytest

from builders_bridge_ext import ext_design, ext_parts
from spice_support import (assert_reference_reproduced, corner_index, evaluate,
                           json_positions, ngspice,  # noqa: F401  (ngspice: autouse)
                           outside_tolerance, simulate_corner)
from stresscheck.verify import TOL_AVERAGE, TOL_PEAK, compare_at

CASES = {  # name: topology, secondary turns, load, regime expected at high line
    "hb-cd-dcm-48v": ("half-bridge", 8, "0.3 A", "DCM"),
    "fb-cd-dcm-48v": ("full-bridge", 4, "0.3 A", "DCM"),
}


@pytest.mark.ngspice
@pytest.mark.parametrize("name", sorted(CASES))
def test_doubler_light_load_matches_ngspice(tmp_path, name):
    topology, n_s, i_min, regime = CASES[name]
    parts = ext_parts(c_in="20 uF", n_s=n_s, l_out="47 uH")
    doc = ext_design(topology, "current-doubler", io={"min": i_min, "max": "10 A"})
    ev = evaluate(tmp_path, doc, parts)
    i = corner_index(ev, "high", "min")
    assert ev.result.regime[i] == regime
    stem = f"{name}-highline"
    _, sim, _ = simulate_corner(ev, i, tmp_path, stem)
    comparisons = compare_at(ev, i, sim)
    compared = {c.quantity for c in comparisons}
    assert {"v_peak", "v_reverse_peak", "i_avg", "i_rms", "i_peak", "i_ripple_rms",
            "b_peak"} <= compared
    assert {c.ref for c in comparisons if c.quantity == "i_rms"} >= {"L1", "L2"}
    assert all(c.tolerance in (TOL_AVERAGE, TOL_PEAK) for c in comparisons)
    outside = outside_tolerance(comparisons)
    assert not outside, "\n".join(outside)
    assert sim.duty == pytest.approx(float(ev.result.duty[i]), rel=TOL_AVERAGE)
    assert_reference_reproduced(stem, sim.duty, json_positions(sim.positions))
