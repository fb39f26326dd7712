"""Flux waveforms of the magnetic parts, as straight pieces, from a model's results.

The core-loss relation (``magnetics_loss.igse_density``) needs the flux change and
duration of each straight piece of one period. Faraday's law (v = N·A_e·dB/dt, any
circuits text) makes the flux follow the winding volt-seconds; for the transformer the
pieces follow from the peak flux the model computes and the intervals of each
topology, for an inductor from its current waveform (B = L·i/(N·A_e) for a core that
does not saturate).
"""

from __future__ import annotations

import numpy as np

BRIDGES = ("full-bridge", "half-bridge", "push-pull")


def transformer_pieces(stage, result):
    """(swings [T], durations [s]) of the transformer core, (N, M) each, or None.

    * full-bridge, half-bridge, push-pull (PWM and phase shift): symmetric bipolar
      swing 2·B_peak, rising over D·Ts and falling over D·Ts (the flux stays flat while
      the primary is shorted or open);
    * forward: swing L_m·ΔI_m/(N_p·A_e) from the magnetizing current's excursion,
      rising over D·Ts, falling over the reset, D·Ts·N_r/N_p (two-switch: D·Ts);
    * flyback: swing L_m·(I_m,peak − I_m,start)/(N_p·A_e), rising over D·Ts, falling
      over (1 − D)·Ts in continuous conduction, over D·Ts·V_in·N_s/(N_p·V_o) in
      discontinuous conduction (volt-second balance, drops neglected).
    """
    xf = stage.transformer
    if xf is None or result.b_peak is None or not xf.core_area:
        return None
    ts = result.grid.period
    d = result.duty
    t_on = d * ts
    if stage.topology in BRIDGES:
        db = 2.0 * np.asarray(result.b_peak, dtype=float)
        return np.column_stack([db, -db]), np.column_stack([t_on, t_on])
    db = xf.l_m * (result.i_m_peak - result.i_m_start) / (xf.n_p * xf.core_area)
    db = np.maximum(db, 0.0)
    if stage.topology == "two-switch-forward":
        t_down = t_on
    elif stage.topology == "forward":
        t_down = t_on * xf.n_r / xf.n_p
    else:  # flyback
        dcm = (np.asarray(result.regime) == "DCM") if result.regime is not None else False
        t_dcm = t_on * stage.v_in * xf.n_s / (xf.n_p * stage.vo)
        t_down = np.where(dcm, np.minimum(t_dcm, ts - t_on), ts - t_on)
    return np.column_stack([db, -db]), np.column_stack([t_on, t_down])


def inductor_pieces(current, inductance, turns, core_area):
    """(swings [T], durations [s]) of an inductor core from its current waveform.

    Parameters
    ----------
    current : PWL
        Inductor current (position total) [A].
    inductance : array_like
        (N,) inductance [H].
    turns : float
        Turns [1].
    core_area : float
        Effective core area [m²].
    """
    scale = np.asarray(inductance, dtype=float)[:, None] / (turns * core_area)
    return (current.b - current.a) * scale, current.grid.dt
