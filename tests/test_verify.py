"""`stresscheck verify` never simulates a corner where the electro-thermal loop ran away:
the engine's operating point there (R_DS(on), duty, currents) comes from an unconverged
loop, so there is nothing to compare. Each compared row is governed by its worst corner
among the corners that converged, and the output names the corners skipped.

The design: the buck of tests/test_engine.py with Q1 on a 3000 K/W thermal path, so that
its loop gain g = R25·tc·I²·R_th exceeds 1 at the heavy-load corners and stays below it
at the light ones (the runaway criterion of a resistive device, textbook fixed-point
argument, as in test_engine.py). Comparison tolerances are those of stresscheck.verify
(2 % on voltages, averages and rms values, 4 % on peaks and ripple), never widened.
"""

from __future__ import annotations

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.policy import load_policy
from stresscheck.verify import (COMPARED, corners_to_simulate, governing_corners,
                                runaway_corners)
from test_input_errors import run_cli


def _runaway_design(folder):
    design = cell_design("buck")
    entry = design["components"][0]
    entry.pop("r_th_ca")
    entry["r_th_ja"] = "3000 K/W"
    return write_case(folder, design, cell_parts())


@pytest.fixture(scope="module")
def runaway_case(tmp_path_factory):
    path = _runaway_design(tmp_path_factory.mktemp("runaway"))
    ev = run(load_design(path))
    policy = load_policy("commercial")
    return path, ev, policy, run_checks(ev, policy)


def test_governing_corners_skip_the_runaway_ones(runaway_case):
    _, ev, policy, checks = runaway_case
    ran = runaway_corners(ev)
    assert ran.any() and not ran.all()  # the case has both kinds of corner
    first = governing_corners(ev, checks)
    assert any(ran[i] for i in first)  # without the skip a runaway corner is picked
    corners, skipped = corners_to_simulate(ev, checks, policy)
    assert corners and not any(ran[i] for i in corners)
    assert skipped == [i for i in first if ran[i]]
    # every compared stress reaches its largest converged value at a simulated corner
    # (the commercial policy's limits of these quantities do not vary by corner)
    for s in ev.stresses:
        if s.quantity not in COMPARED:
            continue
        ok = s.applicable & ~ran & np.isfinite(s.values)
        if not ok.any():
            continue
        worst = np.max(s.values[ok])
        assert any(ok[i] and s.values[i] == worst for i in corners), (s.ref, s.quantity)


def test_no_runaway_no_change(tmp_path):
    """Without runaway the corners are the governing corners, none skipped."""
    path = write_case(tmp_path, cell_design("buck"), cell_parts())
    ev = run(load_design(path))
    policy = load_policy("commercial")
    checks = run_checks(ev, policy)
    assert not runaway_corners(ev).any()
    assert corners_to_simulate(ev, checks, policy) == (governing_corners(ev, checks), [])


@pytest.mark.ngspice
def test_verify_names_the_skipped_corners_and_compares_the_rest(runaway_case):
    from spice_support import REQUIRE
    from stresscheck.spice.run import find_ngspice
    if find_ngspice() is None:
        if REQUIRE:
            pytest.fail("ngspice not found and STRESSCHECK_REQUIRE_NGSPICE=1")
        pytest.skip("ngspice not installed")
    path, ev, policy, checks = runaway_case
    corners, skipped = corners_to_simulate(ev, checks, policy)
    status, out, err = run_cli(["verify", path])
    assert status == 0, out + err
    ids = [ev.corners.ids[i] for i in skipped]
    assert "ran away" in out and all(cid in out.split("in ngspice")[0] for cid in ids)
    assert f"simulating {len(corners)} governing corner(s)" in out
    simulated = out.split("in ngspice", 1)[1]
    assert not any(f"corner {cid} (" in simulated for cid in ids)
    assert all(f"corner {ev.corners.ids[i]} (" in simulated for i in corners)
    assert "0 comparison(s) outside tolerance" in out
