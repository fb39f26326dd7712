"""Conservation of energy and charge on every modelled topology (shared invariants)."""

import pytest

from builders import bridge_design, bridge_parts, write_case
from invariants import assert_charge_balance, assert_energy_balance, \
    assert_one_rating_row_per_stress
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.policy import load_policy

CASES = [("full-bridge", "center-tap"), ("full-bridge", "full-bridge"),
         ("half-bridge", "center-tap"), ("half-bridge", "full-bridge"),
         ("push-pull", "center-tap"), ("push-pull", "full-bridge")]


@pytest.mark.parametrize("topology,rectifier", CASES)
def test_invariants_with_losses(tmp_path, topology, rectifier):
    n_s = 4 if topology == "half-bridge" else 2
    parts = bridge_parts(n_s=n_s, c_in="20 uF")
    design = bridge_design(topology, rectifier, surge="70 V", ilim="12 A")
    ev = run(load_design(write_case(tmp_path, design, parts)))
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    checks = run_checks(ev, load_policy("commercial"))
    assert_one_rating_row_per_stress(checks, ev)
