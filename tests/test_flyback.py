"""Flyback stresses: textbook relations in the lossless limit, the CCM/DCM boundary,
duty limit, refusals and the shared invariants; the synchronous rectifier (forced
continuous conduction, dead time with the body diode).

Source for the ideal relations: R. W. Erickson and D. Maksimović, *Fundamentals of Power
Electronics*, 2nd ed., §6.3.4 (the flyback as a transformer-isolated buck-boost) and ch. 5
(discontinuous conduction mode of the buck-boost: M = D/sqrt(K), K = 2L/(R·Ts), CCM
where K > K_crit = (1 − D)²) — from memory. In our notation, n = N_s/N_p, L_m referred to
the primary, R = V_o/I_o:
  CCM:  V_o = V_in·n·D/(1 − D)
  DCM:  V_o = V_in·D·sqrt(R/(2·L_m·fs))         (the buck-boost result with L = L_m
        on the primary; the turns ratio drops out because the energy per cycle does not
        depend on it)
  boundary: K = 2·n²·L_m·fs/R = (1 − D)², i.e. I_o,crit = V_in·D·(1 − D)/(2·n·L_m·fs)
  switch V_in + V_o/n, rectifier V_o + n·V_in; currents from the triangular or
  trapezoidal magnetizing current (rms of a ramp, same book appendix A).

The lossless limit: every resistance ~0 (R_DS(on) = 1 nΩ), v_f0 = 0, input and output
banks of 1 F each (so their ripple is below 1e-5 of the voltages). Tolerance 1e-4
relative: the relations are exact there, the margin covers the residual ripple only.
"""

import json
import math

import numpy as np
import pytest

from builders import write_case
from builders_flyback import flyback_design, flyback_parts
from invariants import (assert_charge_balance, assert_energy_balance,
                        assert_one_rating_row_per_stress)
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError, RegulationError
from stresscheck.policy import load_policy

REL = 1e-4
N = 0.5  # N_s/N_p of the default test transformer (10/20)
L_M = 100e-6  # [H]
A_E = 60e-6  # [m^2]


def lossless_eval(tmp_path, **design):
    parts = flyback_parts(lossless=True, c_in="1 F", c_out="1 F")
    path = write_case(tmp_path, flyback_design(**design), parts)
    return run(load_design(path))


def values(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s.values


def envelope(ev):
    c = ev.corners
    return (c["input_voltage"], c["output_voltage"], c["output_current"],
            c["switching_frequency"])


def test_both_regimes_are_present(tmp_path):
    # 36-75 V to 12 V at 0.2-2 A with 100 uH: the CCM boundary lies between the loads.
    ev = lossless_eval(tmp_path)
    assert set(ev.result.regime) == {"CCM", "DCM"}


def test_ccm_conversion_ratio(tmp_path):
    ev = lossless_eval(tmp_path)
    vin, vo, _, _ = envelope(ev)
    ccm = ev.result.regime == "CCM"
    d = ev.result.duty
    np.testing.assert_allclose((vin * N * d / (1 - d))[ccm], vo[ccm], rtol=REL)


def test_dcm_conversion_ratio(tmp_path):
    ev = lossless_eval(tmp_path)
    vin, vo, io, fs = envelope(ev)
    dcm = ev.result.regime == "DCM"
    r_load = vo / io
    expected = vin * ev.result.duty * np.sqrt(r_load / (2 * L_M * fs))
    np.testing.assert_allclose(expected[dcm], vo[dcm], rtol=REL)


@pytest.mark.parametrize("share,regime", [(0.98, "DCM"), (1.02, "CCM")])
def test_ccm_dcm_boundary(tmp_path, share, regime):
    """Either side of I_o,crit = V_in·D·(1 − D)/(2·n·L_m·fs), D the CCM duty."""
    vin, vo, fs = 48.0, 12.0, 150e3
    d = vo / (vo + N * vin)
    i_crit = vin * d * (1 - d) / (2 * N * L_M * fs)
    io = f"{share * i_crit:.9g} A"
    ev = lossless_eval(tmp_path, vin="48 V", io=io)
    assert set(ev.result.regime) == {regime}
    # K = 2·n²·L_m·fs/R against K_crit = (1 − D)², the same statement in the book's form
    k = 2 * N ** 2 * L_M * fs / (vo / (share * i_crit))
    assert (k > (1 - d) ** 2) == (regime == "CCM")


def test_at_the_boundary_both_relations_hold(tmp_path):
    # Exactly at the boundary the CCM and DCM conversion ratios give the same duty.
    vin, vo, fs = 48.0, 12.0, 150e3
    d = vo / (vo + N * vin)
    i_crit = vin * d * (1 - d) / (2 * N * L_M * fs)
    ev = lossless_eval(tmp_path, vin="48 V", io=f"{i_crit:.12g} A")
    np.testing.assert_allclose(ev.result.duty, d, rtol=REL)
    dcm_duty = vo / vin / math.sqrt(vo / i_crit / (2 * L_M * fs))
    np.testing.assert_allclose(ev.result.duty, dcm_duty, rtol=REL)
    np.testing.assert_allclose(ev.result.i_m_start, 0.0, atol=REL * i_crit)


def test_voltage_stresses(tmp_path):
    ev = lossless_eval(tmp_path)
    vin, vo, _, _ = envelope(ev)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin + vo / N, rtol=REL)
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), vo + N * vin, rtol=REL)
    np.testing.assert_allclose(values(ev, "C1", "v_peak"), vin, rtol=REL)
    np.testing.assert_allclose(values(ev, "C2", "v_peak"), vo, rtol=REL)


def test_ccm_currents(tmp_path):
    ev = lossless_eval(tmp_path)
    vin, vo, io, fs = envelope(ev)
    ccm = ev.result.regime == "CCM"
    d = vo / (vo + N * vin)
    # magnetizing current: mean over the off-time carries the load, n·I_o/(1 − D),
    # ripple V_in·D/(fs·L_m) (volt-seconds of the on-time)
    mid = N * io / (1 - d)
    ripple = vin * d / (fs * L_M)
    i1, i2 = mid - ripple / 2, mid + ripple / 2
    trap = (i1 ** 2 + i1 * i2 + i2 ** 2) / 3  # mean square of a ramp i1 -> i2
    expect = {
        ("Q1", "i_peak"): i2,
        ("Q1", "i_rms"): np.sqrt(d * trap),
        ("D1", "i_avg"): io,
        ("D1", "i_peak"): i2 / N,
        ("D1", "i_rms"): np.sqrt((1 - d) * trap) / N,
        # the output bank carries i_s − I_o, the input bank I_dc − i_p (I_dc = D·mid)
        ("C2", "i_ripple_rms"): np.sqrt((1 - d) * trap / N ** 2 - io ** 2) / 2,  # 2 caps
        ("C1", "i_ripple_rms"): np.sqrt(d * trap - (d * mid) ** 2),
        ("T1", "b_peak"): L_M * i2 / (20 * A_E),
    }
    for (ref, q), x in expect.items():
        np.testing.assert_allclose(values(ev, ref, q)[ccm], x[ccm], rtol=REL, err_msg=ref + q)


def test_dcm_currents(tmp_path):
    ev = lossless_eval(tmp_path)
    vin, vo, io, fs = envelope(ev)
    dcm = ev.result.regime == "DCM"
    d = ev.result.duty
    i_pk = vin * d / (fs * L_M)  # from zero over the on-time
    d2 = 2 * N * io / i_pk  # secondary triangle of height I_pk/n carries I_o
    vin, vo, io, fs, d, i_pk, d2 = (x[dcm] for x in (vin, vo, io, fs, d, i_pk, d2))
    # volt-second balance: V_in·D = (V_o/n)·D_2 (Faraday's law on the magnetizing inductance)
    np.testing.assert_allclose(vin * d, vo / N * d2, rtol=REL)
    expect = {
        ("Q1", "i_peak"): i_pk,
        ("Q1", "i_rms"): i_pk * np.sqrt(d / 3),
        ("D1", "i_avg"): io,
        ("D1", "i_peak"): i_pk / N,
        ("D1", "i_rms"): i_pk / N * np.sqrt(d2 / 3),
        ("C2", "i_ripple_rms"): np.sqrt((i_pk / N) ** 2 * d2 / 3 - io ** 2) / 2,
        ("C1", "i_ripple_rms"): np.sqrt(i_pk ** 2 * d / 3 - (i_pk * d / 2) ** 2),
        ("T1", "b_peak"): L_M * i_pk / (20 * A_E),
    }
    for (ref, q), x in expect.items():
        np.testing.assert_allclose(values(ev, ref, q)[dcm], x, rtol=REL, err_msg=ref + q)
    # the idle interval is the rest of the period
    np.testing.assert_allclose(ev.result.grid.dt[dcm, -1] * fs, 1 - d - d2, rtol=REL)


def test_energy_per_cycle_in_dcm(tmp_path):
    """Lossless DCM: ½·L_m·I_pk²·fs = V_o·I_o (energy stored and delivered each cycle)."""
    ev = lossless_eval(tmp_path)
    vin, vo, io, fs = envelope(ev)
    dcm = ev.result.regime == "DCM"
    i_pk = ev.result.i_m_peak
    np.testing.assert_allclose((0.5 * L_M * i_pk ** 2 * fs)[dcm], (vo * io)[dcm], rtol=REL)


# --- with losses ---------------------------------------------------------------------------

def lossy_eval(tmp_path, **design):
    parts = flyback_parts(l_m_tol="10 %")
    design.setdefault("surge", "90 V")
    design.setdefault("ilim", "2.4 A")
    return run(load_design(write_case(tmp_path, flyback_design(**design), parts)))


def test_invariants_with_losses(tmp_path):
    ev = lossy_eval(tmp_path)
    assert set(ev.result.regime) == {"CCM", "DCM"}
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    checks = run_checks(ev, load_policy("commercial"))
    assert_one_rating_row_per_stress(checks, ev)


def test_drops_raise_the_duty_and_the_reflected_voltage(tmp_path):
    lossless = lossless_eval(tmp_path / "a")
    lossy = run(load_design(write_case(tmp_path / "b", flyback_design(), flyback_parts())))
    assert np.all(lossy.result.duty > lossless.result.duty)
    # the reflected voltage carries the rectifier drop, the secondary and ESR steps
    assert np.all(values(lossy, "Q1", "v_peak") > values(lossless, "Q1", "v_peak") + 0.4 / N)


def test_reflected_voltage_with_drops(tmp_path):
    """Switch v_peak = V_in + (V_o + v_f0 + (r_d + R_s)·I_s0 + ESR·(I_s0 − I_o))/n, with
    I_s0 the secondary current at turn-off (before any leakage spike); stiff banks so
    that only the ESR step remains of their ripple."""
    parts = flyback_parts(c_in="1 F", c_out="1 F", esr_in="0 ohm", esr_out="20 mohm")
    ev = run(load_design(write_case(tmp_path, flyback_design(), parts)))
    vin, vo, io, _ = envelope(ev)
    i_s0 = values(ev, "D1", "i_peak")
    esr = 0.02 / 2  # two capacitors
    expected = vin + (vo + 0.4 + (0.015 + 0.010) * i_s0 + esr * (i_s0 - io)) / N
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), expected, rtol=1e-6)


def test_magnetizing_tolerance_spans_corners(tmp_path):
    ev = lossy_eval(tmp_path)
    lm = ev.corners["T1.magnetizing_inductance"]
    np.testing.assert_allclose(sorted(set(lm)), [90e-6, 110e-6])
    # the lower L_m reaches DCM at a higher load: at 36 V and the minimum load both are DCM,
    # and the peak current is higher with the lower inductance
    at = (ev.corners["input_voltage"] == 36) & (ev.corners["output_current"] == 0.2)
    low, high = at & np.isclose(lm, 90e-6), at & np.isclose(lm, 110e-6)
    assert low.any() and high.any()
    assert values(ev, "Q1", "i_peak")[low].min() > values(ev, "Q1", "i_peak")[high].max()


def test_regime_in_results(tmp_path):
    from stresscheck.results import build_results
    ev = lossy_eval(tmp_path)
    policy = load_policy("commercial")
    doc = build_results(ev, run_checks(ev, policy), policy)
    json.dumps(doc)
    assert {row["regime"] for row in doc["corners"]} == {"CCM", "DCM"}


# --- duty limit ----------------------------------------------------------------------------

def test_default_duty_limit_refuses_with_reason(tmp_path):
    # 12 V from 20 V with n = 0.5 needs D = 12/(12 + 10) = 0.55 lossless; with n = 0.25
    # it needs 12/(12 + 5) = 0.71 > 0.7 (the stated default).
    parts = flyback_parts(n_s=5)
    path = write_case(tmp_path, flyback_design(vin="20 V", io="2 A"), parts)
    with pytest.raises(RegulationError, match=r"above the limit of 0\.700.*max_duty"):
        run(load_design(path))


def test_max_duty_replaces_the_default(tmp_path):
    parts = flyback_parts(n_s=5)
    ok = write_case(tmp_path / "ok", flyback_design(vin="20 V", io="2 A", max_duty="80 %"),
                    parts)
    ev = run(load_design(ok))
    assert np.all(ev.result.duty > 0.7) and np.all(ev.result.duty < 0.8)
    low = write_case(tmp_path / "low", flyback_design(vin="20 V", io="2 A", max_duty="60 %"),
                     parts)
    with pytest.raises(RegulationError, match=r"limit of 0\.600.*max_duty is 0\.6"):
        run(load_design(low))


def test_output_out_of_reach_is_refused_with_reason(tmp_path):
    # 20 ohm in the primary: no duty ratio delivers 12 V 2 A from 36 V
    parts = flyback_parts()
    parts["t-xfmr"]["electrical"]["r_primary"] = "20 ohm"
    path = write_case(tmp_path, flyback_design(io="2 A"), parts)
    with pytest.raises(RegulationError, match="cannot be reached at any duty ratio"):
        run(load_design(path))


def test_no_core_area_leaves_flux_uncomputed(tmp_path):
    path = write_case(tmp_path, flyback_design(), flyback_parts(core_area=None))
    (b,) = [s for s in run(load_design(path)).stresses if s.quantity == "b_peak"]
    assert np.isnan(b.values).all() and "core_area" in b.reason


# --- refusals ------------------------------------------------------------------------------

# --- synchronous rectifier -----------------------------------------------------------------
# A MOSFET in the rectifier role, driven complementary to the switch: forced continuous
# conduction at every load (Erickson & Maksimović, 2nd ed., §6.3.4: the CCM relations
# above hold wherever the magnetizing current never stops, and the channel conducting
# both ways keeps it from stopping — from memory), the dead times with the body diode
# by volt-second balance on the magnetizing inductance (same book, §2.2, applied to
# the dead-time intervals — from memory).

def sync_eval(tmp_path, *, parts=None, **design):
    parts = parts or flyback_parts(lossless=True, c_in="1 F", c_out="1 F",
                                   rectifier_kind="mosfet")
    return run(load_design(write_case(tmp_path, flyback_design(sync=True, **design), parts)))


def test_sync_forced_ccm_lossless(tmp_path):
    """No dead time, lossless: V_o = V_in·n·D/(1 − D) at every load, also where a diode
    flyback is discontinuous (0.2 A); the magnetizing ramp then dips below zero and the
    currents are those of the trapezoid with a negative valley."""
    ev = sync_eval(tmp_path)
    vin, vo, io, fs = envelope(ev)
    assert set(ev.result.regime) == {"CCM"}
    d = ev.result.duty
    np.testing.assert_allclose(vin * N * d / (1 - d), vo, rtol=REL)
    mid = N * io / (1 - d)
    ripple = vin * d / (fs * L_M)
    i1, i2 = mid - ripple / 2, mid + ripple / 2
    assert np.any(i1 < 0) and np.any(i1 > 0)  # the secondary current reverses at light load
    np.testing.assert_allclose(ev.result.i_m_start, i1, rtol=REL, atol=REL * mid.max())
    trap = (i1 ** 2 + i1 * i2 + i2 ** 2) / 3  # mean square of a ramp i1 -> i2
    expect = {
        ("Q1", "v_peak"): vin + vo / N,
        ("Q2", "v_peak"): vo + N * vin,  # drain-source blocking voltage of the rectifier
        ("Q1", "i_peak"): i2,
        ("Q1", "i_rms"): np.sqrt(d * trap),
        ("Q2", "i_peak"): i2 / N,
        ("Q2", "i_rms"): np.sqrt((1 - d) * trap) / N,
        ("C2", "i_ripple_rms"): np.sqrt((1 - d) * trap / N ** 2 - io ** 2) / 2,  # 2 caps
        ("C1", "i_ripple_rms"): np.sqrt(d * trap - (d * mid) ** 2),
        ("T1", "b_peak"): L_M * i2 / (20 * A_E),
    }
    for (ref, q), x in expect.items():
        np.testing.assert_allclose(values(ev, ref, q), x, rtol=REL, err_msg=ref + q)
    assert ("rectifier", 0) not in ev.result.body or np.allclose(
        ev.result.body[("rectifier", 0)].rms(), 0.0)


def _ramp_ms(a, b):
    return (a * a + a * b + b * b) / 3


def test_sync_dead_time_lossless(tmp_path):
    """Lossless but for the body diode (v_f0 = 0.85·0.8 V, r_sd = 0), t_d = 200 ns:
    * volt-second balance: n·V_in·D = V_o·(1 − D) + 2·t_d·fs·v_bd, so
      D = (V_o + 2·t_d·fs·v_bd)/(V_o + n·V_in);
    * the switch blocks V_in + (V_o + v_bd)/n (body diode at the start of the off-time);
    * the secondary ramp falls at (V_o + v_bd)/L_s in the dead times and V_o/L_s in the
      channel, L_s = n²·L_m, and carries I_o·Ts per period (charge balance): the
      body-diode current is its two dead-time pieces, its loss v_bd·I_body,avg."""
    td, v_bd = 200e-9, 0.85 * 0.8
    parts = flyback_parts(lossless=True, c_in="1 F", c_out="1 F", rectifier_kind="mosfet",
                          v_sd="0.8 V", r_sd="0 ohm")
    ev = sync_eval(tmp_path, parts=parts, dead_time="200 ns",
                   io={"min": "1.5 A", "max": "2 A"})
    vin, vo, io, fs = envelope(ev)
    ts = 1 / fs
    d = (vo + 2 * td * fs * v_bd) / (vo + N * vin)
    np.testing.assert_allclose(ev.result.duty, d, rtol=REL)
    assert np.all(ev.result.duty > vo / (vo + N * vin))  # the dead times raise the duty
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin + (vo + v_bd) / N, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "v_peak"), vo + N * vin, rtol=REL)
    ls = N ** 2 * L_M
    t_ch = ts * (1 - d) - 2 * td
    fall_d, fall_c = (vo + v_bd) * td / ls, vo * t_ch / ls
    # charge: td·(s0 − fall_d/2) + t_ch·(s0 − fall_d − fall_c/2)
    #         + td·(s0 − fall_d − fall_c − fall_d/2) = I_o·Ts
    s0 = (io * ts + td * fall_d / 2 + t_ch * (fall_d + fall_c / 2)
          + td * (1.5 * fall_d + fall_c)) / (2 * td + t_ch)
    s_a = s0 - fall_d
    s_b = s_a - fall_c
    s_e = s_b - fall_d
    body_avg = fs * td * (s0 - fall_d / 2 + s_b - fall_d / 2)
    body_ms = fs * td * (_ramp_ms(s0, s_a) + _ramp_ms(s_b, s_e))
    ch_ms = fs * t_ch * _ramp_ms(s_a, s_b)
    body = ev.result.body[("rectifier", 0)]
    np.testing.assert_allclose(body.mean(), body_avg, rtol=REL)
    np.testing.assert_allclose(body.rms(), np.sqrt(body_ms), rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "i_peak"), s0, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "i_rms"), np.sqrt(body_ms + ch_ms), rtol=REL)
    np.testing.assert_allclose(values(ev, "Q2", "p_loss"), v_bd * body_avg, rtol=REL)
    # every cycle the secondary returns the magnetizing current to its start value
    np.testing.assert_allclose(N * s_e, ev.result.i_m_start, rtol=REL)


@pytest.mark.parametrize("dead_time,io", [("0 s", {"min": "0.2 A", "max": "2 A"}),
                                          ("100 ns", {"min": "1.2 A", "max": "2 A"})])
def test_sync_invariants_with_losses(tmp_path, dead_time, io):
    """Energy and charge balance with every drop, the surge and current-limit corners;
    without dead time over the full load range (the secondary current reverses at light
    load), with a dead time over the loads whose current stays positive."""
    parts = flyback_parts(l_m_tol="10 %", rectifier_kind="mosfet")
    ev = sync_eval(tmp_path, parts=parts, dead_time=dead_time, io=io, surge="90 V",
                   ilim="2.4 A")
    assert set(ev.result.regime) == {"CCM"}
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    checks = run_checks(ev, load_policy("commercial"))
    assert_one_rating_row_per_stress(checks, ev)
    quantities = {s.quantity for s in ev.stresses if s.ref == "Q2"}
    assert quantities >= {"v_peak", "i_peak", "i_rms", "p_loss", "t_j"}
    if dead_time == "0 s":
        assert np.any(ev.result.i_m_start < 0)
    else:
        assert np.all(ev.result.body[("rectifier", 0)].mean() > 0)


def test_sync_drops_raise_the_duty(tmp_path):
    """The body-diode drop of the dead times takes reset volt-seconds: a longer dead
    time needs a longer on-time, and the switch sees the body-diode drop reflected."""
    parts = flyback_parts(rectifier_kind="mosfet")
    io = {"min": "1.5 A", "max": "2 A"}
    short = sync_eval(tmp_path / "a", parts=parts, dead_time="20 ns", io=io)
    long = sync_eval(tmp_path / "b", parts=parts, dead_time="300 ns", io=io)
    assert np.all(long.result.duty > short.result.duty)
    assert np.all(values(long, "Q2", "p_loss") > values(short, "Q2", "p_loss"))
    diode = run(load_design(write_case(tmp_path / "c", flyback_design(io=io),
                                       flyback_parts())))
    # the channel's R_DS(on) drop is far below the diode's 0.4 V: less duty than a diode
    assert np.all(short.result.duty < diode.result.duty)


def test_sync_light_load_with_dead_time_is_refused(tmp_path):
    parts = flyback_parts(rectifier_kind="mosfet")
    with pytest.raises(RegulationError, match="not positive throughout the dead times.*"
                                              "dead_time"):
        sync_eval(tmp_path, parts=parts, dead_time="100 ns")


def test_sync_duty_limit_holds_the_dead_times(tmp_path):
    """D <= 1 − 2·t_d·fs: 12 V from 20 V with n = 0.25 needs D = 0.71 (lossless); with
    max_duty 95 % and t_d = 1 us at 150 kHz the limit is 0.70."""
    from stresscheck.topologies import flyback
    parts = flyback_parts(n_s=5, rectifier_kind="mosfet")
    path = write_case(tmp_path, flyback_design(vin="20 V", io="2 A", max_duty="95 %",
                                               sync=True, dead_time="1 us"), parts)
    design = load_design(path)
    np.testing.assert_allclose(flyback.duty_limit(design, np.array([150e3])), 0.7)
    with pytest.raises(RegulationError, match=r"limit of 0\.700.*dead times"):
        run(design)


def test_sync_rectifier_part_is_accepted_and_diode_dead_time_refused(tmp_path):
    ok = write_case(tmp_path / "ok", flyback_design(sync=True, dead_time="50 ns"),
                    flyback_parts(rectifier_kind="mosfet"))
    assert load_design(ok).dead_time == pytest.approx(50e-9)
    bad = write_case(tmp_path / "bad", flyback_design(dead_time="50 ns"), flyback_parts())
    with pytest.raises(InputError, match="diode rectifier has no complementary switches"):
        load_design(bad)


@pytest.mark.parametrize("key,value,match", [
    ("rectifier", "center-tap", "bridge family only"),
    ("dead_time", "100 ns", "no complementary switches"),
    ("modulation", "phase-shift", "pwm modulation only"),
])
def test_options_that_do_not_apply_are_refused(tmp_path, key, value, match):
    path = write_case(tmp_path, flyback_design(**{key: value}), flyback_parts())
    with pytest.raises(InputError, match=match):
        load_design(path)


def test_transformer_without_magnetizing_inductance_is_refused(tmp_path):
    parts = flyback_parts()
    del parts["t-xfmr"]["electrical"]["magnetizing_inductance"]
    path = write_case(tmp_path, flyback_design(), parts)
    with pytest.raises(InputError, match="stores its energy in the magnetizing"):
        load_design(path)


def test_output_inductor_role_is_refused(tmp_path):
    from builders import bridge_parts
    parts = {**flyback_parts(), "t-ind": bridge_parts()["t-ind"]}
    design = flyback_design()
    design["components"].append({"ref": "L1", "role": "inductor", "part": "t-ind"})
    with pytest.raises(InputError, match="role 'inductor' is not part of a flyback"):
        load_design(write_case(tmp_path, design, parts))


# --- example designs -----------------------------------------------------------------------

@pytest.mark.parametrize("example,regimes", [("flyback-48v-12v", {"CCM", "DCM"}),
                                             ("flyback-375v-5v", {"DCM"})])
def test_examples_check(tmp_path, example, regimes):
    """The shipped examples run through `stresscheck check` with nothing failing, and
    their corners show the regimes their comments promise."""
    from pathlib import Path

    from stresscheck import cli
    design = Path(__file__).parent.parent / "examples" / example / "design.toml"
    assert cli.main(["check", str(design), "--out", str(tmp_path)]) == 0
    doc = json.loads((tmp_path / "results.json").read_text())
    assert {row["regime"] for row in doc["corners"]} == regimes
    ev = run(load_design(design))
    assert_energy_balance(ev)
    assert_charge_balance(ev)
