"""Leakage spikes: the clamp relations (stresscheck.clamps) and how a design's clamp or
overshoot allowance reaches its voltage stresses (stresscheck.spikes).

Sources:
- [R] R. Ridley, "Flyback converter snubber design", Switching Power Magazine, 2005, and
  the RCD clamp design notes of flyback controller makers — from memory: at turn-off the
  leakage current I_pk falls linearly in t_s = L_lk·I_pk/(V_c − V_r) while the clamp
  holds V_c and the winding V_r, so the clamp takes E = ½·L_lk·I_pk²·V_c/(V_c − V_r)
  per switching period; an RCD clamp settles where its resistor dissipates that,
  V_c²/R = E·f_s (R·C much longer than a period).
- [N] An independent numerical integration of the same clamp circuit (leakage current
  falling into the capacitor against V_c − V_r, exponential discharge through R), run
  to periodic steady state in this file: checks the closed form with finite R·C.
- [CP] Common practice: an overshoot allowance adds a fraction of the ideal off-state
  voltage; an undamped L-C step at most doubles it.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from builders import bridge_design, bridge_parts, write_case
from builders_flyback import flyback_design, flyback_parts
from invariants import assert_charge_balance, assert_energy_balance
from stresscheck import clamps
from stresscheck.checks import exit_status, run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.policy import load_policy
from stresscheck.spikes import NO_SPIKE_MODEL


# --- the relations ---------------------------------------------------------------------

def test_rcd_energy_balance_for_long_time_constant():
    """[R]: with R·C >> T the clamp voltage satisfies V_c²/R = ½·L·I²·f·V_c/(V_c − V_r);
    x = T/(R·C) = 1e-4 leaves a relative residue of order x (checked to 1e-3)."""
    l_lk, i_pk, fs, r, v_r = 12e-6, 0.7, 65e3, 56e3, 77.0
    c = 1 / (fs * r * 1e-4)
    v = clamps.rcd_clamp_peak(l_lk, np.array([i_pk]), np.array([1 / fs]), r, c,
                              np.array([v_r]))[0]
    assert v ** 2 / r == pytest.approx(0.5 * l_lk * i_pk ** 2 * fs * v / (v - v_r), rel=1e-3)
    assert v > v_r  # the clamp always sits above the reflected voltage


def _numeric_clamp_peak(l_lk, i_pk, period, r, c, v_r, v0, periods=300, steps=4000):
    """[N] Peak capacitor voltage of the RCD clamp at periodic steady state [V]:
    L·di/dt = −(v − V_r), C·dv/dt = i − v/R while i > 0 (second-order Runge-Kutta), then
    v·exp(−t/(R·C)) for the rest of the period."""
    v = v0
    peak = v
    for _ in range(periods):
        i, t = i_pk, 0.0
        h = l_lk * i_pk / (v - v_r) / steps
        while i > 0:
            di1, dv1 = -(v - v_r) / l_lk, (i - v / r) / c
            di2 = -(v + h * dv1 - v_r) / l_lk
            dv2 = (i + h * di1 - (v + h * dv1) / r) / c
            i, v, t = i + h * (di1 + di2) / 2, v + h * (dv1 + dv2) / 2, t + h
        peak = v
        v = v * math.exp(-(period - t) / (r * c))
    return peak


@pytest.mark.parametrize("l_lk,i_pk,fs,r,c,v_r", [
    (12e-6, 0.66, 65e3, 56e3, 4.7e-9, 77.5),   # flyback, x = 0.058
    (0.5e-6, 6.2, 100e3, 8.2e3, 22e-9, 0.0),   # push-pull (no reflected voltage)
    (10e-6, 1.0, 100e3, 30e3, 1.5e-9, 100.0),  # x = 0.22: a small clamp capacitor
])
def test_rcd_peak_against_numerical_integration(l_lk, i_pk, fs, r, c, v_r):
    """[N]: the closed form takes the capacitor at b·V_p during the short charge. The
    charge moves the capacitor by the ripple fraction a = 1 − e^(−x) of V_p, and the
    error is second order in it: bounded here by max(1e-3, a²/10) (measured 0.03 % at
    a = 0.06, 0.16 % at a = 0.2)."""
    v = clamps.rcd_clamp_peak(l_lk, np.array([i_pk]), np.array([1 / fs]), r, c,
                              np.array([v_r]))[0]
    a = -math.expm1(-1 / (fs * r * c))
    assert v == pytest.approx(_numeric_clamp_peak(l_lk, i_pk, 1 / fs, r, c, v_r, v),
                              rel=max(1e-3, a * a / 10))


def test_clamp_energy_at_twice_the_reflected_voltage():
    """[R]: with V_c = 2·V_r the clamp takes twice the leakage energy, L·I²; the hand-over
    lasts L·I/V_r."""
    e = clamps.clamp_energy(10e-6, np.array([2.0]), np.array([200.0]), np.array([100.0]))
    assert e[0] == pytest.approx(10e-6 * 4.0, rel=1e-12)
    t = clamps.clamp_interval(10e-6, np.array([2.0]), np.array([200.0]), np.array([100.0]))
    assert t[0] == pytest.approx(10e-6 * 2.0 / 100.0, rel=1e-12)


def test_voltage_clamp_power_and_refusal_below_reflected():
    """[R]: a voltage clamp dissipates ½·L·I²·f·V_z/(V_z − V_r); at or below V_r it would
    conduct the whole off-time: NaN, never a number."""
    st = clamps.voltage_clamp_state(5e-6, np.array([1.0, 1.0]), np.array([1e-5, 1e-5]),
                                    100.0, np.array([50.0, 120.0]))
    assert st["p_clamp"][0] == pytest.approx(0.5 * 5e-6 * 1e5 * 100 / 50, rel=1e-12)
    assert np.isnan(st["p_clamp"][1]) and np.isnan(st["v_peak"][1])


def test_rcd_state_is_self_consistent():
    """The resistor power equals the energy per event times the event rate, and the
    capacitor's charge per event equals the resistor's charge (charge balance)."""
    l_lk, i_pk, t, r, c, v_r = 12e-6, np.array([0.7]), np.array([1 / 65e3]), 56e3, 4.7e-9, 77.0
    st = clamps.rcd_clamp_state(l_lk, i_pk, t, r, c, v_r)
    e = clamps.clamp_energy(l_lk, i_pk, st["v_handover"], v_r)
    assert st["p_resistor"][0] == pytest.approx(e[0] / t[0], rel=1e-9)
    q = 0.5 * i_pk * st["t_s"]
    assert c * st["v_ripple"][0] == pytest.approx(q[0], rel=1e-9)


def test_overshoot_allowance():
    """[CP]: v_peak = ideal·(1 + a)."""
    np.testing.assert_allclose(clamps.overshoot_peak(np.array([100.0, 48.0]), 0.25),
                               [125.0, 60.0], rtol=1e-15)


# --- designs ----------------------------------------------------------------------------

def flyback(tmp_path, l_leak="12 uH", **converter):
    parts = flyback_parts(l_leak=l_leak)
    return run(load_design(write_case(tmp_path, flyback_design(**converter), parts)))


def by_ref(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s


def test_leakage_without_clamp_or_allowance_is_not_computed(tmp_path):
    """The issue's rule: a transformer with leakage and neither clamp nor allowance
    never reports its spike-free voltage; the check is not-computed (exit status 1)."""
    ev = flyback(tmp_path)
    for ref, q in (("Q1", "v_peak"), ("D1", "v_reverse_peak")):
        s = by_ref(ev, ref, q)
        assert np.isnan(s.values).all() and s.reason == NO_SPIKE_MODEL
    checks = run_checks(ev, load_policy("commercial"))
    bad = {(c.ref, c.quantity) for c in checks if c.status == "not-computed"
           and c.quantity.startswith("v_")}
    assert bad == {("Q1", "v_peak"), ("D1", "v_reverse_peak")}
    assert exit_status(checks) == 1
    assert all(c.note == NO_SPIKE_MODEL for c in checks if (c.ref, c.quantity) in bad)


def test_no_leakage_leaves_the_ideal_voltages(tmp_path):
    ev = flyback(tmp_path / "a", l_leak=None)
    assert np.isfinite(by_ref(ev, "Q1", "v_peak").values).all()
    assert by_ref(ev, "Q1", "v_peak").spike == ""


def test_overshoot_scales_the_ideal_voltage(tmp_path):
    ideal = flyback(tmp_path / "a", l_leak=None)
    ev = flyback(tmp_path / "b", overshoot={"switch": "30 %", "rectifier": "20 %"})
    np.testing.assert_allclose(by_ref(ev, "Q1", "v_peak").values,
                               1.3 * by_ref(ideal, "Q1", "v_peak").values, rtol=1e-12)
    np.testing.assert_allclose(by_ref(ev, "D1", "v_reverse_peak").values,
                               1.2 * by_ref(ideal, "D1", "v_reverse_peak").values, rtol=1e-12)
    checks = {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}
    assert "overshoot allowance of 30 %" in checks[("Q1", "v_peak")].note


def test_voltage_clamp_sets_the_switch_peak(tmp_path):
    """[R]: v_peak = V_in + V_z at every corner (surge included)."""
    ev = flyback(tmp_path, clamp={"kind": "voltage", "voltage": "60 V"},
                 overshoot={"rectifier": "10 %"})
    np.testing.assert_allclose(by_ref(ev, "Q1", "v_peak").values,
                               ev.corners["input_voltage"] + 60.0, rtol=1e-12)


def test_voltage_clamp_below_the_reflected_voltage_is_not_computed(tmp_path):
    """20 : 10 turns, 12 V out: the reflected voltage is about 25 V; a 20 V clamp would
    conduct the whole off-time."""
    ev = flyback(tmp_path, clamp={"kind": "voltage", "voltage": "20 V"},
                 overshoot={"rectifier": "10 %"})
    s = by_ref(ev, "Q1", "v_peak")
    assert np.isnan(s.values).all() and "not above the winding" in s.reason


@pytest.mark.parametrize("clamp", [
    {"kind": "rcd", "resistance": "22 kohm", "capacitance": "4.7 nF"},
    {"kind": "voltage", "voltage": "47 V"}])
def test_clamped_flyback_keeps_energy_and_charge_balance(tmp_path, clamp):
    """With the clamp's power in the losses (fed back at DCM corners) input power =
    output power + losses, and every capacitor current has zero mean; the design spans
    CCM and DCM corners."""
    ev = flyback(tmp_path, clamp=clamp, overshoot={"rectifier": "10 %"})
    assert set(ev.result.regime) == {"CCM", "DCM"}
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    assert ev.result.clamp_loss is not None and (ev.result.clamp_loss >= 0).all()


def test_dcm_energy_per_cycle_with_clamp(tmp_path):
    """Lossless DCM with leakage (Erickson & Maksimović, 2nd ed., ch. 5, energy per cycle
    — from memory, extended by [R]): the source delivers ½·(L_m + L_lk)·I_pk² per cycle,
    the output takes it less the clamp's ½·L_lk·I_pk²·V_c/(V_c − V_r)."""
    parts = flyback_parts(lossless=True, c_in="1 F", c_out="1 F", l_leak="2 uH")
    design = flyback_design(vin="48 V", io="0.3 A", ambient="25 degC",
                            clamp={"kind": "voltage", "voltage": "50 V"},
                            overshoot={"rectifier": "0 %"})
    ev = run(load_design(write_case(tmp_path, design, parts)))
    assert ev.result.regime[0] == "DCM"
    i_pk = ev.result.currents[("switch", 0)].peak()[0]
    fs = ev.corners["switching_frequency"][0]
    p_in = 0.5 * (100e-6 + 2e-6) * i_pk ** 2 * fs
    v_r = 2 * 12.0  # lossless reflected voltage, n = 1/2
    p_clamp = 0.5 * 2e-6 * i_pk ** 2 * fs * 50 / (50 - v_r)
    assert ev.p_in[0] == pytest.approx(p_in, rel=1e-3)
    assert ev.result.clamp_loss[0] == pytest.approx(p_clamp, rel=1e-3)
    assert ev.p_out[0] == pytest.approx(p_in - p_clamp, rel=2e-3)


def test_results_carry_the_clamp(tmp_path):
    from stresscheck import cli
    parts = flyback_parts(l_leak="12 uH")
    design = flyback_design(clamp={"kind": "rcd", "resistance": "22 kohm",
                                   "capacitance": "4.7 nF"}, overshoot={"rectifier": "10 %"})
    path = write_case(tmp_path, design, parts)
    cli.main(["check", str(path), "--out", str(tmp_path / "out")])
    doc = json.loads((tmp_path / "out" / "results.json").read_text())
    (rec,) = doc["clamps"]
    assert rec["refs"] == ["Q1"] and rec["kind"] == "rcd"
    assert rec["v_clamp"] > 0 and rec["p_clamp"] > 0 and rec["v_ripple"] > 0
    assert any("rcd clamp" in n["text"] for n in doc["notes"])


def bridge(tmp_path, topology, **converter):
    parts = bridge_parts(n_s=4 if topology == "half-bridge" else 2)
    parts["t-xfmr"]["electrical"]["leakage_inductance"] = "0.5 uH"
    design = bridge_design(topology, "center-tap")
    design["converter"].update(converter)
    return run(load_design(write_case(tmp_path, design, parts)))


def test_bridge_switches_are_held_at_the_rail_rectifiers_are_not(tmp_path):
    """Full and half bridge: the body diodes of the leg hold the switches at the rail (no
    spike from the transformer's leakage); the rectifiers ring, so they need the
    allowance. Push-pull: the switches need a clamp or an allowance too."""
    for top in ("full-bridge", "half-bridge"):
        ev = bridge(tmp_path / top, top)
        assert np.isfinite(by_ref(ev, "Q1", "v_peak").values).all()
        assert by_ref(ev, "D1", "v_reverse_peak").reason == NO_SPIKE_MODEL
    ev = bridge(tmp_path / "pp", "push-pull")
    assert by_ref(ev, "Q1", "v_peak").reason == NO_SPIKE_MODEL


def test_push_pull_rcd_clamp_floor(tmp_path):
    """A push-pull's clamp capacitor never sits below the winding's V_in (the other half
    drives it there): a weak leakage and a big resistor-free clamp give 2·V_in + V_d."""
    ev = bridge(tmp_path, "push-pull",
                clamp={"kind": "rcd", "resistance": "1 ohm", "capacitance": "1 uF",
                       "diode_drop": "1 V"}, overshoot={"rectifier": "0 %"})
    v = by_ref(ev, "Q1", "v_peak").values
    ideal = ev.result.v_block[("switch", 0)]
    np.testing.assert_allclose(v, ideal + 1.0, rtol=1e-9)


@pytest.mark.parametrize("converter,key,match", [
    ({"clamp": {"kind": "rcd", "resistance": "1 kohm"}}, "converter.clamp.capacitance",
     "missing"),
    ({"clamp": {"kind": "tvs", "voltage": "1 V"}}, "converter.clamp.kind", "unknown"),
    ({"clamp": {"kind": "voltage", "voltage": "1 V", "resistance": "1 ohm"}},
     "converter.clamp.resistance", "unknown key"),
    ({"clamp": "rcd"}, "converter.clamp", "table"),
    ({"overshoot": {"switch": "150 %"}}, "converter.overshoot.switch", "100 %"),
    ({"overshoot": {"gate": "10 %"}}, "converter.overshoot.gate", "unknown key"),
    ({"clamp": {"kind": "voltage", "voltage": "60 V"}, "overshoot": {"switch": "10 %"}},
     "converter.overshoot.switch", "not both"),
])
def test_bad_spike_options_name_the_key(tmp_path, converter, key, match):
    with pytest.raises(InputError, match=match) as err:
        flyback(tmp_path, **converter)
    assert err.value.key == key


def test_clamp_on_a_full_bridge_is_refused(tmp_path):
    with pytest.raises(InputError, match="held at the input rail") as err:
        bridge(tmp_path, "full-bridge", clamp={"kind": "voltage", "voltage": "60 V"})
    assert err.value.key == "converter.clamp"
