"""The switching cell shared by buck and boost (``switching_cell``) with losses: the
duty rises with the drops, the shared invariants; the options and envelopes refused;
the shipped examples.

Source of the ideal relations: R. W. Erickson and D. Maksimović, *Fundamentals of Power
Electronics*, 2nd ed. (from memory):
  ch. 2 (§2.2–2.5), CCM steady state by volt-second and charge balance:
    buck   V_o = D·V_in,  ΔI_pp = (V_in − V_o)·D·Ts/L,  output ripple ΔV_pp = ΔI_pp·Ts/(8C)
    boost  V_o = V_in/(1 − D),  I_L = I_o/(1 − D),  ΔI_pp = V_in·D·Ts/L,
           output ripple ΔV_pp = I_o·D·Ts/C
    switch and diode block V_in (buck) or V_o (boost); triangular ripple has rms
    ΔI_pp/(2·√3), a trapezoid [I_1, I_2] over a fraction f has rms √(f·(I_1² + I_1·I_2 +
    I_2²)/3) (appendix A).
  ch. 5 (§5.1–5.3, Table 5.2), discontinuous conduction, K = 2L/(R·Ts), R = V_o/I_o:
    buck   M = 2/(1 + √(1 + 4K/D²)), DCM where K < 1 − D
    boost  M = (1 + √(1 + 4D²/K))/2, DCM where K < D·(1 − D)²
Lossless limit: R_DS(on) = 1 nΩ, every other resistance and drop zero, capacitors of 1 F
(ripple below 1e-6 of the voltages). Tolerance 1e-6 relative where only the 1 nΩ and the
residual ripple differ from the ideal; the capacitor-ripple tests use finite C.
"""

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts, columns, evaluate, write
from invariants import (assert_charge_balance, assert_energy_balance,
                        assert_one_rating_row_per_stress)
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError, RegulationError
from stresscheck.policy import load_policy


# -- with losses ----------------------------------------------------------------------------

def test_conduction_drops_raise_the_duty(tmp_path):
    """Drops need more on-time (E&M ch. 3); the diode boost's D with the drops at the
    mean currents: (1 − D)·(V_o + ESR·(I_L − I_o) + V_F) = V_in − (D·R_on + R_L)·I_L,
    first order: the diode delivers into the capacitor's terminal voltage, which
    carries the ESR step while the diode conducts."""
    lossless = evaluate(tmp_path / "a", "boost", lossless=True)
    lossy = evaluate(tmp_path / "b", "boost", lossless=False,
                     parts=cell_parts(c_in="1 F", c_out="1 F"))
    ccm = lossy.result.regime == "CCM"
    assert np.all(lossy.result.duty > lossless.result.duty)
    vin, vo, io, fs, l = columns(lossy)
    d = lossy.result.duty
    i_l = io / (1 - d)
    v_f = 0.45 + 0.015 * i_l
    r_on = lossy.stage.devices[("switch", 0)].r_on
    rhs = vin - (d * r_on + 8e-3) * i_l
    lhs = (1 - d) * (vo + 5e-3 * (i_l - io) + v_f)
    # second order (curvature of the current with the drops along the ramps, ~R·ΔI²/V
    # per interval) stays below 1e-4
    np.testing.assert_allclose(lhs[ccm], rhs[ccm], rtol=1e-4)


INVARIANT_CASES = [("buck", False), ("buck", True), ("boost", False), ("boost", True)]


@pytest.mark.parametrize("topology,sync", INVARIANT_CASES)
def test_invariants_with_losses(tmp_path, topology, sync):
    """Energy and charge balance, one rating row per stress, a periodic inductor current
    (volt-second balance), at every corner: light loads in DCM (diode) or with negative
    inductor current (synchronous, dead time), surge and current-limit corners."""
    surge = "36 V" if topology == "buck" else "30 V"
    ilim = "6 A" if topology == "buck" else "2.5 A"
    ev = evaluate(tmp_path, topology, sync=sync, lossless=False,
                  parts=cell_parts(c_in="20 uF", c_out="200 uF"),
                  dead_time="50 ns", surge=surge, ilim=ilim)
    regimes = set(ev.result.regime)
    assert regimes == ({"CCM"} if sync else {"CCM", "DCM"})
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    i_l = ev.result.currents[("inductor", 0)]
    np.testing.assert_allclose(i_l.b[:, -1], i_l.a[:, 0], atol=1e-9 * i_l.peak().max())
    checks = run_checks(ev, load_policy("commercial"))
    assert_one_rating_row_per_stress(checks, ev)


# -- refusals --------------------------------------------------------------------------------

@pytest.mark.parametrize("topology,vin,vo", [("buck", {"min": "10 V", "max": "30 V"}, "12 V"),
                                             ("boost", {"min": "12 V", "max": "50 V"}, "48 V")])
def test_implausible_ratio_is_refused(tmp_path, topology, vin, vo):
    with pytest.raises(InputError, match="only steps"):
        load_design(write(tmp_path, topology, vin=vin, vo=vo))


def test_boost_surge_above_output_is_refused(tmp_path):
    with pytest.raises(InputError, match="input_surge"):
        load_design(write(tmp_path, "boost", surge="50 V"))


def test_rectifier_option_is_refused(tmp_path):
    doc = cell_design("buck")
    doc["converter"]["rectifier"] = "center-tap"
    with pytest.raises(InputError, match="no rectifier option"):
        load_design(write_case(tmp_path, doc, cell_parts()))


@pytest.mark.parametrize("sync,kw,limit", [
    (True, {"dead_time": "200 ns", "fs": "500 kHz"}, "dead times"),
    (False, {}, "minimum off-time"),
    (False, {"max_duty": "80 %"}, "max_duty is 0.8")])
def test_duty_beyond_the_limit_is_refused(tmp_path, sync, kw, limit):
    # boost 12 V -> 80 V needs D ≈ 0.85 and more at the lowest input
    path = write(tmp_path, "boost", sync=sync, vin={"min": "3.5 V", "max": "12 V"},
                 vo="80 V", **kw)
    with pytest.raises(RegulationError, match=limit):
        run(load_design(path))


# -- example designs -------------------------------------------------------------------------

@pytest.mark.parametrize("example,regimes", [("buck-24v-12v-sync", {"CCM"}),
                                             ("boost-12v-48v", {"CCM", "DCM"})])
def test_examples_check(tmp_path, example, regimes):
    """The shipped examples run through `stresscheck check` with nothing failing, and
    their corners show what their comments promise (the synchronous buck's inductor
    current goes negative at light load; the diode boost enters DCM)."""
    import json
    from pathlib import Path

    from stresscheck import cli
    design = Path(__file__).parent.parent / "examples" / example / "design.toml"
    assert cli.main(["check", str(design), "--out", str(tmp_path)]) == 0
    doc = json.loads((tmp_path / "results.json").read_text())
    assert {row["regime"] for row in doc["corners"]} == regimes
    ev = run(load_design(design))
    if example.startswith("buck"):
        assert (ev.result.i_l_start < 0).any() and (ev.result.i_l_start > 0).any()
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    assert_one_rating_row_per_stress(run_checks(ev, load_policy("commercial")), ev)
