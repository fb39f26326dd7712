"""Thermal network with shared heatsinks and temperature-derated ratings (thermal.py)."""

import numpy as np
import pytest

from stresscheck.thermal import derated_current, network_temperatures


def test_shared_heatsink_without_feedback():
    # Series thermal resistances (common practice; e.g. Mohan, Undeland & Robbins, Power
    # Electronics, 3rd ed., ch. 29 — from memory): two devices of 3 W and 5 W (two of
    # the second in parallel) on a 1.5 K/W sink at 40 °C: T_s = 40 + 1.5·(3 + 2·5) =
    # 59.5 °C; junctions at T_s + P·(R_jc + R_cs) with 1.2 and 0.8 K/W.
    t_a = np.array([40.0])
    temps, sinks = network_temperatures(
        t_a, {"a": np.array([3.0]), "b": np.array([5.0]), "c": np.array([2.0])},
        {"a": (1.2, "hs", 1), "b": (0.8, "hs", 2), "c": (20.0, None, 1)}, {"hs": 1.5})
    assert sinks["hs"][0] == pytest.approx(59.5)
    assert temps["a"][0] == pytest.approx(59.5 + 3.6)
    assert temps["b"][0] == pytest.approx(59.5 + 4.0)
    assert temps["c"][0] == pytest.approx(80.0)  # on no sink: T_a + P·R_ja


def test_shared_heatsink_fixed_point_matches_closed_form():
    # Losses that rise linearly with junction temperature (conduction with R_DS(on)
    # linear in T_j): P_i = a_i + b_i·T_i. With the network T_i = T_a + R_s·Σ n_j·P_j +
    # r_i·P_i this is a linear system, solved exactly here; the fixed point the engine
    # runs (losses at the last temperatures, then the network) must converge to it.
    t_a = np.array([25.0, 60.0])
    a = {"q1": 2.0, "q2": 3.5, "d1": 1.0}
    b = {"q1": 0.010, "q2": 0.020, "d1": 0.0}
    paths = {"q1": (1.0, "hs", 2), "q2": (0.7, "hs", 1), "d1": (2.0, "hs", 1)}
    r_s = 2.0
    keys = list(a)
    # closed form: (I − R·B)·T = T_a·1 + R·a, R_ij = r_i·δ_ij + R_s·n_j
    n = np.array([paths[k][2] for k in keys], dtype=float)
    r = np.diag([paths[k][0] for k in keys]) + r_s * np.tile(n, (3, 1))
    bb = np.diag([b[k] for k in keys])
    av = np.array([a[k] for k in keys])
    exact = np.array([np.linalg.solve(np.eye(3) - r @ bb, ta + r @ av) for ta in t_a])
    temps = {k: t_a.copy() for k in keys}
    for _ in range(500):
        losses = {k: a[k] + b[k] * temps[k] for k in keys}
        new, _ = network_temperatures(t_a, losses, paths, {"hs": r_s})
        moved = max(float(np.max(np.abs(new[k] - temps[k]))) for k in keys)
        temps = new
        if moved < 1e-10:
            break
    for j, k in enumerate(keys):
        assert temps[k] == pytest.approx(exact[:, j], abs=1e-8)


def test_current_rating_derated_linearly_with_case_temperature():
    # Straight-line derating of the continuous current from the stated case temperature
    # to zero at T_j,max (common practice): 60 A at 25 °C, 175 °C max -> 30 A at 100 °C;
    # a rating stated at 100 °C (30 A) gives the same line.
    assert derated_current(60.0, 25.0, 175.0, 100.0) == pytest.approx(30.0)
    assert derated_current(30.0, 100.0, 175.0, 137.5) == pytest.approx(15.0)
    assert derated_current(60.0, 25.0, 175.0, np.array([0.0, 180.0])) == \
        pytest.approx([60.0, 0.0])
