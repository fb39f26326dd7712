"""Core and copper losses of magnetic parts: plain relations, vectorised over corners.

Sources
-------
[STE] C. P. Steinmetz, "On the law of hysteresis", Trans. AIEE 9 (1892); the power-law
      form P_v = k·f^α·B̂^β for sinusoidal excitation as core makers fit it (common
      practice; e.g. Erickson & Maksimović, *Fundamentals of Power Electronics*, 2nd
      ed., §13.2.2, eq. 13.18 — from memory).
[iGSE] K. Venkatachalam, C. R. Sullivan, T. Abdallah, H. Tacca, "Accurate prediction of
      ferrite core loss with nonsinusoidal waveforms using only Steinmetz parameters",
      IEEE COMPEL 2002, eqs. (6)–(10) and the piecewise-linear form (11) — from memory.
[CU]  IEC 60028 (international standard of resistance for copper): annealed copper,
      temperature coefficient 0.00393 per K at 20 °C (0.393 %/K).
"""

from __future__ import annotations

import numpy as np

COPPER_TC_20 = 0.00393  # [1/K] at 20 °C, annealed copper [CU]
COPPER_T_REF = 20.0  # [degC] reference temperature of COPPER_TC_20
QUAD_POINTS = 4096  # midpoint rule on [0, 2π] for the iGSE integral (periodic: spectral)


def steinmetz_density(k, alpha, beta, f, b_peak):
    """Core loss density of sinusoidal excitation P_v = k·f^α·B̂^β [W/m³].

    Parameters
    ----------
    k : float
        Steinmetz coefficient [W/m³ with f in Hz and B̂ in T].
    alpha, beta : float
        Frequency and flux exponents [1].
    f : array_like
        Frequency [Hz].
    b_peak : array_like
        Peak flux density, half the peak-to-peak swing [T].

    Returns
    -------
    ndarray
        Loss density [W/m³] ([STE]).
    """
    return k * np.asarray(f, dtype=float) ** alpha * np.abs(np.asarray(b_peak, float)) ** beta


def steinmetz_k_from_point(p_ref, f_ref, b_ref, alpha, beta):
    """k from one loss density stated at a frequency and peak flux [W/m³ per Hz^α·T^β].

    k = P_ref/(f_ref^α·B_ref^β) (the same relation read backwards, [STE]).

    Parameters
    ----------
    p_ref : float
        Loss density at the reference point [W/m³].
    f_ref : float
        Its frequency [Hz].
    b_ref : float
        Its peak flux density [T].
    alpha, beta : float
        Exponents [1].

    Returns
    -------
    float
        k [W/m³ with f in Hz and B̂ in T].
    """
    return p_ref / (f_ref ** alpha * b_ref ** beta)


def igse_ki(k, alpha, beta):
    """Coefficient k_i of the improved generalised Steinmetz equation.

    k_i = k / ((2π)^(α−1)·∫₀^2π |cos θ|^α·2^(β−α) dθ)   ([iGSE] eq. (10)), so that the
    iGSE gives k·f^α·B̂^β for a sinusoid.

    Parameters
    ----------
    k, alpha, beta : float
        Steinmetz parameters ([STE] form).

    Returns
    -------
    float
        k_i [W/m³ with dB/dt in T/s and ΔB in T].
    """
    theta = (np.arange(QUAD_POINTS) + 0.5) * (2 * np.pi / QUAD_POINTS)
    integral = np.sum(np.abs(np.cos(theta)) ** alpha) * (2 * np.pi / QUAD_POINTS)
    return k / ((2 * np.pi) ** (alpha - 1) * integral * 2.0 ** (beta - alpha))


def igse_density(k, alpha, beta, swings, durations, period):
    """Core loss density of a piecewise-linear flux waveform by the iGSE [W/m³].

    Notes
    -----
    P_v = (1/T)·∫ k_i·|dB/dt|^α·ΔB^(β−α) dt; for a flux that changes linearly by ΔB_m
    over Δt_m in each piece, P_v = (k_i·ΔB^(β−α)/T)·Σ_m |ΔB_m|^α·Δt_m^(1−α), with ΔB
    the peak-to-peak swing of the period ([iGSE] eq. (11)); pieces of constant flux add
    nothing. One major loop per period (minor loops are not split out). For a
    symmetrical triangle (rise and fall over T/2 each) and α in the usual ferrite range
    this is within a few percent of the sinusoidal Steinmetz loss at the same ΔB.

    Parameters
    ----------
    k, alpha, beta : float
        Steinmetz parameters ([STE] form).
    swings : array_like
        (N, M) signed flux change of each piece, in time order over one period [T]
        (they sum to zero in steady state).
    durations : array_like
        (N, M) duration of each piece [s].
    period : array_like
        (N,) period [s].

    Returns
    -------
    ndarray
        (N,) loss density [W/m³].
    """
    signed = np.asarray(swings, dtype=float)
    swings = np.abs(signed)
    dur = np.asarray(durations, dtype=float)
    safe = np.where(dur > 0, dur, 1.0)
    terms = np.where((dur > 0) & (swings > 0), swings ** alpha * safe ** (1 - alpha), 0.0)
    # peak-to-peak swing of the period (one major loop)
    b = np.cumsum(signed, axis=1)
    dbpp = np.maximum(b.max(axis=1), 0.0) - np.minimum(b.min(axis=1), 0.0)
    ki = igse_ki(k, alpha, beta)
    return ki * dbpp ** (beta - alpha) * terms.sum(axis=1) / np.asarray(period, dtype=float)


def copper_factor(t, t_ref):
    """R(T)/R(T_ref) of copper [1] ([CU]: 0.393 %/K at 20 °C).

    R(T)/R(T_ref) = (1 + a₂₀·(T − 20 °C))/(1 + a₂₀·(T_ref − 20 °C)).

    Parameters
    ----------
    t : array_like
        Copper (hot-spot) temperature [degC].
    t_ref : float
        Temperature at which the sheet states the resistance [degC].

    Returns
    -------
    ndarray
        Resistance ratio [1].
    """
    return ((1.0 + COPPER_TC_20 * (np.asarray(t, dtype=float) - COPPER_T_REF))
            / (1.0 + COPPER_TC_20 * (t_ref - COPPER_T_REF)))


def steinmetz_k(e: dict):
    """k of a sheet [W/m³ with f in Hz, B̂ in T]: ``steinmetz_k``, or from the stated
    loss density at a peak flux and frequency (``steinmetz_k_from_point``); None if the
    sheet gives neither (or misses an exponent or the volume)."""
    if not all(k in e for k in ("steinmetz_alpha", "steinmetz_beta", "core_volume")):
        return None
    if "steinmetz_k" in e:
        return float(e["steinmetz_k"])
    if "core_loss_density" in e:
        return steinmetz_k_from_point(e["core_loss_density"], e["core_loss_frequency"],
                                      e["core_loss_flux"], e["steinmetz_alpha"],
                                      e["steinmetz_beta"])
    return None


def core_loss(e: dict, swings, durations, period):
    """Core loss of a magnetic part [W] from its sheet and its flux pieces (iGSE).

    Parameters
    ----------
    e : dict
        The part's electrical values (``steinmetz_*``, ``core_loss_*``, ``core_volume``).
    swings, durations : array_like
        (N, M) signed flux change [T] and duration [s] of each straight piece.
    period : array_like
        (N,) period [s].

    Returns
    -------
    ndarray or None
        (N,) loss [W] (``igse_density`` × core volume), None when the sheet has no
        core-loss data.
    """
    k = steinmetz_k(e)
    if k is None:
        return None
    density = igse_density(k, e["steinmetz_alpha"], e["steinmetz_beta"], swings, durations,
                           period)
    return density * e["core_volume"]
