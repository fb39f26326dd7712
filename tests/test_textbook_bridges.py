"""Bridge-family stresses in the lossless limit against textbook relations.

Source for the ideal relations: R. W. Erickson and D. Maksimović, *Fundamentals of Power
Electronics*, 2nd ed., §6.3.1 (full-bridge), §6.3.2 (half-bridge), §6.3.4 (push-pull) —
from memory. There D is the fraction of the *output* ripple period; here the duty ratio
is per switch (t_on·f_sw), so their D equals our 2·D. With n = N_s/N_p:
  full-bridge, push-pull:  V_o = n·(2D)·V_in        half-bridge: V_o = n·(2D)·V_in/2
  switch voltage:          V_in (full-, half-bridge), 2·V_in (push-pull)
  center-tap rectifier:    2·n·V_src; bridge rectifier: n·V_src (V_src = V_in, or V_in/2
                           for the half-bridge)
  each center-tap diode carries I_o/2 on average (symmetry).
Inductor and capacitor ripple relations (triangular ripple, rms = ΔI/(2√3)): same book,
§2.3 and §2.4 (from memory).

The lossless limit: every resistance ~0, v_f0 = 0, input capacitor of 1 F (so the bus
ripple is below 1e-5 of V_in). Tolerance 1e-4 relative: the relations are exact there,
the margin covers the residual bus ripple only.
"""

import math

import numpy as np
import pytest

from builders import bridge_design, bridge_parts, write_case
from stresscheck.design import load_design
from stresscheck.engine import run

CASES = [("full-bridge", "center-tap"), ("full-bridge", "full-bridge"),
         ("half-bridge", "center-tap"), ("half-bridge", "full-bridge"),
         ("push-pull", "center-tap"), ("push-pull", "full-bridge")]
REL = 1e-4


def lossless_eval(tmp_path, topology, rectifier):
    n_s = 4 if topology == "half-bridge" else 2
    parts = bridge_parts(lossless=True, n_p=4, n_s=n_s, l_m="1 H", c_in="1 F")
    path = write_case(tmp_path, bridge_design(topology, rectifier), parts)
    return run(load_design(path))


def values(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s.values


@pytest.mark.parametrize("topology,rectifier", CASES)
def test_ideal_conversion_ratio(tmp_path, topology, rectifier):
    ev = lossless_eval(tmp_path, topology, rectifier)
    c = ev.corners
    n = ev.stage.transformer.n_s / ev.stage.transformer.n_p
    v_src = c["input_voltage"] / (2 if topology == "half-bridge" else 1)
    expected_2d = c["output_voltage"] / (n * v_src)
    np.testing.assert_allclose(2 * ev.result.duty, expected_2d, rtol=REL)


@pytest.mark.parametrize("topology,rectifier", CASES)
def test_ideal_voltage_stresses(tmp_path, topology, rectifier):
    ev = lossless_eval(tmp_path, topology, rectifier)
    vin = ev.corners["input_voltage"]
    n = ev.stage.transformer.n_s / ev.stage.transformer.n_p
    v_switch = 2 * vin if topology == "push-pull" else vin
    v_src = vin / 2 if topology == "half-bridge" else vin
    v_rect = (2 if rectifier == "center-tap" else 1) * n * v_src
    for ref in ("Q1", "Q2"):
        np.testing.assert_allclose(values(ev, ref, "v_peak"), v_switch, rtol=REL)
    for ref in ("D1", "D2"):
        np.testing.assert_allclose(values(ev, ref, "v_reverse_peak"), v_rect, rtol=REL)


@pytest.mark.parametrize("topology,rectifier", CASES)
def test_ideal_currents(tmp_path, topology, rectifier):
    ev = lossless_eval(tmp_path, topology, rectifier)
    c = ev.corners
    io, vo, fs = c["output_current"], c["output_voltage"], c["switching_frequency"]
    d = ev.result.duty
    n = ev.stage.transformer.n_s / ev.stage.transformer.n_p
    v_src = c["input_voltage"] / (2 if topology == "half-bridge" else 1)
    # ripple over the on-interval D/f_sw with n·V_src − V_o across L
    ripple = (n * v_src - vo) * d / fs / ev.stage.inductors[0].l
    np.testing.assert_allclose(values(ev, "L1", "i_peak"), io + ripple / 2, rtol=REL)
    np.testing.assert_allclose(values(ev, "L1", "i_rms"),
                               np.sqrt(io ** 2 + ripple ** 2 / 12), rtol=REL)
    np.testing.assert_allclose(values(ev, "C1", "i_ripple_rms"), ripple / (2 * math.sqrt(3)),
                               rtol=REL)
    # each rectifier carries half the load on average (two conduction paths)
    np.testing.assert_allclose(values(ev, "D1", "i_avg"), io / 2, rtol=REL)
    # switch peak: reflected inductor peak (magnetizing current negligible with L_m = 1 H)
    np.testing.assert_allclose(values(ev, "Q1", "i_peak"), n * (io + ripple / 2), rtol=REL)
    # switch rms of a trapezoid n·[I_min, I_max] over D (rms of a ramp, same book §A)
    i_min, i_max = io - ripple / 2, io + ripple / 2
    np.testing.assert_allclose(values(ev, "Q1", "i_rms"),
                               n * np.sqrt(d * (i_min ** 2 + i_min * i_max + i_max ** 2) / 3),
                               rtol=REL)


@pytest.mark.parametrize("topology,rectifier", CASES)
def test_flux_from_volt_seconds(tmp_path, topology, rectifier):
    """B_peak = V·t_on/(2·N_p·A_e): Faraday's law with a symmetric swing (any magnetics
    text, e.g. McLyman, Transformer and Inductor Design Handbook — from memory)."""
    ev = lossless_eval(tmp_path, topology, rectifier)
    c = ev.corners
    v_src = c["input_voltage"] / (2 if topology == "half-bridge" else 1)
    t_on = ev.result.duty / c["switching_frequency"]
    expected = v_src * t_on / (2 * ev.stage.transformer.n_p * 80e-6)
    np.testing.assert_allclose(values(ev, "T1", "b_peak"), expected, rtol=REL)
