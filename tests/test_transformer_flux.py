"""Transformer peak flux at the worst core area, and its saturation flux density at the
hot spot (``devices.transformer.Transformer.area_factor``, ``ratings.hot_scale``).

Relations, by hand:
- forward: B_peak = V_in·t_on/(N_p·A_e) from zero flux (Faraday's law v = N·A_e·dB/dt;
  Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed., §6.3.3 for the
  forward's volt-seconds — from memory), here at the low end of the core area's
  tolerance A_e,min;
- flyback: B_peak = L_m·I_m,pk/(N_p·A_e) (flux linkage N·A_e·B = L_m·i, same book,
  §13.1 — section from memory), at each corner's L_m (a corner axis) and A_e,min;
- B_sat falling with temperature: straight line through the sheet's two points (a
  ferrite's B_sat-vs-T curve taken as a line, common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

from builders import write_case
from builders_flyback import flyback_design, flyback_parts
from builders_forward import N_P, REL, case, values
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.policy import load_policy
from stresscheck.spice.circuit import circuit_at

A_NOM, TOL = 60e-6, 0.10  # [m^2], [1]
TOLERANT = {"nom": "60 mm^2", "tolerance": "10 %"}


def forward_eval(tmp_path, core_area="60 mm^2", ratings=None):
    design, parts = case("forward", c_in="1 F", core_area=core_area)
    parts["t-xfmr"]["ratings"].update(ratings or {})
    return run(load_design(write_case(tmp_path, design, parts)))


def test_forward_b_peak_at_the_lowest_core_area(tmp_path):
    ev = forward_eval(tmp_path, TOLERANT)
    c = ev.corners
    t_on = ev.result.duty / c["switching_frequency"]
    a_min = A_NOM * (1 - TOL)
    np.testing.assert_allclose(values(ev, "T1", "b_peak"),
                               c["input_voltage"] * t_on / (N_P * a_min), rtol=REL)
    (row,) = [s for s in ev.stresses if s.ref == "T1" and s.quantity == "b_peak"]
    assert "lowest core_area" in row.note
    plain = forward_eval(tmp_path / "plain")
    np.testing.assert_allclose(values(ev, "T1", "b_peak"),
                               values(plain, "T1", "b_peak") / (1 - TOL), rtol=1e-12)
    # the other stresses (and the core loss, taken at the nominal area) do not move
    for s in plain.stresses:
        if s.quantity != "b_peak":
            np.testing.assert_array_equal(values(ev, s.ref, s.quantity), s.values)
    # ngspice's circuit measures its flux at the same area
    assert circuit_at(ev, 0).core_area == pytest.approx(a_min)


def test_flyback_b_peak_at_each_magnetizing_inductance_and_the_lowest_area(tmp_path):
    parts = flyback_parts(lossless=True, c_in="1 F", c_out="1 F", l_m_tol="10 %",
                          core_area=TOLERANT)
    ev = run(load_design(write_case(tmp_path, flyback_design(), parts)))
    lm = ev.corners["T1.magnetizing_inductance"]
    np.testing.assert_allclose(sorted(set(lm)), [90e-6, 110e-6])
    expected = lm * ev.result.i_m_peak / (20 * A_NOM * (1 - TOL))
    np.testing.assert_allclose(values(ev, "T1", "b_peak"), expected, rtol=1e-4)


def test_b_peak_against_b_sat_at_the_hot_spot(tmp_path):
    ev = forward_eval(tmp_path, ratings={"b_sat_hot": "280 mT",
                                         "b_sat_hot_temperature": "100 degC"})
    plain = forward_eval(tmp_path / "plain")
    policy = load_policy("commercial")
    check = {(c.ref, c.quantity): c for c in run_checks(ev, policy)}[("T1", "b_peak")]
    base = {(c.ref, c.quantity): c for c in run_checks(plain, policy)}[("T1", "b_peak")]
    i = ev.corners.ids.index(check.corner)
    t_hs = values(ev, "T1", "t_hotspot")[i]
    assert t_hs > 25.0
    expected = 0.350 * (1 + (0.280 / 0.350 - 1) * (t_hs - 25.0) / 75.0)
    assert check.rating == pytest.approx(expected, rel=1e-9)
    assert check.ratio > base.ratio
    assert "b_sat at" in check.note


@pytest.mark.parametrize("ratings, key, words", [
    ({"b_sat_hot": "280 mT"}, "b_sat_hot", "go together"),
    ({"b_sat_hot": "280 mT", "b_sat_hot_temperature": "20 degC"},
     "b_sat_hot_temperature", "above 25 degC"),
    ({"b_sat_hot": "0 mT", "b_sat_hot_temperature": "100 degC"}, "b_sat_hot", ""),
])
def test_b_sat_hot_input_errors(tmp_path, ratings, key, words):
    with pytest.raises(InputError) as err:
        forward_eval(tmp_path, ratings=ratings)
    assert key in str(err.value) and words in str(err.value)
