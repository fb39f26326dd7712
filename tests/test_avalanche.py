"""Avalanche of a MOSFET at an unclamped inductive turn-off: the energy relation, the
rating at the starting junction temperature, and the rows of a flyback whose clamp sits
above the switch's breakdown voltage."""

from __future__ import annotations

import numpy as np
import pytest

from builders import write_case
from builders_flyback import flyback_design, flyback_parts
from stresscheck.avalanche import uis_energy
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.parts import Curve
from stresscheck.policy import load_policy
from stresscheck.ratings import e_as_scale


def test_uis_energy_hand_worked():
    """E_AS = ½·L·I_AS²·BV_DSS/(BV_DSS − V_DD): the relation of the makers' MOSFET FAQ
    "How to obtain avalanche energy" (avalanche test circuit, Figure 1-2). Hand-worked:
    L = 1 mH, I_AS = 10 A, BV = 120 V, V_DD = 60 V → ½·1e-3·100·120/60 = 0.1 J; with
    V_DD = 0 the inductor's own ½·L·I² = 0.05 J. Exact arithmetic: 1e-12 relative."""
    assert uis_energy(1e-3, 10.0, 120.0, 60.0) == pytest.approx(0.1, rel=1e-12)
    assert uis_energy(1e-3, 10.0, 120.0, 0.0) == pytest.approx(0.05, rel=1e-12)
    # the supply's share grows without bound as V_DD approaches the breakdown voltage
    assert uis_energy(1e-3, 10.0, 120.0, 119.0) == pytest.approx(0.05 * 120.0, rel=1e-12)
    assert np.isnan(uis_energy(1e-3, 10.0, 120.0, 120.0))


def test_e_as_from_the_sheet_curve_s23():
    """One maker's E_AS-vs-starting-temperature curve reads 64 % of the 25 °C value at
    50 °C (docs/derating-sources.md §2, S23): a sheet giving that point gets 0.64 there,
    and the straight line between its points elsewhere (0.82 at 37.5 °C)."""
    ratings = {"t_j_max": 150.0,
               "e_as_temperature_multipliers": Curve((25.0, 50.0), (1.0, 0.64))}
    got = e_as_scale(ratings, np.array([25.0, 37.5, 50.0]))
    assert got == pytest.approx([1.0, 0.82, 0.64], rel=1e-12)


def test_e_as_linear_default_hand_worked():
    """Without a curve: linear from 1 at 25 °C to 0 at t_j_max (common practice, from
    memory). T_j,max = 150 °C: (150 − 50)/(150 − 25) = 0.8 at 50 °C — above the 0.64 of
    the S23 part's own curve, so the linear default is not conservative for every part
    (README says so: give the sheet's curve). Held at 1 below 25 °C, 0 at and above
    T_j,max."""
    got = e_as_scale({"t_j_max": 150.0}, np.array([-40.0, 50.0, 150.0, 170.0]))
    assert got == pytest.approx([1.0, 0.8, 0.0, 0.0], rel=1e-12)
    assert got[1] > 0.64


def flyback_case(tmp_path, clamp_voltage, e_as="1 mJ", **parts_kw):
    """The test flyback (36-75 V in, n = 2, 200 V switch) with 1 uH leakage and a
    voltage clamp ``clamp_voltage`` above the input rail."""
    parts = flyback_parts(l_leak="1 uH", **parts_kw)
    if e_as:
        parts["t-fet"]["ratings"]["e_as"] = e_as
    design = flyback_design()
    if clamp_voltage:
        design["converter"]["clamp"] = {"kind": "voltage", "voltage": clamp_voltage}
    ev = run(load_design(write_case(tmp_path, design, parts)))
    checks = {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}
    return ev, checks


def rows(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s


def test_clamp_above_breakdown_avalanches_the_switch(tmp_path):
    """A 180 V clamp on a 200 V switch fed from up to 75 V: V_in + V_clamp reaches the
    breakdown voltage (200 V, no temperature coefficient on the sheet) at the corners
    with V_in >= 20 V — every corner. The energy per turn-off is the UIS relation with
    the leakage (1 uH), the switch current at turn-off and the ideal off-state voltage
    (V_in + reflected) as V_DD; checked here against the relation evaluated on the
    model's own currents (the relation's arithmetic is tested above)."""
    ev, checks = flyback_case(tmp_path, "180 V")
    e = rows(ev, "Q1", "e_avalanche").values
    i_pk = ev.result.currents[("switch", 0)].peak()
    ideal = ev.result.v_block[("switch", 0)]
    expect = 0.5 * 1e-6 * i_pk ** 2 * 200.0 / (200.0 - ideal)
    assert np.all(e > 0)
    assert e == pytest.approx(expect, rel=1e-12)
    p = rows(ev, "Q1", "p_avalanche").values
    assert p == pytest.approx(e * 150e3, rel=1e-12)
    c = checks[("Q1", "e_avalanche")]
    assert c.status in ("pass", "marginal", "fail") and "avalanche at" in c.note
    # the rating at the starting junction temperature: 1 mJ·(175 − T_j)/(175 − 25)
    t_j = rows(ev, "Q1", "t_j").values
    k = ev.corners.ids.index(c.corner)
    assert c.allowed == pytest.approx(1e-3 * (175.0 - t_j[k]) / 150.0, rel=1e-9)


def test_clamp_below_breakdown_no_avalanche(tmp_path):
    """A 100 V clamp: at most 175 V on the 200 V switch: 0 J at every corner (computed,
    a pass against the sheet's e_as), and a pass without e_as too (nothing to rate)."""
    ev, checks = flyback_case(tmp_path / "a", "100 V")
    assert np.all(rows(ev, "Q1", "e_avalanche").values == 0.0)
    assert checks[("Q1", "e_avalanche")].status == "pass"
    assert "no avalanche" in checks[("Q1", "e_avalanche")].note
    _, bare = flyback_case(tmp_path / "b", "100 V", e_as=None)
    c = bare[("Q1", "e_avalanche")]
    assert c.status == "pass" and c.stress == 0.0 and "no 'e_as' rating needed" in c.note


def test_avalanche_without_rating_is_unrated(tmp_path):
    ev, checks = flyback_case(tmp_path, "180 V", e_as=None)
    c = checks[("Q1", "e_avalanche")]
    assert c.status == "unrated" and c.stress > 0


def test_spike_not_computed_is_not_a_pass(tmp_path):
    """Leakage without a clamp or an allowance: the peak drain voltage is not computed,
    so neither is the avalanche energy."""
    _, checks = flyback_case(tmp_path, None)
    assert checks[("Q1", "v_peak")].status == "not-computed"
    c = checks[("Q1", "e_avalanche")]
    assert c.status == "not-computed" and "leakage spike" in c.note


def test_no_spike_with_e_as_passes_at_zero(tmp_path):
    """No leakage on the transformer (no spike) and e_as on the sheet: 0 J, and no
    p_avalanche row (no spike model)."""
    parts = flyback_parts()
    parts["t-fet"]["ratings"]["e_as"] = "1 mJ"
    ev = run(load_design(write_case(tmp_path, flyback_design(), parts)))
    assert np.all(rows(ev, "Q1", "e_avalanche").values == 0.0)
    assert not [s for s in ev.stresses if s.quantity == "p_avalanche"]
