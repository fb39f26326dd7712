"""Light-load bridge stresses (bridge_light: DCM and the magnetizing-valley regime, diode
center-tap rectifier) against an ngspice simulation of the same circuit at high line.

Reference: ngspice transient simulation (stresscheck.spice bridge deck: ideal transformer
from controlled sources plus magnetizing inductance, switches with R_DS(on) and body
diodes, straight-line diodes, L with DCR, C with ESR, a DC-only input source), regulated
to the same output voltage and measured over whole periods in steady state. The diodes
stop by themselves in the simulation: nothing of the analytic regime is imposed on it.

Tolerances (stated by the project, verify.TOL_AVERAGE and verify.TOL_PEAK, not tuned to
pass): 2 % on voltages, averages and rms values; 4 % on peaks and capacitor ripple. What
they cover: each drop taken at its segment's mean current, the bus at its mean over the
applied interval, the load resistor's share of the output ripple. Measured differences
when written (full bridge, DCM): at most 0.13 % (rectifier reverse voltage), everything
else below 0.05 %; the other cases were checked against the tolerances only.

Cases (test parts of tests/builders.py: 4:2 transformer, or 4:4 for the half bridge,
L_m = 200 µH, 10 µH output inductor, 40–60 V to 12 V): 0.5 A (DCM) for the full bridge
and half bridge; 1.5 A on the full bridge and the push-pull, between the CCM boundary
(2.4 A at 60 V: valley I_o − ΔI_L/2 at i_m/n) and DCM (magnetizing-valley regime). The
push-pull in DCM is not here: its deck stops with "timestep too small" at a rectifier
node during the idle interval (all diodes off, a node between two inductors; the
damping resistor of ngspice-notes.md would be a deck change). Netlists and
results committed in tests/reference/spice/ (file name = case and line); rerun with
STRESSCHECK_UPDATE_REFERENCE=1 to rewrite them after a model change.
"""

import pytest

from builders import bridge_design, bridge_parts
from spice_support import (corner_index, evaluate, ngspice,  # noqa: F401  (autouse)
                           outside_tolerance, simulate_corner)
from stresscheck.verify import TOL_AVERAGE, TOL_PEAK, compare_at

CASES = {  # name: topology, minimum output current, regime expected at high line
    "fb-ct-dcm-48v": ("full-bridge", "0.5 A", "DCM"),
    "hb-ct-dcm-48v": ("half-bridge", "0.5 A", "DCM"),
    "pp-ct-mvalley-48v": ("push-pull", "1.5 A", "magnetizing-valley"),
    "fb-ct-mvalley-48v": ("full-bridge", "1.5 A", "magnetizing-valley"),
}


@pytest.mark.ngspice
@pytest.mark.parametrize("name", sorted(CASES))
def test_light_load_matches_ngspice(tmp_path, name):
    topology, i_min, regime = CASES[name]
    parts = bridge_parts(n_s=4 if topology == "half-bridge" else 2, c_in="20 uF")
    doc = bridge_design(topology, "center-tap", io={"min": i_min, "max": "10 A"})
    ev = evaluate(tmp_path, doc, parts)
    i = corner_index(ev, "high", "min")
    assert ev.result.regime[i] == regime
    _, sim, _ = simulate_corner(ev, i, tmp_path, f"{name}-highline")
    comparisons = compare_at(ev, i, sim)
    compared = {c.quantity for c in comparisons}
    assert {"v_peak", "v_reverse_peak", "i_avg", "i_rms", "i_peak", "i_ripple_rms",
            "b_peak"} <= compared
    assert all(c.tolerance in (TOL_AVERAGE, TOL_PEAK) for c in comparisons)
    outside = outside_tolerance(comparisons)
    assert not outside, "\n".join(outside)
    assert sim.duty == pytest.approx(float(ev.result.duty[i]), rel=TOL_AVERAGE)
