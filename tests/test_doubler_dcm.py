"""Current doubler with diode rectifiers at light load (doubler_dcm): DCM, the
magnetizing-valley regime, no load, the boundary with CCM on both sides.

References:
- [B] Balogh, "The current-doubler rectifier: an alternative rectification technique for
  push-pull and bridge converters", Unitrode application note U-165 (from memory): in
  CCM V_o = n·D·V_src, each inductor I_o/2 with ripple ΔI = V_o·(1 − D)·Ts/L.
- [EM] Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., §2.2 (inductor
  volt-second and capacitor charge balance), applied here to the doubler in its
  discontinuous mode with L_m → ∞ (lossless): each inductor rises from zero for D·Ts at
  (E − V_o)/L (E = n·V_src) to P = (E − V_o)·D·Ts/L, falls to zero in
  t_f = (E − V_o)·D·Ts/V_o, then during the other on-interval falls at −V_o/L to
  −N = −V_o·D·Ts/L (the conducting diode carries the sum of both inductors) and returns
  to zero after it in t_r = V_o·D·Ts/(E − V_o), the winding reversed by the switches'
  body diodes. Charge balance, mean = I_o/2:
  D² = I_o·L / (E·Ts·((E − V_o)/V_o − V_o/(E − V_o))).
Lossless test parts; tolerance builders_bridge_ext.REL (1e-4 relative): the solver
converges far tighter, and L_m = 1 H leaves a magnetizing current of about 1e-4 of the
peaks (allowed for explicitly where it adds to a current).
"""

import math

import numpy as np
import pytest

from builders import write_case
from builders_bridge_ext import REL, ext_design, ext_parts, values
from stresscheck.design import load_design
from stresscheck.engine import run

TOPS = ["full-bridge", "half-bridge", "push-pull"]
L_OUT, TS, VO = 47e-6, 1e-5, 12.0


def doubler(tmp_path, topology, io, l_m="1 H", bleeder=None):
    n_s = 8 if topology == "half-bridge" else 4  # n = 1 (half-bridge: 2)
    parts = ext_parts(lossless=True, n_p=4, n_s=n_s, l_m=l_m, c_in="1 F", l_out="47 uH")
    doc = ext_design(topology, "current-doubler", io={"min": io, "max": "10 A"})
    if bleeder:
        doc["operating"]["minimum_load"] = bleeder
    return run(load_design(write_case(tmp_path, doc, parts)))


def _e(ev, topology):
    n = ev.stage.transformer.n_s / ev.stage.transformer.n_p
    vin = ev.corners["input_voltage"]
    return n * (vin / 2 if topology == "half-bridge" else vin), n


@pytest.mark.parametrize("topology", TOPS)
def test_dcm_limit_closed_form(tmp_path, topology):
    """[EM] charge balance of the discontinuous doubler (module docstring): duty, the
    inductor peak and dip, the switch's body-diode current n·N, the diode mean I_o/2."""
    ev = doubler(tmp_path, topology, "0.3 A")
    e, n = _e(ev, topology)
    i = np.flatnonzero(ev.corners["output_current"] == 0.3)
    assert set(ev.result.regime[i]) == {"DCM"}
    e = e[i]
    d = np.sqrt(0.3 * L_OUT / (e * TS * ((e - VO) / VO - VO / (e - VO))))
    assert np.all(d * TS + (e - VO) * d * TS / VO <= TS / 2)  # the idle interval exists
    np.testing.assert_allclose(ev.result.duty[i], d, rtol=REL)
    for ref, k in (("L1", 0), ("L2", 1)):
        np.testing.assert_allclose(values(ev, ref, "i_peak")[i], (e - VO) * d * TS / L_OUT,
                                   rtol=REL)
        dip = ev.result.currents[("inductor", k)].min()[i]
        np.testing.assert_allclose(dip, -VO * d * TS / L_OUT, rtol=REL)
    for ref in ("D1", "D2"):
        np.testing.assert_allclose(values(ev, ref, "i_avg")[i], 0.15, rtol=REL)
    # the switch carries n·(i_2 − i_ms): the magnetizing current (at most its swing,
    # V_src·D·Ts/L_m with L_m = 1 H) is the allowance beside the reflected dip
    sw = ev.result.currents[("switch", 0)].min()[i]
    np.testing.assert_allclose(sw, -n * VO * d * TS / L_OUT, rtol=REL,
                               atol=float((e / n * d * TS / 1.0).max()))


@pytest.mark.parametrize("topology", TOPS)
def test_ccm_boundary_both_sides(tmp_path, topology):
    """L_m = 200 µH: [B] CCM while L2's valley I_o/2 − ΔI/2 stays above the magnetizing
    current referred to the secondary, i_m/n with i_m = V_src·D·Ts/(2·L_m); just below,
    diode A stops in the freewheel (magnetizing-valley), the duty falls below [B]'s
    value, continuously at the boundary (within 2 %)."""
    probe = doubler(tmp_path / "p", topology, "1 A", l_m="200 uH")
    e, n = _e(probe, topology)
    hi = np.flatnonzero(e == e.max())
    e_hi = e.max()
    d = VO / e_hi
    l_m = 200e-6
    i_m = (e_hi / n) * d * TS / (2 * l_m)
    i_bound = VO * (1 - d) * TS / L_OUT + 2 * i_m / n
    above = doubler(tmp_path / "a", topology, f"{1.02 * i_bound} A", l_m="200 uH")
    below = doubler(tmp_path / "b", topology, f"{0.98 * i_bound} A", l_m="200 uH")
    ja = [j for j in hi if above.corners["output_current"][j] < 5]
    jb = [j for j in hi if below.corners["output_current"][j] < 5]
    assert set(above.result.regime[ja]) == {"CCM"}
    assert set(below.result.regime[jb]) == {"magnetizing-valley"}
    np.testing.assert_allclose(above.result.duty[ja], d, rtol=REL)
    db = below.result.duty[jb]
    assert np.all(db < d) and np.all(db > 0.98 * d)


@pytest.mark.parametrize("topology", TOPS)
def test_no_load_skips_pulses_and_keeps_voltage_stresses(tmp_path, topology):
    """0 A and no minimum load: pulse skipping; each diode still blocks the full
    secondary voltage n·V_src of an occasional pulse [B]; every stress finite."""
    ev = doubler(tmp_path, topology, "0 A", l_m="200 uH")
    e, _ = _e(ev, topology)
    i = np.flatnonzero(ev.corners["output_current"] == 0)
    assert set(ev.result.regime[i]) == {"pulse-skipping"}
    assert np.all(ev.result.duty[i] < 1e-4)
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak")[i], e[i], rtol=REL)
    for s in ev.stresses:
        if not s.reason:
            assert np.all(np.isfinite(s.values[s.applicable])), (s.ref, s.quantity)


def test_minimum_load_sets_the_no_load_duty(tmp_path):
    """A 40 Ω bleeder at 12 V draws 0.3 A: the no-load corner is the 0.3 A case."""
    ev = doubler(tmp_path / "r", "full-bridge", "0 A", bleeder="40 ohm")
    ref = doubler(tmp_path / "c", "full-bridge", "0.3 A")
    i0 = np.flatnonzero(ev.corners["output_current"] == 0)
    i3 = np.flatnonzero(ref.corners["output_current"] == 0.3)
    assert set(ev.result.regime[i0]) == {"DCM"}
    np.testing.assert_allclose(ev.result.duty[i0], ref.result.duty[i3], rtol=1e-9)
    assert math.isfinite(float(ev.result.duty[i0].max()))
