"""Buck and boost converters: textbook relations in the lossless limit, the dead-time
relations, regimes, refusals and the shared invariants.

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

import math

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from invariants import (assert_charge_balance, assert_energy_balance,
                        assert_one_rating_row_per_stress)
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError, RegulationError
from stresscheck.policy import load_policy

REL = 1e-6
BUCK_LOADS = {"min": "0.2 A", "max": "5 A"}  # the light load enters DCM (diode)
BOOST_LOADS = {"min": "0.05 A", "max": "2 A"}


def evaluate(tmp_path, topology, *, sync=False, lossless=True, parts=None, **design):
    design.setdefault("io", BUCK_LOADS if topology == "buck" else BOOST_LOADS)
    parts = parts or cell_parts(lossless=lossless, c_in="1 F", c_out="1 F")
    path = write_case(tmp_path, cell_design(topology, sync=sync, **design), parts)
    return run(load_design(path))


def values(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s.values


def columns(ev):
    c = ev.corners
    return (c["input_voltage"], c["output_voltage"], c["output_current"],
            c["switching_frequency"], ev.stage.inductors[0].l)


def k_factor(ev):
    """K = 2L/(R·Ts) of every corner (E&M §5.1)."""
    vin, vo, io, fs, l = columns(ev)
    return 2 * l * fs * io / vo


# -- buck ----------------------------------------------------------------------------------

def test_buck_regimes_and_conversion_ratio(tmp_path):
    ev = evaluate(tmp_path, "buck")
    vin, vo, io, fs, l = columns(ev)
    m = vo / vin
    k = k_factor(ev)
    d_ccm = m
    d_dcm = m * np.sqrt(k / (1 - m))  # M = 2/(1 + √(1 + 4K/D²)) solved for D
    dcm = k < 1 - d_ccm  # boundary K_crit = 1 − D
    assert dcm.any() and (~dcm).any()
    np.testing.assert_array_equal(ev.result.regime == "DCM", dcm)
    np.testing.assert_allclose(ev.result.duty, np.where(dcm, d_dcm, d_ccm), rtol=REL)
    # and the textbook form itself at the DCM corners
    d = ev.result.duty
    np.testing.assert_allclose((vo / vin)[dcm], (2 / (1 + np.sqrt(1 + 4 * k / d ** 2)))[dcm],
                               rtol=REL)


def test_buck_ccm_currents_and_voltages(tmp_path):
    ev = evaluate(tmp_path, "buck")
    vin, vo, io, fs, l = columns(ev)
    ccm = ev.result.regime == "CCM"
    d = vo / vin
    ripple = (vin - vo) * d / (fs * l)
    i_min, i_max = io - ripple / 2, io + ripple / 2
    for ref, q, expected in [
            ("L1", "i_peak", i_max), ("L1", "i_rms", np.sqrt(io ** 2 + ripple ** 2 / 12)),
            ("Q1", "i_peak", i_max),
            ("Q1", "i_rms", np.sqrt(d * (i_min ** 2 + i_min * i_max + i_max ** 2) / 3)),
            ("D1", "i_avg", (1 - d) * io),
            ("D1", "i_rms", np.sqrt((1 - d) * (i_min ** 2 + i_min * i_max + i_max ** 2) / 3)),
            ("C2", "i_ripple_rms", ripple / (2 * math.sqrt(3)))]:
        np.testing.assert_allclose(values(ev, ref, q)[ccm], expected[ccm], rtol=REL,
                                   err_msg=f"{ref} {q}")
    # both semiconductors block the input voltage, at every corner (DCM included)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin, rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), vin, rtol=REL)
    # the source supplies D·I_o; the input capacitor carries the rest of the switch current
    i_sw_rms = values(ev, "Q1", "i_rms")
    np.testing.assert_allclose(values(ev, "C1", "i_ripple_rms")[ccm],
                               np.sqrt(i_sw_rms ** 2 - (d * io) ** 2)[ccm], rtol=REL)


def test_buck_dcm_currents(tmp_path):
    ev = evaluate(tmp_path, "buck")
    vin, vo, io, fs, l = columns(ev)
    dcm = ev.result.regime == "DCM"
    d = ev.result.duty
    i_pk = (vin - vo) * d / (fs * l)  # rises from zero during the on-time
    d2 = d * (vin - vo) / vo  # falls back to zero (volt-second balance)
    np.testing.assert_allclose(values(ev, "L1", "i_peak")[dcm], i_pk[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "i_avg")[dcm], (i_pk * d2 / 2)[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "L1", "i_rms")[dcm],
                               (i_pk * np.sqrt((d + d2) / 3))[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "i_rms")[dcm], (i_pk * np.sqrt(d / 3))[dcm],
                               rtol=REL)
    assert np.all(ev.result.i_l_start[dcm] == 0)


def test_buck_output_ripple(tmp_path):
    """ΔV_pp = ΔI_pp·Ts/(8C) with ESR = 0 (E&M §2.5): at D = 1/2 the capacitor voltage
    is symmetric, so its peak is V_o + ΔV_pp/2 (24 V in, 12 V out)."""
    parts = cell_parts(lossless=True, c_in="1 F", c_out="1000 uF")
    ev = evaluate(tmp_path, "buck", parts=parts, vin="24 V", io={"min": "4 A", "max": "5 A"})
    vin, vo, io, fs, l = columns(ev)
    ripple = (vin - vo) * 0.5 / (fs * l)
    dv = ripple / (8 * fs * 1000e-6)
    # the model keeps the ripple in the inductor voltage, which bends the current by
    # about ΔV_pp/(V_in − V_o) = 8e-5 here (the textbook relation neglects it): 2e-4
    np.testing.assert_allclose(values(ev, "C2", "v_peak") - vo, dv / 2, rtol=2e-4)


def test_buck_synchronous_forced_continuous(tmp_path):
    """No dead time: V_o = D·V_in at every load (CCM relations hold with i_L < 0)."""
    ev = evaluate(tmp_path, "buck", sync=True, dead_time="0 s")
    vin, vo, io, fs, l = columns(ev)
    d = vo / vin
    assert np.all(ev.result.regime == "CCM")
    np.testing.assert_allclose(ev.result.duty, d, rtol=REL)
    ripple = (vin - vo) * d / (fs * l)
    i_min, i_max = io - ripple / 2, io + ripple / 2
    light = i_min < 0
    assert light.any()
    np.testing.assert_allclose(ev.result.i_l_start, i_min, rtol=REL)
    # low side: channel carries −i_L over (1 − D); its peak magnitude is the larger end
    np.testing.assert_allclose(values(ev, "Q2", "i_peak"),
                               np.maximum(np.abs(i_min), i_max), rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "i_rms"),
                               np.sqrt((1 - d) * (i_min ** 2 + i_min * i_max + i_max ** 2) / 3),
                               rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"), vin, rtol=REL)


V_BODY = 0.85 * 1.0  # [V] body-diode v_f0 of the dead-time tests (engine: 0.85·v_sd)
T_DEAD = 100e-9  # [s]


def dead_time_parts(**kw):
    """Lossless, except for the body diodes: v_sd = 1 V, r_sd = 0."""
    parts = cell_parts(lossless=True, c_in="1 F", c_out="1 F", **kw)
    parts["t-fet"]["electrical"].update(v_sd="1 V", r_sd="0 ohm")
    return parts


def test_buck_dead_time(tmp_path):
    """Volt-second balance (E&M §2.2) over the dead times: with i_L > 0 throughout, the
    low side's body diode holds the switch node at −V_F in both dead times,
    D = (V_o + 2·t_d·fs·V_F)/V_in; with i_L < 0 at the end of the low-side interval
    (light load), the second dead time returns the current through the high side's body
    diode, the node sits at V_in + V_F, and D = V_o/V_in − t_d·fs. The high side blocks
    V_in + V_F; at light load the low side does too."""
    ev = evaluate(tmp_path, "buck", sync=True, dead_time="100 ns", parts=dead_time_parts())
    vin, vo, io, fs, l = columns(ev)
    heavy = ev.result.i_l_start > 0
    assert heavy.any() and (~heavy).any()
    expected = np.where(heavy, (vo + 2 * T_DEAD * fs * V_BODY) / vin, vo / vin - T_DEAD * fs)
    np.testing.assert_allclose(ev.result.duty, expected, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin + V_BODY, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"),
                               np.where(heavy, vin, vin + V_BODY), rtol=REL)
    # body-diode charge: about I·t_d per dead time at the current of that edge
    ripple = (vin - vo) * ev.result.duty / (fs * l)
    body = ev.result.body[("freewheel", 0)].mean()
    i_max, i_min = io + ripple / 2, io - ripple / 2
    expected_body = np.where(heavy, T_DEAD * fs * (i_max + i_min), T_DEAD * fs * i_max)
    np.testing.assert_allclose(body, expected_body, rtol=2e-2)  # ramp within t_d: ~1 %


# -- boost ---------------------------------------------------------------------------------

def test_boost_regimes_and_conversion_ratio(tmp_path):
    ev = evaluate(tmp_path, "boost")
    vin, vo, io, fs, l = columns(ev)
    m = vo / vin
    k = k_factor(ev)
    d_ccm = 1 - 1 / m
    d_dcm = np.sqrt(k * m * (m - 1))  # M = (1 + √(1 + 4D²/K))/2 solved for D
    dcm = k < d_ccm * (1 - d_ccm) ** 2  # boundary K_crit = D·(1 − D)²
    assert dcm.any() and (~dcm).any()
    np.testing.assert_array_equal(ev.result.regime == "DCM", dcm)
    np.testing.assert_allclose(ev.result.duty, np.where(dcm, d_dcm, d_ccm), rtol=REL)
    d = ev.result.duty
    np.testing.assert_allclose(m[dcm], ((1 + np.sqrt(1 + 4 * d ** 2 / k)) / 2)[dcm], rtol=REL)


def test_boost_ccm_currents_and_voltages(tmp_path):
    ev = evaluate(tmp_path, "boost")
    vin, vo, io, fs, l = columns(ev)
    ccm = ev.result.regime == "CCM"
    d = 1 - vin / vo
    i_l = io / (1 - d)
    ripple = vin * d / (fs * l)
    i_min, i_max = i_l - ripple / 2, i_l + ripple / 2
    tri = (i_min ** 2 + i_min * i_max + i_max ** 2) / 3
    for ref, q, expected in [
            ("L1", "i_peak", i_max), ("L1", "i_rms", np.sqrt(i_l ** 2 + ripple ** 2 / 12)),
            ("Q1", "i_peak", i_max), ("Q1", "i_rms", np.sqrt(d * tri)),
            ("D1", "i_avg", io), ("D1", "i_peak", i_max), ("D1", "i_rms", np.sqrt((1 - d) * tri)),
            # output capacitor: diode current less the load, rms² = I_D,rms² − I_o²
            ("C2", "i_ripple_rms", np.sqrt((1 - d) * tri - io ** 2)),
            ("C1", "i_ripple_rms", ripple / (2 * math.sqrt(3)))]:
        np.testing.assert_allclose(values(ev, ref, q)[ccm], expected[ccm], rtol=REL,
                                   err_msg=f"{ref} {q}")
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vo, rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), vo, rtol=REL)


def test_boost_dcm_currents(tmp_path):
    ev = evaluate(tmp_path, "boost")
    vin, vo, io, fs, l = columns(ev)
    dcm = ev.result.regime == "DCM"
    d = ev.result.duty
    i_pk = vin * d / (fs * l)
    d2 = d * vin / (vo - vin)
    np.testing.assert_allclose(values(ev, "L1", "i_peak")[dcm], i_pk[dcm], rtol=REL)
    # charge balance: the diode's triangle carries the load current
    np.testing.assert_allclose(values(ev, "D1", "i_avg")[dcm], (i_pk * d2 / 2)[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "i_avg")[dcm], io[dcm], rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "i_rms")[dcm], (i_pk * np.sqrt(d / 3))[dcm],
                               rtol=REL)


def test_boost_output_ripple(tmp_path):
    """ΔV_pp = I_o·D·Ts/C (E&M §2.3): the capacitor alone feeds the load in the
    on-interval and the diode current stays above I_o in the off-interval."""
    from stresscheck.waveforms import capacitor_voltage_samples
    parts = cell_parts(lossless=True, c_in="1 F", c_out="200 uF", l="47 uH")
    ev = evaluate(tmp_path, "boost", parts=parts, io={"min": "1.5 A", "max": "2 A"})
    vin, vo, io, fs, l = columns(ev)
    d = ev.result.duty
    assert np.all(ev.result.i_l_start > io)  # the diode current stays above I_o
    v = capacitor_voltage_samples(ev.result.currents[("output-capacitor", 0)], 200e-6, 0.0, vo)
    # the ripple (< 1e-3 of V_o) bends the inductor current slightly: 1e-4
    np.testing.assert_allclose(np.ptp(v, axis=(1, 2)), io * d / (fs * 200e-6), rtol=1e-4)
    np.testing.assert_allclose(values(ev, "C2", "v_peak"), v.max(axis=(1, 2)), rtol=1e-12)


def test_boost_synchronous_forced_continuous(tmp_path):
    ev = evaluate(tmp_path, "boost", sync=True, dead_time="0 s")
    vin, vo, io, fs, l = columns(ev)
    d = 1 - vin / vo
    assert np.all(ev.result.regime == "CCM")
    np.testing.assert_allclose(ev.result.duty, d, rtol=REL)
    ripple = vin * d / (fs * l)
    i_min = io / (1 - d) - ripple / 2
    assert (i_min < 0).any()
    np.testing.assert_allclose(ev.result.i_l_start, i_min, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"), vo, rtol=REL)


def test_boost_dead_time(tmp_path):
    """Volt-second balance over the dead times: with i_L > 0 throughout, the rectifier's
    body diode holds the switch node at V_o + V_F in both dead times,
    D = 1 − (V_in − 2·t_d·fs·V_F)/V_o; with i_L < 0 at the end of the rectifier interval,
    the low side's body diode holds it at −V_F in the second, D = 1 − V_in/V_o − t_d·fs.
    The low side blocks V_o + V_F; at light load the rectifier does too."""
    ev = evaluate(tmp_path, "boost", sync=True, dead_time="100 ns", parts=dead_time_parts())
    vin, vo, io, fs, l = columns(ev)
    heavy = ev.result.i_l_start > 0
    assert heavy.any() and (~heavy).any()
    expected = np.where(heavy, 1 - (vin - 2 * T_DEAD * fs * V_BODY) / vo,
                        1 - vin / vo - T_DEAD * fs)
    np.testing.assert_allclose(ev.result.duty, expected, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vo + V_BODY, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"),
                               np.where(heavy, vo, vo + V_BODY), rtol=REL)


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

def write(tmp_path, topology, **design):
    return write_case(tmp_path, cell_design(topology, **design), cell_parts())


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
