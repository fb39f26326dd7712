"""The pfc-boost topology (``topologies/pfc_boost.py``) against outside references.

References:
* An independent numerical integration of the ideal (lossless) waveforms over one whole
  line cycle, written here without the model's code: consecutive switching periods in
  real time (the line angle advancing from one period to the next, not sampled at M
  angles), the on-time of each from the boost's volt-second balance in continuous
  conduction, D = 1 − v/V_o, or from the triangle-pulse average in discontinuous
  conduction, i_avg = v·t_on²·V_o/(2·L·T_s·(V_o − v)) (Erickson & Maksimović,
  Fundamentals of Power Electronics, 2nd ed., §2.3 and §5.3 — from memory), and every
  current sampled at 64 points per period. Averages and rms values of the switch,
  boost diode, inductor, bridge diode and bulk capacitor must agree within 2 %, peaks
  within 4 % (the tolerances of the issue); the model samples the line at 96 angles.
* Bus ripple ΔV_pp = I_o/(2π·f_line·C) (common practice; the low-frequency capacitor
  current is −I_o·cos 2θ at unity power factor): the bulk capacitor's v_peak is
  V_o + ΔV_pp/2 plus the small switching part, within 4 % of the ripple.
* Hold-up: C = 2·P·t/(V_start² − V_hold²), energy balance (common practice).
* The shared invariants (tests/invariants.py): energy and charge balance, one rating row
  per stress.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from invariants import (assert_charge_balance, assert_energy_balance,
                        assert_one_rating_row_per_stress)
from stresscheck import cli
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.policy import load_policy
from stresscheck.topologies import CapacitorBank, Device, Inductor, Stage
from stresscheck.topologies.pfc_boost import evaluate

EXAMPLE = Path(__file__).parent.parent / "examples" / "pfc-boost-300w" / "design.toml"


def _stage(v_rms, *, vo=400.0, io=0.75, fs=50e3, f_line=50.0, l=400e-6, c=470e-6,
           filtered=True):
    """A lossless PFC stage at one corner (drops zero, R_DS(on) 1 nΩ)."""
    one = np.ones(1)
    z = np.zeros(1)
    diode = Device("diode", z, z)
    devices = {("switch", 0): Device("mosfet", z, z, 1e-9 * one), ("rectifier", 0): diode}
    devices.update({("bridge-rectifier", k): diode for k in range(4)})
    caps = {("output-capacitor", 0): CapacitorBank(c * one, 0.0)}
    if filtered:
        caps[("input-capacitor", 0)] = CapacitorBank(1e-6 * one, 0.0)
    return Stage("pfc-boost", None, "pwm", v_rms * one, vo * one, io * one, fs * one,
                 0.95 * one, 0.0, devices, None, [Inductor(l * one, 0.0)], caps,
                 line_frequency=f_line * one)


def _integrate(v_rms, *, vo=400.0, io=0.75, fs=50e3, f_line=50.0, l=400e-6, points=64):
    """Ideal waveforms over one line cycle, period by period in real time.

    Returns the sampled currents (equal time steps) of the inductor, switch, boost diode
    and of one bridge diode (positive half cycle), and the local averages of the diode.
    """
    ts = 1.0 / fs
    periods = int(round(fs / f_line))
    v_pk = np.sqrt(2) * v_rms
    i_pk = 2 * vo * io / v_pk  # lossless unity power factor: V_rms·I_rms = V_o·I_o
    t0 = (np.arange(periods) + 0.5) * ts  # period midpoints
    s = np.abs(np.sin(2 * np.pi * f_line * t0))
    v, i_ref = v_pk * s, i_pk * s
    d_ccm = 1 - v / vo
    ripple = v * d_ccm * ts / l
    ccm = i_ref >= ripple / 2
    t_on_dcm = np.sqrt(2 * l * ts * i_ref * (vo - v) / (vo * np.maximum(v, 1e-12)))
    t_on = np.where(ccm, d_ccm * ts, t_on_dcm)
    i_lo = np.where(ccm, i_ref - ripple / 2, 0.0)
    tau = (np.arange(points) + 0.5) / points * ts  # sample times within a period
    rise = i_lo[:, None] + v[:, None] / l * tau[None, :]
    i_top = i_lo + v * t_on / l
    fall = i_top[:, None] - (vo - v)[:, None] / l * (tau[None, :] - t_on[:, None])
    on = tau[None, :] < t_on[:, None]
    i_l = np.where(on, rise, np.maximum(fall, 0.0))
    i_sw = np.where(on, i_l, 0.0)
    i_d = np.where(on, 0.0, i_l)
    positive = (np.sin(2 * np.pi * f_line * t0) > 0)[:, None]
    i_bridge = np.where(positive, i_l.mean(axis=1, keepdims=True), 0.0)
    return i_l, i_sw, i_d, i_bridge


def _rms(x):
    return float(np.sqrt(np.mean(x ** 2)))


@pytest.mark.parametrize("v_rms", [90.0, 230.0, 264.0])
def test_line_cycle_integrals_against_numerical_integration(v_rms):
    """Model vs the independent integration (module docstring); 90 V is CCM over most
    of the cycle, 230 V and 264 V mixed CCM/DCM."""
    res = evaluate(_stage(v_rms))
    i_l, i_sw, i_d, i_bridge = _integrate(v_rms)
    cur = res.currents
    rms2, peak4 = 2e-2, 4e-2  # the tolerances
    assert cur[("switch", 0)].rms()[0] == pytest.approx(_rms(i_sw), rel=rms2)
    assert cur[("switch", 0)].mean()[0] == pytest.approx(i_sw.mean(), rel=rms2)
    assert cur[("rectifier", 0)].rms()[0] == pytest.approx(_rms(i_d), rel=rms2)
    assert cur[("rectifier", 0)].mean()[0] == pytest.approx(i_d.mean(), rel=rms2)
    assert cur[("inductor", 0)].rms()[0] == pytest.approx(_rms(i_l), rel=rms2)
    assert cur[("inductor", 0)].peak()[0] == pytest.approx(i_l.max(), rel=peak4)
    assert cur[("switch", 0)].peak()[0] == pytest.approx(i_sw.max(), rel=peak4)
    bridge = cur[("bridge-rectifier", 0)]
    assert bridge.mean()[0] == pytest.approx(i_bridge.mean(), rel=rms2)
    assert bridge.rms()[0] == pytest.approx(_rms(i_bridge), rel=rms2)
    assert bridge.peak()[0] == pytest.approx(i_bridge.max(), rel=peak4)
    # the bulk capacitor: whole rms, and its line-frequency part from the local averages
    i_c = i_d - 0.75
    lf = _rms(i_d.mean(axis=1) - 0.75)
    assert cur[("output-capacitor", 0)].rms()[0] == pytest.approx(_rms(i_c), rel=rms2)
    split = res.shared_rows[("output-capacitor", 0)]
    assert split["i_ripple_rms_lf"][0] == pytest.approx(lf, rel=rms2)
    assert split["i_ripple_rms_hf"][0] == pytest.approx(np.sqrt(_rms(i_c) ** 2 - lf ** 2),
                                                         rel=rms2)
    # the filter capacitor after the bridge carries the switching ripple of i_L
    i_f = i_l - i_l.mean(axis=1, keepdims=True)
    assert cur[("input-capacitor", 0)].rms()[0] == pytest.approx(_rms(i_f), rel=rms2)
    # without it the bridge carries i_L itself over its half cycle
    bare = evaluate(_stage(v_rms, filtered=False)).currents[("bridge-rectifier", 0)]
    i_bare = np.where(i_bridge > 0, i_l, 0.0)
    assert bare.mean()[0] == pytest.approx(i_bare.mean(), rel=rms2)
    assert bare.rms()[0] == pytest.approx(_rms(i_bare), rel=rms2)
    assert bare.peak()[0] == pytest.approx(i_bare.max(), rel=peak4)


def test_regime_per_angle_summarised():
    """Low line is CCM over the whole cycle here (the CCM bound I_pk >= V_pk·T_s/(2L)
    holds at every angle: 4.7 A >= 3.2 A), high line mixed (CCM where
    I_pk >= V_pk·(1 − V_pk·|sin θ|/V_o)·T_s/(2L): |sin θ| >= 0.89 at 264 V, 0.95 at
    230 V, so DCM over about 69 % and 80 % of the conducting angles), a light load DCM."""
    assert evaluate(_stage(90.0)).regime[0] == "CCM"
    for v_rms, share in ((264.0, 69.0), (230.0, 80.0)):
        regime = evaluate(_stage(v_rms)).regime[0]
        assert regime.startswith("mixed, DCM over ")
        assert float(regime.split("over ")[1].split(" %")[0]) == pytest.approx(share, abs=3)
    assert evaluate(_stage(264.0, io=0.02)).regime[0] == "DCM"


@pytest.mark.parametrize("f_line", [47.0, 63.0])
def test_bulk_v_peak_against_ripple_closed_form(f_line):
    """v_peak = V_o + ΔV_pp/2 (+ the switching part, ~0.1 V here): 4 % of the ripple."""
    c, io = 220e-6, 0.75
    res = evaluate(_stage(230.0, c=c, f_line=f_line, io=io))
    ripple = io / (2 * np.pi * f_line * c)
    v_peak = res.v_block[("output-capacitor", 0)][0]
    assert v_peak - 400.0 == pytest.approx(ripple / 2, rel=4e-2)
    # the switch blocks the bus peak (lossless: no diode drop), the bridge the line crest
    assert res.v_block[("switch", 0)][0] == pytest.approx(v_peak, rel=1e-9)
    assert res.v_block[("bridge-rectifier", 2)][0] == pytest.approx(230 * np.sqrt(2))


def test_hold_up_share_energy_balance(tmp_path):
    """The hold-up row: 2·P·t/(V_start² − V_hold²) over C_min of the bank, by hand."""
    ev = run(load_design(EXAMPLE))
    row = next(s for s in ev.stresses if s.quantity == "hold_up")
    c_col = ev.corners["C2.capacitance"]
    res = ev.result
    i = int(np.argmax(row.values))
    # V_start: the bus trough; from the capacitor's own ripple (v_peak − V_o ≈ V_o − trough)
    p = ev.corners["output_voltage"][i] * ev.corners["output_current"][i]
    v_start_hi = ev.corners["output_voltage"][i]
    v_start_lo = 2 * v_start_hi - res.v_block[("output-capacitor", 0)][i] - 1.0
    needed_lo = 2 * p * 20e-3 / (v_start_hi ** 2 - 280.0 ** 2)
    needed_hi = 2 * p * 20e-3 / (v_start_lo ** 2 - 280.0 ** 2)
    c_min = 390e-6 * 0.8
    assert needed_lo / c_min < row.values[i] < needed_hi / c_min
    assert c_col.min() == pytest.approx(c_min)


def test_example_checks_with_every_stress_computed(tmp_path):
    """The shipped 300 W example: exit 0, every stress computed at every corner, the
    regime per corner summarised, the invariants hold."""
    assert cli.main(["check", str(EXAMPLE), "--out", str(tmp_path)]) == 0
    doc = json.loads((tmp_path / "results.json").read_text())
    assert not [c for c in doc["checks"] if c["status"] in ("not-computed", "fail")]
    quantities = {(c["ref"], c["quantity"]) for c in doc["checks"]}
    for q in ("v_peak", "i_peak", "i_rms", "i_avg", "t_j"):
        assert ("Q1", q) in quantities
    for q in ("v_reverse_peak", "i_avg", "i_rms", "i_peak", "t_j"):
        assert ("D5", q) in quantities and ("D1", q) in quantities
    for q in ("v_peak", "i_ripple_rms", "i_ripple_rms_lf", "i_ripple_rms_hf", "hold_up"):
        assert ("C2", q) in quantities
    regimes = {row["regime"] for row in doc["corners"]}
    assert any(r.startswith("mixed, DCM over") for r in regimes)
    assert "line_frequency" in doc["corner_keys"]
    ev = run(load_design(EXAMPLE))
    assert_energy_balance(ev)
    assert_charge_balance(ev)
    assert_one_rating_row_per_stress(run_checks(ev, load_policy("commercial")), ev)


# -- input errors --------------------------------------------------------------------------

def _edit(tmp_path, old, new):
    text = EXAMPLE.read_text()
    assert old in text
    path = tmp_path / "design.toml"
    path.write_text(text.replace(old, new))
    return path


@pytest.mark.parametrize("old,new,key", [
    ('input = "ac"\n', '', "operating.line_frequency"),
    ('input = "ac"\n', 'input = "dc"\n', "operating.line_frequency"),
    ('line_frequency = { min = "47 Hz", max = "63 Hz" }\n', '', "operating.line_frequency"),
    ('hold_up_voltage = "280 V"\n', '', "operating.hold_up_voltage"),
    ('hold_up_voltage = "280 V"', 'hold_up_voltage = "390 V"', "operating.hold_up_voltage"),
    ('output_voltage = "380 V"', 'output_voltage = "360 V"', "operating.output_voltage"),
    ('ambient_temperature', 'input_surge = "600 V"\nambient_temperature',
     "operating.input_surge"),
    ('refs = ["D1", "D2", "D3", "D4"]', 'refs = ["D1", "D2"]', "components[0].refs"),
    ('part = "ultrafast-600v-15a"', 'part = "nfet-650v-190m-sj"', "components[2].part"),
])
def test_input_errors_name_the_key(tmp_path, old, new, key):
    with pytest.raises(InputError) as err:
        load_design(_edit(tmp_path, old, new))
    assert err.value.key == key


def test_ac_input_refused_by_a_dc_topology(tmp_path):
    path = tmp_path / "d.toml"
    src = Path(__file__).parent.parent / "examples" / "boost-12v-48v" / "design.toml"
    path.write_text(src.read_text().replace(
        "[operating]\n", '[operating]\ninput = "ac"\nline_frequency = "50 Hz"\n'))
    with pytest.raises(InputError, match='takes input = "dc"') as err:
        load_design(path)
    assert err.value.key == "operating.input"


def test_verify_refuses_the_topology_cleanly(capsys):
    """`verify` does not simulate a pfc-boost (the line-cycle transients are in
    tests/test_spice_pfc_boost.py): exit 2 with the reason, before any simulation."""
    assert cli.main(["verify", str(EXAMPLE)]) == 2
    assert "not part of 'verify'" in capsys.readouterr().err
