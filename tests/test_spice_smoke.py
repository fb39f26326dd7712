"""Smoke tests of the ngspice reference: bridge-family converters at one hand-made corner.

The simulated steady states are checked against textbook relations, never against
stresscheck's analytic engine. Netlists and results of each case are committed in
tests/reference/spice/ (file name = case); rerun with STRESSCHECK_UPDATE_REFERENCE=1 to
rewrite them. Without ngspice the module is skipped, unless STRESSCHECK_REQUIRE_NGSPICE=1.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from spice_support import (assert_energy_balance, assert_reference_reproduced,
                           keep_folder, kept_results, ngspice,  # noqa: F401  (autouse)
                           simulated_cases)
from stresscheck.spice.circuit import CapacitorModel, Circuit, DiodeModel, SwitchModel

# case -> (topology, rectifier, n_p, n_s); the half-bridge applies v_in/2 to its primary,
# so it gets twice the turns ratio to regulate 12 V at a similar duty.
CASES = {
    "fb-ct-48v-smoke": ("full-bridge", "center-tap", 4, 2),
    "fb-fb-48v-smoke": ("full-bridge", "full-bridge", 4, 2),
    "hb-ct-48v-smoke": ("half-bridge", "center-tap", 2, 2),
    "pp-ct-48v-smoke": ("push-pull", "center-tap", 4, 2),
}
V_IN, V_OUT, I_OUT, F_SW = 48.0, 12.0, 10.0, 100e3  # [V, V, A, Hz]
L_M, L_OUT = 200e-6, 10e-6  # [H]
R_ON, R_P, R_S, DCR = 0.01, 0.01, 0.005, 0.005  # [ohm]
RECT = DiodeModel(v_f0=0.4, r_d=0.01)
BODY = DiodeModel(v_f0=0.7, r_d=0.02)


def v_primary(topology: str) -> float:
    """Primary (half) voltage while a switch conducts [V]: v_in, half-bridge v_in/2."""
    return V_IN / 2 if topology == "half-bridge" else V_IN


def make_circuit(case: str) -> Circuit:
    """The hand-made corner with textbook warm-start values."""
    topology, rectifier, n_p, n_s = CASES[case]
    vp = v_primary(topology)
    # Ideal buck-derived bridge: v_out = 2·D·(n_s/n_p)·v_p (Erickson & Maksimovic,
    # Fundamentals of Power Electronics, 2nd ed., ch. 6 -- from memory).
    duty = V_OUT / (2 * vp * n_s / n_p)
    # Output inductor sees 2·f_sw; valley current I_o - dI/2, dI = v_out(1 - 2D)/(2 f_sw L).
    di_l = V_OUT * (1 - 2 * duty) / (2 * F_SW * L_OUT)
    # Magnetizing current swings symmetrically by v_p·D/(f_sw·L_m) (Faraday's law).
    di_m = vp * duty / (F_SW * L_M)
    n_sw = 4 if topology == "full-bridge" else 2
    n_rect = 2 if rectifier == "center-tap" else 4
    c = Circuit(topology=topology, rectifier=rectifier, v_in=V_IN, v_out=V_OUT, i_out=I_OUT,
                f_sw=F_SW, duty=duty,
                switches=[SwitchModel(R_ON, BODY) for _ in range(n_sw)],
                rectifiers=[RECT for _ in range(n_rect)], n_p=n_p, n_s=n_s, l_m=L_M,
                r_primary=R_P, r_secondary=R_S, core_area=1e-4, l_out=L_OUT, dcr_out=DCR,
                c_out=CapacitorModel(200e-6, 0.005),
                i_l_start=I_OUT - di_l / 2, i_m_start=-di_m / 2)
    if topology == "half-bridge":
        c.c_split = [CapacitorModel(20e-6, 0.005), CapacitorModel(20e-6, 0.005)]
    else:
        c.c_in = CapacitorModel(20e-6, 0.005)
    return c


def run_case(case: str, folder):
    from stresscheck.spice.simulate import simulate

    kept = keep_folder(folder)
    c = make_circuit(case)
    return c, simulate(c, keep_netlist=kept / f"{case}.cir"), kept


simulated = simulated_cases(run_case)


@pytest.mark.parametrize("case", list(CASES))
def test_regulation_and_energy_balance(simulated, case):
    c, r, _ = simulated(case)
    # The regulation loop's own acceptance criterion (ngspice notes: within 1e-4).
    assert abs(r.v_out_mean / c.v_out - 1) < 1e-4
    # Conduction drops raise the duty above the ideal value (ngspice notes; common
    # practice), by a few percent here.
    assert c.duty < r.duty < 1.1 * c.duty
    # Energy conservation: p_in = p_out + losses + damping loss + change of stored energy
    # (common practice). It closes to a few 1e-6 here; 1e-3 leaves room for the diode
    # fit (±3 mV per decade of current) at other operating points.
    assert_energy_balance(case, c, r)


@pytest.mark.parametrize("case", list(CASES))
def test_charge_balance(simulated, case):
    c, r, _ = simulated(case)
    # Capacitor charge balance: inductor mean = load current (Erickson & Maksimovic,
    # 2nd ed., ch. 2 -- from memory); 5e-4 covers the 1e-4 regulation tolerance.
    assert r.diagnostics["i_l_mean"] == pytest.approx(c.i_out, rel=5e-4)
    for name, value in r.diagnostics.items():
        if "capacitor" in name and name.endswith(".i_mean"):
            # Mean capacitor current ~0 against amperes of ripple (common practice).
            assert abs(value) < 1e-3 * c.i_out, name
    # Each rectifier carries the output current in its half-cycle and half of it in
    # the freewheel interval: i_avg = i_out/2 (center-tap: each of 2 diodes;
    # full-bridge: each of 4) (Erickson & Maksimovic, 2nd ed., ch. 6 -- from memory).
    for k in range(len(c.rectifiers)):
        assert r.positions[("rectifier", k)]["i_avg"] == pytest.approx(c.i_out / 2, rel=5e-3)


@pytest.mark.parametrize("case", list(CASES))
def test_voltage_stresses(simulated, case):
    c, r, _ = simulated(case)
    vp = v_primary(c.topology)
    # Switch blocking voltage: v_in for bridge legs, 2·v_in for push-pull (Erickson &
    # Maksimovic, 2nd ed., ch. 6 -- from memory); 2 % covers the input-capacitor ripple.
    v_sw = 2 * V_IN if c.topology == "push-pull" else V_IN
    for k in range(len(c.switches)):
        assert r.positions[("switch", k)]["v_peak"] == pytest.approx(v_sw, rel=0.02)
    # Rectifier reverse voltage: the whole secondary, 2·v_p·n_s/n_p for a center tap,
    # v_p·n_s/n_p for a bridge (same source); 3 % covers conduction drops and ripple.
    v_rr = (2 if c.rectifier == "center-tap" else 1) * vp * c.n_s / c.n_p
    for k in range(len(c.rectifiers)):
        assert r.positions[("rectifier", k)]["v_reverse_peak"] == pytest.approx(v_rr, rel=0.03)


@pytest.mark.parametrize("case", list(CASES))
def test_magnetizing_current(simulated, case):
    c, r, _ = simulated(case)
    # Faraday's law with a balanced flux: i_m,peak = v_p·D/(2·f_sw·L_m) (Erickson &
    # Maksimovic, 2nd ed., ch. 6 -- from memory); 2 % covers the primary-side drops.
    expected = v_primary(c.topology) * r.duty / (2 * c.f_sw * c.l_m)
    xf = r.positions[("transformer", 0)]
    assert xf["i_m_peak"] == pytest.approx(expected, rel=0.02)
    assert xf["b_peak"] == pytest.approx(c.l_m * xf["i_m_peak"] / (c.n_p * c.core_area))
    assert abs(r.diagnostics["i_m_mean"]) < 0.01 * xf["i_m_peak"]


def test_half_bridge_split_capacitors(simulated):
    c, r, _ = simulated("hb-ct-48v-smoke")
    # With a bus that supplies only DC, each split capacitor carries its rail's
    # (input current - switch current): rms ~ n·I_o·sqrt(D(1 - D)) for a flat-topped
    # switch current (ngspice notes, "Physics"; charge balance). 3 % covers the
    # output-inductor ripple on the flat top.
    n = c.n_s / c.n_p
    expected = n * c.i_out * math.sqrt(r.duty * (1 - r.duty))
    for k in (0, 1):
        q = r.positions[("split-capacitor", k)]
        assert q["i_ripple_rms"] == pytest.approx(expected, rel=0.03)
        assert q["v_peak"] == pytest.approx(V_IN / 2, rel=0.03)


@pytest.mark.parametrize("case", list(CASES))
def test_files_kept_and_reference_reproduced(simulated, case):
    c, r, folder = simulated(case)
    fresh = kept_results(folder, case)
    assert fresh["duty"] == pytest.approx(r.duty)
    # Same models and simulator: the stresses reproduce to far better than 1e-3
    # (solver round-off and ngspice version are the only differences).
    assert_reference_reproduced(case, fresh["duty"], fresh["positions"])


def test_diode_model_dc_sweep():
    from stresscheck.spice.simulate import diode_dc_sweep
    # The straight-line model v = v_f0 + r_d·I (offset source + near-ideal diode + r_d,
    # ngspice notes): the near-ideal diode adds n·V_T·ln(I/I_S), which varies by
    # n·V_T·ln(10) ~ 3 mV per decade; 5 mV over 0.1..4 times the design current.
    from stresscheck.spice.elements import I_REF_FRACTION
    i_ref = I_REF_FRACTION * I_OUT  # as the converter netlists choose it
    i, v = diode_dc_sweep(RECT, i_ref, 4 * i_ref, n=40)
    sel = i >= 0.1 * i_ref
    assert sel.sum() >= 30
    err = v - (RECT.v_f0 + RECT.r_d * i)
    assert np.max(np.abs(err[sel])) < 5e-3
    assert abs(np.interp(i_ref, i, err)) < 0.2e-3  # exact at the design current
