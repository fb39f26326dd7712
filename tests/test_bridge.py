"""The bridge family (``bridge``, its layouts and its dispatch to the PWM and the
phase-shift models): the shared invariants on every case, the refusals of what is not
modelled, and the shipped examples.

The lossless limit: resistances ~1e-9 ohm, v_f0 = 0, body diodes without drop, input
capacitor 1 F, magnetizing inductance 1 H. The phase-shift relations also assume an
output inductor current without ripple over the reversal (L ≫ n²·L_lk): those tests use
L = 1 H. Tolerance 1e-4 relative: the relations are exact there, the margin covers the
residual resistances (measured ~1e-6) and the solver's convergence (1e-9).
"""


import numpy as np
import pytest

from builders import write_case
from builders_bridge_ext import case, ext_design, ext_parts, values
from invariants import (assert_charge_balance, assert_energy_balance,
                        assert_one_rating_row_per_stress)
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError, RegulationError
from stresscheck.policy import load_policy



# --- shared invariants on every case --------------------------------------------------

INVARIANT_CASES = {
    # name: (topology, rectifier, design options, part options)
    "fb-ps-ct": ("full-bridge", "center-tap", dict(modulation="phase-shift",
                                                     dead_time="100 ns"), dict(l_leak="1 uH")),
    "fb-ps-fb": ("full-bridge", "full-bridge", dict(modulation="phase-shift",
                                                      dead_time="100 ns"), dict(l_leak="1 uH")),
    # small leakage and a long dead time: the current reverses inside the dead time and
    # both rectifiers conduct in the freewheel (the model's other regimes)
    "fb-ps-ct-short": ("full-bridge", "center-tap", dict(modulation="phase-shift",
                                                           dead_time="200 ns"),
                       dict(l_leak="0.2 uH")),
    # synchronous rectifiers with phase shift; and the open-primary regime with them
    "fb-ps-sync-ct": ("full-bridge", "center-tap", dict(modulation="phase-shift", sync=True,
                                                          dead_time="100 ns"),
                      dict(l_leak="1 uH")),
    "fb-ps-sync-fb": ("full-bridge", "full-bridge", dict(modulation="phase-shift", sync=True,
                                                           dead_time="100 ns"),
                      dict(l_leak="1 uH")),
    "fb-ps-sync-ct-short": ("full-bridge", "center-tap", dict(modulation="phase-shift",
                                                                sync=True,
                                                                dead_time="200 ns"),
                            dict(l_leak="0.2 uH")),
    "fb-cd": ("full-bridge", "current-doubler", {}, dict(n_s=4, l_out="47 uH")),
    # split capacitors of 50 uF: the model takes the primary emf at its mean over the
    # on-interval; the covariance it leaves out grows with the ripple of the reflected
    # current, which a doubler doubles (2.05e-3 of P_in with 20 uF)
    "hb-cd": ("half-bridge", "current-doubler", {}, dict(n_s=8, l_out="47 uH",
                                                         c_in="50 uF")),
    "pp-cd": ("push-pull", "current-doubler", {}, dict(n_s=4, l_out="47 uH")),
    "fb-ct-sync": ("full-bridge", "center-tap", dict(sync=True, dead_time="100 ns"), {}),
    "fb-fb-sync": ("full-bridge", "full-bridge", dict(sync=True, dead_time="100 ns"), {}),
    "fb-cd-sync": ("full-bridge", "current-doubler", dict(sync=True, dead_time="100 ns"),
                   dict(n_s=4, l_out="47 uH")),
    "hb-ct-sync": ("half-bridge", "center-tap", dict(sync=True), dict(n_s=4)),
    "pp-cd-sync": ("push-pull", "current-doubler", dict(sync=True, dead_time="100 ns"),
                   dict(n_s=4, l_out="47 uH")),
    # forced CCM: at 1.5 A the inductor current still reverses (ΔI/2 = 1.8 A at high
    # line). The energy bound of tests/invariants.py covers the model's second-order
    # term R·ΔI²/12 for ripple up to about twice the load; at 1 A (ΔI = 3.6 A) that
    # term reaches 2.1e-3 of P_in (the model takes each drop at the segment's mean
    # current; ngspice agrees with it there to 0.1 %, tests/test_spice_bridge_extensions)
    "fb-ct-sync-light": ("full-bridge", "center-tap",
                         dict(sync=True, io={"min": "1.5 A", "max": "10 A"}), {}),
}


@pytest.mark.parametrize("name", list(INVARIANT_CASES))
def test_invariants(tmp_path, name):
    topology, rectifier, opts, part_opts = INVARIANT_CASES[name]
    parts = ext_parts(**{"c_in": "20 uF", **part_opts})
    ev = case(tmp_path, topology, rectifier, parts=parts, surge="70 V", ilim="12 A", **opts)
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    assert_one_rating_row_per_stress(run_checks(ev, load_policy("commercial")), ev)


# --- refusals ------------------------------------------------------------------------------

@pytest.mark.parametrize("topology,rectifier,opts,parts,match", [
    ("half-bridge", "center-tap", dict(modulation="phase-shift"), dict(l_leak="1 uH"),
     "full-bridge only"),
    ("full-bridge", "current-doubler", dict(modulation="phase-shift"),
     dict(n_s=4, l_leak="1 uH"), "current-doubler rectifier is not modelled"),
    ("full-bridge", "current-doubler", dict(modulation="phase-shift", sync=True),
     dict(n_s=4, l_leak="1 uH"), "current-doubler rectifier is not modelled"),
    ("full-bridge", "center-tap", dict(modulation="phase-shift"), {},
     "needs leakage_inductance"),
])
def test_refused_combinations(tmp_path, topology, rectifier, opts, parts, match):
    with pytest.raises(InputError, match=match):
        case(tmp_path, topology, rectifier, parts=ext_parts(**parts), **opts)


def test_current_doubler_inductors_must_be_one_entry(tmp_path):
    doc = ext_design("full-bridge", "current-doubler")
    (ind,) = [c for c in doc["components"] if c["role"] == "inductor"]
    ind["refs"] = ["L1"]
    doc["components"].append({"ref": "L2", "role": "inductor", "part": "t-ind"})
    with pytest.raises(InputError, match="one component entry"):
        load_design(write_case(tmp_path, doc, ext_parts(n_s=4, l_out="47 uH")))


def test_mixed_rectifier_kinds_refused(tmp_path):
    doc = ext_design("full-bridge", "center-tap")
    (rect,) = [c for c in doc["components"] if c["role"] == "rectifier"]
    rect["refs"] = ["D1"]
    doc["components"].append({"ref": "SR2", "role": "rectifier", "part": "t-srfet"})
    with pytest.raises(InputError, match="must all be diodes or all MOSFETs"):
        load_design(write_case(tmp_path, doc, ext_parts()))


def test_current_doubler_dcm_solved(tmp_path):
    """Each doubler inductor ripples at fs over (1 − D)·Ts [B]: 10 uH at 8 A runs
    below the CCM boundary, which is solved by doubler_dcm (its own relations, tested
    in test_doubler_dcm.py), not computed with CCM relations."""
    ev = case(tmp_path, "full-bridge", "current-doubler", parts=ext_parts(n_s=4))
    low = ev.corners["output_current"] == ev.corners["output_current"].min()
    assert set(ev.result.regime[low]) <= {"DCM", "magnetizing-valley"}
    assert np.all(np.isfinite(ev.result.duty))


# --- example designs -------------------------------------------------------------------

@pytest.mark.parametrize("example", ["full-bridge-phase-shift", "half-bridge-current-doubler"])
def test_examples_check(tmp_path, example):
    """The shipped examples run through `stresscheck check` with nothing failing, keep
    the invariants, and show what their comments promise: the phase-shifted bridge's
    lagging-leg current outlasts the dead time at low line and the current limit but
    reverses inside it at light load (the model's open interval); the doubler's body diodes carry forward
    current in every dead time (no corner refused) and each inductor half the load."""
    import json
    from pathlib import Path

    from stresscheck import cli
    from stresscheck.topologies import bridge_phase_shift as ps
    design = Path(__file__).parent.parent / "examples" / example / "design.toml"
    assert cli.main(["check", str(design), "--out", str(tmp_path)]) == 0
    doc = json.loads((tmp_path / "results.json").read_text())
    assert {row["regime"] for row in doc["corners"]} == {"CCM"}
    ev = run(load_design(design))
    io = ev.corners["output_current"]
    if example == "full-bridge-phase-shift":
        open_time = ev.result.grid.dt[:, ps.OPEN]
        vin = ev.corners["input_voltage"]
        assert (open_time[(io == io.max()) & (vin == vin.min())] == 0).all()
        assert (open_time[io == io.min()] > 0).all()
    else:
        for ref in ("L1", "L2"):
            assert values(ev, ref, "i_rms").max() > io.max() / 2
        assert all(b.min().min() >= 0 for b in ev.result.body.values())
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    assert_one_rating_row_per_stress(run_checks(ev, load_policy("commercial")), ev)
