"""Ratings at each corner's temperature (stresscheck.ratings): inductor saturation current
at its hot spot, MOSFET and diode breakdown voltage at the junction temperature.

Sources: the makers' i_sat-vs-temperature and V_(BR)DSS-vs-T_j curves, taken as straight
lines through the sheet's points (common practice); silicon's breakdown voltage rises
about 0.1 %/K, so at −40 °C it is about 6.5 % below the 25 °C rating (common practice,
the figure of the issue).
"""

from __future__ import annotations

import numpy as np
import pytest

from builders import bridge_design, bridge_parts, write_case
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.policy import load_policy
from stresscheck.ratings import breakdown_scale, i_sat_scale


def test_i_sat_straight_line_between_the_sheet_points():
    r = {"i_sat": 10.0, "i_sat_hot": 8.0, "i_sat_hot_temperature": 100.0}
    np.testing.assert_allclose(i_sat_scale(r, np.array([-40.0, 25.0, 62.5, 100.0, 137.5])),
                               [1.0, 1.0, 0.9, 0.8, 0.7], rtol=1e-12)


def test_silicon_breakdown_at_minus_40():
    """0.1 %/K: 6.5 % below the 25 °C rating at −40 °C, 7.5 % above at 100 °C."""
    np.testing.assert_allclose(breakdown_scale(1e-3, np.array([-40.0, 25.0, 100.0])),
                               [0.935, 1.0, 1.075], rtol=1e-12)


def case(tmp_path, **ratings):
    parts = bridge_parts()
    for pid, keys in ratings.items():
        parts[pid]["ratings"].update(keys)
    design = bridge_design(ambient={"min": "-40 degC", "max": "70 degC"})
    ev = run(load_design(write_case(tmp_path, design, parts)))
    return ev, {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}


def test_inductor_i_peak_against_i_sat_at_its_hot_spot(tmp_path):
    ev, checks = case(tmp_path, **{"t-ind": {"i_sat_hot": "30 A",
                                              "i_sat_hot_temperature": "100 degC"}})
    _, plain = case(tmp_path / "plain")
    c, p = checks[("L1", "i_peak")], plain[("L1", "i_peak")]
    (t_hs,) = [s for s in ev.stresses if s.ref == "L1" and s.quantity == "t_hotspot"]
    i = ev.corners.ids.index(c.corner)
    expected = 60.0 * (1 + (30.0 / 60.0 - 1) * (max(t_hs.values[i], 25.0) - 25) / 75)
    assert c.rating == pytest.approx(expected, rel=1e-9)
    assert c.allowed == pytest.approx(p.allowed / 60.0 * expected, rel=1e-9)
    assert c.ratio > p.ratio and "i_sat at" in c.note


def test_mosfet_breakdown_at_the_junction_temperature(tmp_path):
    ev, checks = case(tmp_path, **{"t-fet": {"v_ds_tc": "0.1 %/K"}})
    _, plain = case(tmp_path / "plain")
    c, p = checks[("Q1", "v_peak")], plain[("Q1", "v_peak")]
    # the governing corner moves to the cold end, where the rating is lowest
    i = ev.corners.ids.index(c.corner)
    (tj,) = [s for s in ev.stresses if s.ref == "Q1" and s.quantity == "t_j"]
    assert c.rating == pytest.approx(200.0 * (1 + 1e-3 * (tj.values[i] - 25)), rel=1e-9)
    assert c.ratio >= p.ratio
    assert ev.corners["ambient_temperature"][i] == -40.0


def test_cold_silicon_without_coefficient_is_flagged(tmp_path):
    ev, _ = case(tmp_path)
    assert any("no v_ds_tc" in n["text"] for n in ev.notes)


def test_i_sat_hot_needs_its_temperature(tmp_path):
    with pytest.raises(InputError, match="go together"):
        case(tmp_path, **{"t-ind": {"i_sat_hot": "30 A"}})


# --- capacitors: ripple multipliers and DC bias ----------------------------------------
# Sources: practice notes §5 (shared reference "practice.md"): allowed ripple = rated
# ripple × frequency multiplier × temperature multiplier, series-specific tables from the
# capacitor makers' application notes; the table values below are of the usual shape of
# a 105 °C aluminium series rated at 100 kHz (from memory, not one maker's table). Class-2
# ceramics keep only part of their capacitance under DC bias (practice notes §2, the
# makers' capacitance-vs-DC-bias curves; the curve below is invented, of the usual shape).

FREQ = {"120 Hz": 0.5, "1 kHz": 0.7, "10 kHz": 0.9, "100 kHz": 1.0}
TEMP = {"65 degC": 1.7, "85 degC": 1.4, "105 degC": 1.0}


def test_curve_reads_straight_lines_and_the_lowest_beyond():
    from stresscheck.parts import Curve
    cur = Curve((100.0, 1e3, 1e4), (0.5, 0.8, 0.7))
    np.testing.assert_allclose(cur(np.array([50.0, 550.0, 2e4])), [0.5, 0.65, 0.7])
    # from 550 Hz upwards the table dips to 0.7 at 10 kHz: the bound takes it
    np.testing.assert_allclose(cur.lowest_from(np.array([550.0, 2e4])), [0.65, 0.7])


def cap_case(tmp_path, cout=None, cin=None):
    parts = bridge_parts()
    if cout:
        parts["t-cout"]["ratings"].update(cout)
    if cin:
        parts["t-cin"]["electrical"].update(cin)
    design = bridge_design()
    ev = run(load_design(write_case(tmp_path, design, parts)))
    return ev, {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}


def test_ripple_allowed_with_frequency_and_temperature_multipliers(tmp_path):
    ev, checks = cap_case(tmp_path, cout={"ripple_frequency_multipliers": FREQ,
                                          "ripple_temperature_multipliers": TEMP})
    _, plain = cap_case(tmp_path / "plain")
    c, p = checks[("C1", "i_ripple_rms")], plain[("C1", "i_ripple_rms")]
    i = ev.corners.ids.index(c.corner)
    t_a = ev.corners["ambient_temperature"][i]
    m_t = np.interp(t_a, [65, 85, 105], [1.7, 1.4, 1.0])  # 1.7 below 65 °C (held flat)
    m_f = 1.0  # 100 kHz switching: the table is flat at 1 from 100 kHz up
    assert c.allowed == pytest.approx(p.allowed * m_f * m_t, rel=1e-12)
    assert c.rating == pytest.approx(10.0 * m_f * m_t, rel=1e-12)


def test_ripple_at_a_low_switching_frequency(tmp_path):
    """At 1 kHz (an artificial stage) the frequency multiplier 0.7 applies."""
    from stresscheck.ratings import ripple_scale
    from stresscheck.parts import parse_curve
    from stresscheck.schema import PART_KEYS
    keys = PART_KEYS["capacitor"]["ratings"]
    r = {"ripple_frequency_multipliers": parse_curve(FREQ, keys[
        "ripple_frequency_multipliers"], "sheet", "k"),
         "ripple_temperature_multipliers": parse_curve(TEMP, keys[
             "ripple_temperature_multipliers"], "sheet", "k")}
    np.testing.assert_allclose(ripple_scale(r, np.array([1e3, 1e3]), np.array([85.0, 95.0])),
                               [0.7 * 1.4, 0.7 * 1.2], rtol=1e-12)


def test_ceramic_capacitance_under_dc_bias(tmp_path):
    ev, _ = cap_case(tmp_path, cin={"capacitance_dc_bias": {"0 V": 1.0, "100 V": 0.5}})
    plain, _ = cap_case(tmp_path / "plain")
    v_in = ev.corners["input_voltage"]
    np.testing.assert_allclose(ev.stage.capacitors[("input-capacitor", 0)].c,
                               plain.stage.capacitors[("input-capacitor", 0)].c
                               * (1 - 0.5 * v_in / 100), rtol=1e-12)
    # less capacitance, more ripple voltage on the bus
    (v, vp) = [[s.values for s in e.stresses if s.ref == "C2" and s.quantity == "v_peak"][0]
               for e in (ev, plain)]
    assert (v - v_in > vp - v_in).all()


def test_bad_curve_names_the_key(tmp_path):
    with pytest.raises(InputError, match="ripple_frequency_multipliers"):
        cap_case(tmp_path, cout={"ripple_frequency_multipliers": {"fast": 1.0}})
