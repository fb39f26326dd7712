"""The engine as an orchestrator: the electro-thermal loop, runaway, a missing thermal
path, and the per-device loss terms it hands on.

Relations checked:
  steady-state thermal chain T_j = T_a + P·R_th (common practice);
  R_DS(on) linear in T_j, R(T) = R25·(1 + tc·(T − 25 °C)) (common practice: the straight
  line through the datasheet's normalised R_DS(on)-vs-T_j curve);
  channel conduction loss P = R_DS(on)·I_rms² (Erickson & Maksimović, Fundamentals of
  Power Electronics, 2nd ed., §3.1 — from memory).
With the current frozen, those give the fixed point in closed form
  T_j = (T_a + R25·(1 − 25·tc)·I²·R_th) / (1 − g),   g = R25·tc·I²·R_th,
which exists only for g < 1 (the loop gain): beyond it the junction runs away.
"""

import numpy as np

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from stresscheck.design import load_design
from stresscheck.devices import total_loss
from stresscheck.engine import THERMAL_TOL, run

R25, TC = 0.01, 0.005  # [ohm], [1/K]: the test MOSFET of builders_buck_boost


def buck(tmp_path, *, switch=None, sync=False):
    """A buck 20-30 V -> 12 V; ``switch`` overrides the thermal keys of Q1's entry."""
    design = cell_design("buck", sync=sync)
    if switch is not None:
        entry = design["components"][0]
        entry.pop("r_th_ca")
        entry.update(switch)
    return run(load_design(write_case(tmp_path, design, cell_parts())))


def stress(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s


def frozen_fixed_point(ev, r_th):
    """(T_j [degC], loop gain g [1]) of Q1 at every corner, with its final current."""
    i_sq = ev.result.currents[("switch", 0)].rms() ** 2
    t_a = ev.corners["ambient_temperature"]
    g = R25 * TC * i_sq * r_th
    return (t_a + R25 * (1 - 25 * TC) * i_sq * r_th) / (1 - g), g


def test_loop_reaches_the_fixed_point(tmp_path):
    """A junction hot enough for the loop to matter (g up to about 0.4, T_j up to 145 K
    above ambient) settles on the closed-form fixed point. Tolerance: the loop stops when
    a pass moves T_j less than THERMAL_TOL, so the fixed point lies within
    THERMAL_TOL·g/(1 − g) < THERMAL_TOL of it; the last step of R_DS(on) also moves the
    duty and so I² a little. 2·THERMAL_TOL bounds both (3e-4 K measured)."""
    r_th = 500.0
    ev = buck(tmp_path, switch={"r_th_ja": f"{r_th} K/W"})
    t_j = stress(ev, "Q1", "t_j").values
    expected, g = frozen_fixed_point(ev, r_th)
    assert 0.05 < g.max() < 0.5  # the loop has work to do, and converges
    assert (t_j - ev.corners["ambient_temperature"]).max() > 20.0
    np.testing.assert_allclose(t_j, expected, rtol=0, atol=2 * THERMAL_TOL)
    assert not ev.runaway[("switch", 0)].any()


def test_runaway_where_the_loop_gain_exceeds_one(tmp_path):
    """Corners with g well above 1 run away (t_j infinite, a warning), corners with g
    well below 1 keep a finite fixed point. g is taken with the lossless channel current
    I_o·√D, D = V_o/V_in (triangular ripple neglected: it adds under 1 % to I²), hence
    the margins 1.5 and 0.5 around the boundary."""
    r_th = 3000.0
    ev = buck(tmp_path, switch={"r_th_ja": f"{r_th} K/W"})
    c = ev.corners
    g = R25 * TC * c["output_current"] ** 2 * (c["output_voltage"] / c["input_voltage"]) \
        * r_th
    assert (g > 1.5).any() and (g < 0.5).any()
    t_j = stress(ev, "Q1", "t_j").values
    runaway = ev.runaway[("switch", 0)]
    assert runaway[g > 1.5].all() and np.isinf(t_j[g > 1.5]).all()
    assert not runaway[g < 0.5].any() and np.isfinite(t_j[g < 0.5]).all()
    assert any("thermal runaway" in n["text"] for n in ev.notes)


def test_no_thermal_path(tmp_path):
    """Without a thermal path T_j is not computed (NaN, with the reason) and R_DS(on) is
    taken at T_j,max = 175 °C: R25·(1 + tc·150 K) = 17.5 mΩ."""
    ev = buck(tmp_path, switch={})
    s = stress(ev, "Q1", "t_j")
    assert np.isnan(s.values).all() and s.reason == "no thermal path given"
    np.testing.assert_allclose(ev.stage.devices[("switch", 0)].r_on, R25 * (1 + TC * 150))
    assert any(n["text"].startswith("Q1: no thermal path") for n in ev.notes)


def test_loss_terms_add_up(tmp_path):
    """Each ref's named loss terms add up to its p_loss row, and the position totals to
    the evaluation's p_loss (the synchronous buck's Q2 also conducts through its body
    diode in the dead time, so it carries two terms)."""
    ev = buck(tmp_path, sync=True)
    assert set(ev.losses["Q2"]) == {"conduction", "body_diode"}
    assert set(ev.losses["L1"]) == {"copper"} and set(ev.losses["C2"]) == {"esr"}
    p_sum = np.zeros(ev.corners.size)
    for ref, terms in ev.losses.items():
        p = total_loss(terms, ev.corners.size)
        if ref.startswith("Q"):
            np.testing.assert_array_equal(p, stress(ev, ref, "p_loss").values)
        p_sum += p  # every position here is one device
    np.testing.assert_allclose(ev.p_loss, p_sum, rtol=1e-12)
    for terms in ev.losses.values():
        for values in terms.values():
            assert values.shape == (ev.corners.size,) and (values >= 0).all()


def test_passive_hot_spot_from_its_own_loss(tmp_path):
    """The inductor's hot spot with its copper loss at that temperature: it takes part in
    the loop (the DCR rises 0.393 %/K, IEC 60028), so T = T_a + R_th·P at the fixed point
    (to the loop's 1 mK), and T equals the closed form of the linear equation
    T = T_a + R_th·P_25·(1 + a·(T − 25 °C)), a = 0.00393/(1 + 0.00393·5 K):
    T = (T_a + R_th·P_25·(1 − 25 °C·a))/(1 − R_th·P_25·a), with the sheet's R_th of
    20 K/W and P_25 = DCR·I_rms² (the sheet's DCR taken at 25 °C)."""
    ev = buck(tmp_path)
    p = ev.losses["L1"]["copper"]
    t_a = ev.corners["ambient_temperature"]
    t = stress(ev, "L1", "t_hotspot").values
    np.testing.assert_allclose(t, t_a + 20.0 * p, atol=2e-3)
    dcr = ev.design.by_role("inductor")[0].part.electrical["dcr"]
    p25 = dcr * ev.result.currents[("inductor", 0)].rms() ** 2
    a = 0.00393 / (1 + 0.00393 * 5.0)
    closed = (t_a + 20.0 * p25 * (1 - 25.0 * a)) / (1 - 20.0 * p25 * a)
    np.testing.assert_allclose(t, closed, atol=2e-3)