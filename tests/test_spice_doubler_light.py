"""Current doubler with synchronous rectifiers at light load (doubler_light: the reverse
current at a channel's turn-off, carried by the coming switch's body diode during the
dead time) against an ngspice simulation of the same circuit at high line.

Reference: ngspice transient simulation (stresscheck.spice.deck_bridge_ext: ideal
transformer from controlled sources plus magnetizing inductance, switches with R_DS(on)
and body diodes gated per switch, synchronous rectifiers with body diodes gated with the
dead time, L with DCR, C with ESR, a DC-only input source), regulated to the same output
voltage and measured over whole periods in steady state. Nothing of the analytic dead-time
relations is imposed on the simulation: the body diodes conduct by themselves.

Tolerances (stated by the project, verify.TOL_AVERAGE and verify.TOL_PEAK, not tuned to
pass): 2 % on voltages, averages and rms values; 4 % on peaks and capacitor ripple. What
they cover: each drop taken at its segment's mean current, the magnetizing current held
constant over the dead time, the rectifier and switch currents drawn straight over the
dead-time segment (doubler_light docstring). Measured differences when written: at most
0.27 % (rectifier rms), switch and rectifier peak voltages (source plus the body diode's
drop) 0.07 %, flux 0.08 %, everything else below 0.1 %. Without the dead-time relations
the rectifier peak voltage was 2.5 % and the flux 5.1 % low (outside the tolerances).

Case (test parts of tests/builders.py and builders_bridge_ext.py: half bridge, 4:8
transformer, L_m = 200 µH, two 47 µH inductors, 40–60 V to 12 V, 100 kHz, dead time
100 ns): 0.5 A load, each inductor's current swinging about ±1 A around 0.25 A, so both
rectifiers carry reverse current when their channels turn off (checked below on the
model before the comparison). The netlist and results are committed in
tests/reference/spice/ (file name = case and line); rerun with
STRESSCHECK_UPDATE_REFERENCE=1 to rewrite them after a model change.
"""

import numpy as np
import pytest

from builders_bridge_ext import ext_design, ext_parts
from spice_support import (assert_reference_reproduced, corner_index, evaluate,
                           json_positions, ngspice,  # noqa: F401  (ngspice: autouse)
                           outside_tolerance, simulate_corner)
from stresscheck.topologies.doubler_light import F1C, F2C
from stresscheck.verify import TOL_AVERAGE, TOL_PEAK, compare_at

CASES = {"hb-cd-sync-light-48v": ("half-bridge", dict(n_s=8, l_out="47 uH"), "0.5 A")}


@pytest.mark.ngspice
@pytest.mark.parametrize("name", sorted(CASES))
def test_sync_doubler_light_load_matches_ngspice(tmp_path, name):
    topology, part_opts, i_min = CASES[name]
    parts = ext_parts(c_in="20 uF", **part_opts)
    doc = ext_design(topology, "current-doubler", sync=True, dead_time="100 ns",
                     io={"min": i_min, "max": "10 A"})
    ev = evaluate(tmp_path, doc, parts)
    i = corner_index(ev, "high", "min")
    assert ev.result.regime[i] == "forced-CCM"
    # the regime under test: the switch of the coming on-interval carries negative
    # current (its body diode) in both dead times before the on-intervals
    for k, seg in ((0, F2C), (1, F1C)):
        sw = ev.result.currents[("switch", k)]
        assert sw.a[i, seg] < 0 and sw.b[i, seg] < 0
    stem = f"{name}-highline"
    _, sim, _ = simulate_corner(ev, i, tmp_path, stem)
    comparisons = compare_at(ev, i, sim)
    compared = {c.quantity for c in comparisons}
    assert {"v_peak", "i_rms", "i_peak", "i_ripple_rms", "b_peak"} <= compared
    assert {c.ref for c in comparisons if c.quantity == "i_rms"} >= {"L1", "L2"}
    assert all(c.tolerance in (TOL_AVERAGE, TOL_PEAK) for c in comparisons)
    outside = outside_tolerance(comparisons)
    assert not outside, "\n".join(outside)
    assert sim.duty == pytest.approx(float(ev.result.duty[i]), rel=TOL_AVERAGE)
    assert np.isfinite(sim.duty)
    assert_reference_reproduced(stem, sim.duty, json_positions(sim.positions))
