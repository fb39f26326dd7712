"""Core and copper loss relations (stresscheck/magnetics_loss.py)."""

import numpy as np
import pytest

from stresscheck import magnetics_loss as M

# Steinmetz parameters in the range ferrite makers fit near 100 kHz (invented values of
# the usual magnitude; common practice): P_v in W/m³ with f in Hz and B̂ in T.
K, ALPHA, BETA = 1.5, 1.4, 2.6


def test_steinmetz_hand_worked_example():
    # Hand-worked example of the Steinmetz power law P_v = k·f^α·B̂^β (Steinmetz 1892; in
    # the form of Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed.,
    # §13.2.2 — from memory). No published example is reproduced: the coefficients
    # are invented and the arithmetic is written out:
    #   a material that loses 200 kW/m³ at 100 kHz and 0.1 T, α = 1.4, β = 2.6
    #   k = 200e3 / (1e5^1.4 · 0.1^2.6) = 200e3 / (1e7 · 2.5119e-3) = 7.9621
    #   at 200 kHz, 0.05 T: P_v = 200e3 · 2^1.4 · 0.5^2.6 = 200e3 · 2.6390 · 0.16494
    #                          = 87.05 kW/m³; in a 20 cm³ core (2e-5 m³): 1.741 W
    k = M.steinmetz_k_from_point(200e3, 1e5, 0.1, 1.4, 2.6)
    assert k == pytest.approx(7.9621, rel=1e-4)
    p_v = M.steinmetz_density(k, 1.4, 2.6, 2e5, 0.05)
    assert p_v == pytest.approx(87.05e3, rel=1e-3)
    assert p_v * 2e-5 == pytest.approx(1.741, rel=1e-3)


def test_igse_reduces_to_steinmetz_for_a_sinusoid():
    # The iGSE coefficient k_i is defined so that a sinusoid gives the Steinmetz loss
    # (Venkatachalam, Sullivan, Abdallah, Tacca, IEEE COMPEL 2002, eq. (10)). A sinusoid
    # of 0.1 T peak at 100 kHz, drawn as 4000 straight pieces.
    f, b_pk, m = 1e5, 0.1, 4000
    t = np.linspace(0.0, 1.0 / f, m + 1)
    b = b_pk * np.sin(2 * np.pi * f * t)
    swings = np.diff(b)[None, :]
    dur = np.diff(t)[None, :]
    p_igse = M.igse_density(K, ALPHA, BETA, swings, dur, np.array([1.0 / f]))
    # piecewise-linear sampling of the sine: |dB/dt|^α averaged over chords, error
    # ~ (π/m)² relative, below 1e-5 at m = 4000
    assert p_igse[0] == pytest.approx(M.steinmetz_density(K, ALPHA, BETA, f, b_pk), rel=1e-5)


@pytest.mark.parametrize("duty", [0.5, 0.2, 0.7])
def test_igse_triangle_closed_form(duty):
    # Triangular flux rising over D·T and falling over (1 − D)·T: the iGSE gives
    # P_v = k_i·ΔB^β·f^α·(D^(1−α) + (1 − D)^(1−α)) (Venkatachalam et al. 2002, the
    # piecewise-linear form, eq. (11), for two pieces of swing ΔB each).
    f, dbpp = 1e5, 0.15
    t = 1.0 / f
    swings = np.array([[dbpp, -dbpp]])
    dur = np.array([[duty * t, (1 - duty) * t]])
    ki = M.igse_ki(K, ALPHA, BETA)
    expected = ki * dbpp ** BETA * f ** ALPHA * (duty ** (1 - ALPHA)
                                                 + (1 - duty) ** (1 - ALPHA))
    assert M.igse_density(K, ALPHA, BETA, swings, dur, np.array([t]))[0] == \
        pytest.approx(expected, rel=1e-12)
    # a flat part (constant flux, e.g. a bridge's freewheel) adds nothing
    swings4 = np.array([[dbpp, 0.0, -dbpp, 0.0]])
    dur4 = np.array([[duty * t / 2, (1 - duty) * t / 2, duty * t / 2, (1 - duty) * t / 2]])
    p4 = M.igse_density(K, ALPHA, BETA, swings4, dur4, np.array([t]))[0]
    assert p4 == pytest.approx(ki * dbpp ** BETA * f ** ALPHA * 2 * (duty / 2) ** (1 - ALPHA),
                               rel=1e-12)


def test_copper_resistance_with_temperature():
    # IEC 60028: annealed copper, 0.00393 per K at 20 °C. At 100 °C a resistance stated
    # at 20 °C is 1 + 0.00393·80 = 1.3144 times larger; stated at 25 °C, 1.3144/1.01965.
    assert M.copper_factor(100.0, 20.0) == pytest.approx(1.3144, rel=1e-9)
    assert M.copper_factor(100.0, 25.0) == pytest.approx(1.3144 / 1.01965, rel=1e-9)
