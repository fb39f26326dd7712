"""Forward converters, the primary side shared by the diode and the synchronous models:
switch(es), reset winding or clamp diodes, and the transformer (see :mod:`.forward` for
the circuit, its conventions and the lossless relations).

With drops (all taken at the mean current of their interval, as in the bridge model):
* Primary emf during the on-time, e_on = V_src − (R_sw + R_p)·(n·I_L,on + I_m,on), with
  V_src the mean bus voltage over the on-time, R_sw the on-path switch resistance (two
  switches in series for the two-switch forward) and I_L,on the mean inductor current
  over the on-time (I_o in CCM, I_pk/2 in DCM), I_m,on = e_on·D·Ts/(2·L_m) − δ the mean
  magnetizing current over the on-time [A]; e_on [V].
* Magnetizing current, unipolar: from −δ (see the idle interval below; zero in DCM) up
  by e_on·D·Ts/L_m, I_m,pk = e_on·D·Ts/L_m − δ [A]. Core flux from the volt-seconds
  (Faraday's law), unipolar from (nearly) zero: B_peak = (e_on·D·Ts − L_m·δ)/(N_p·A_e)
  [T], i.e. V·t_on/(N_p·A_e) in the lossless limit (not the symmetric ±λ/2 of the
  bridges, for the same volt-seconds twice their peak). Remanence is not included:
  compare with B_sat − B_r where the core's remanence matters.
* Idle interval in CCM (after the reset, until the next on-time): the freewheel diode
  carries I_L; the forward diode starts to conduct as soon as the secondary swings to
  v_f0,rect − v_free(I_L) < 0, which clamps the transformer at
      v_cl = (v_f0,free + r_d,free·I_L,idle − v_f0,rect)/n  on the primary (if > 0)  [V]
  and drives the magnetizing current below zero, δ = v_cl·t_idle/L_m [A], carried by
  the forward diode (δ/n, ampere-turn balance) beside the freewheel diode. It lowers
  the next on-time's magnetizing peak and the reset current by a few percent where
  the rectifier drops are large against the output voltage. In DCM the idle current
  is small and δ is taken as zero.
* Reset voltage on the primary at magnetizing current i [V]:
    single switch: a_r·(V_bus + v_f0,r + (r_d,r + R_r)·a_r·i)
    two-switch:    V_bus + v_f0,a + v_f0,b + (r_d,a + r_d,b + R_p)·i
  t_r = L_m·I_m,pk / v_reset(I_m,pk/2) [s]; the corner is refused when t_r > T_off (the
  core would not reset before the next on-time and walks towards saturation).
  Reset-winding (or clamp) current a_r·i_m: ampere-turn balance of the ideal transformer.
* The source supplies only DC: the input capacitors carry all the AC current (the
  conservative convention for their ripple rating).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..waveforms import max_over, mean_over_samples, per_corner
from .base import Stage

TWO_SWITCH = "two-switch-forward"


@dataclass
class Primary:
    """Per-corner values of the primary side [SI], (N,) arrays or scalars."""

    two: bool  # two-switch forward (clamp diodes) rather than a reset winding
    n: float  # [1] N_s/N_p
    a_r: float  # [1] N_p/N_r (two-switch: 1)
    r_prim: np.ndarray  # [ohm] on-path switch resistance plus the primary winding
    v0_r: np.ndarray  # [V] threshold of the reset path (both clamp diodes)
    r_rr: np.ndarray  # [ohm] slope of the reset path, referred to the primary
    sw: list  # the switch Devices
    resets: list  # the reset (clamp) diode Devices


def primary(st: Stage) -> Primary:
    """The primary side of ``st``: turns ratios, on-path and reset-path resistances."""
    two = st.topology == TWO_SWITCH
    xf = st.transformer
    n = xf.n_s / xf.n_p
    a_r = 1.0 if two else xf.n_p / xf.n_r
    sw = st.group("switch")
    r_sw = sw[0].r_on + sw[1].r_on if two else sw[0].r_on
    r_prim = r_sw + xf.r_p
    resets = st.group("reset")
    if two:
        v0_r = resets[0].v_f0 + resets[1].v_f0
        r_rr = resets[0].r_d + resets[1].r_d + xf.r_p
    else:
        v0_r = resets[0].v_f0
        r_rr = a_r ** 2 * (resets[0].r_d + xf.r_r)
    return Primary(two, n, a_r, r_prim, v0_r, r_rr, sw, resets)


def primary_blocking(pr: Primary, bus, isw_s, im_s, e_on_s, v_res_s, v_idle, on_ns,
                     reset_on, idle) -> dict:
    """Peak blocking voltages of the switch(es) and the reset diode(s) [V], (N,) each.

    Parameters
    ----------
    pr : Primary
        The primary side.
    bus : numpy.ndarray
        Input-capacitor (bus) voltage, sampled (N, S, k) [V].
    isw_s, im_s : numpy.ndarray
        Switch and magnetizing currents, sampled (N, S, k) [A].
    e_on_s, v_res_s : numpy.ndarray
        Primary emf in the on-time and reset voltage on the primary, sampled [V].
    v_idle : numpy.ndarray
        Idle clamp voltage on the primary, broadcastable against the samples [V]
        (single switch only).
    on_ns, reset_on, idle : numpy.ndarray
        Per-corner segment masks (N, S) of the on-time, the reset and the idle interval.

    Returns
    -------
    dict
        ``{("switch", k): v, ("reset", k): v}`` [V].

    Single switch: the switch blocks the bus plus the reset voltage in the reset, the bus
    plus the idle clamp after it; the reset diode the bus plus the on-time emf over a_r.
    Two-switch: each switch blocks the bus plus its clamp diode's drop in the reset, each
    clamp diode the bus less its switch's drop in the on-time; the bus in the idle
    interval (the conservative bound, module docstring of :mod:`.forward`).
    """
    v_block: dict = {}
    if pr.two:
        for k, dev in enumerate(pr.resets):
            v_clamp = per_corner(dev.v_f0) + per_corner(dev.r_d) * im_s
            v_block[("switch", k)] = np.maximum(max_over(bus + v_clamp, reset_on),
                                                max_over(bus, idle))
            v_rev_on = bus - per_corner(pr.sw[k].r_on) * isw_s
            v_block[("reset", k)] = np.maximum(max_over(v_rev_on, on_ns),
                                               max_over(bus, idle))
    else:
        v_block[("switch", 0)] = np.maximum(max_over(bus + v_res_s, reset_on),
                                            max_over(bus + v_idle, idle))
        v_block[("reset", 0)] = np.maximum(max_over(bus + e_on_s / pr.a_r, on_ns),
                                           max_over(bus, idle))
    return v_block


def magnetics(xf, two, i_sw, i_mr, i_fwd, i_rst, e_on_s, grid, on_mask, t_on, lm, delta,
               t_r, t_off):
    """Winding loss [W], peak flux density [T] and the reset check, shared by the diode
    and synchronous paths.

    Flux rises from −L_m·δ by the on-time's volt-seconds λ = ē_on·t_on (Faraday's law,
    unipolar swing); B_peak = max(λ − L_m·δ, L_m·δ)/(N_p·A_e). The core must reset
    within the off-time: t_r <= t_off, else the corner is refused.

    Parameters
    ----------
    xf : Magnetics
        The transformer: turns, winding resistances [ohm], core area [m^2].
    two : bool
        Two-switch forward (clamp diodes, no reset winding).
    i_sw, i_mr, i_fwd, i_rst : PWL
        Switch, reset-interval magnetizing, forward-rectifier and reset-winding (or
        clamp) currents [A].
    e_on_s : numpy.ndarray
        Primary emf sampled (N, S, k) [V].
    grid : Grid
        Segment durations [s].
    on_mask : numpy.ndarray
        On-time segments (S,).
    t_on, t_r, t_off : numpy.ndarray
        On-time, reset time and off-time (N,) [s].
    lm : numpy.ndarray
        Magnetizing inductance (N,) [H].
    delta : numpy.ndarray
        Magnetizing current below zero at the start of the on-time (N,) [A].

    Returns
    -------
    tuple
        Winding loss (N,) [W]; peak flux density (N,) [T] or None without a core area;
        and the (mask, reason) of the corners where the core does not reset.
    """
    if two:  # the primary carries the magnetizing current through the clamps in the reset
        p_wind = xf.r_p * (i_sw + i_mr).rms() ** 2 + xf.r_s * i_fwd.rms() ** 2
    else:
        p_wind = (xf.r_p * i_sw.rms() ** 2 + xf.r_s * i_fwd.rms() ** 2
                  + xf.r_r * i_rst.rms() ** 2)
    lam = mean_over_samples(e_on_s, grid, on_mask) * t_on  # [V·s]
    flux = np.maximum(lam - lm * delta, lm * delta)
    b_peak = flux / (xf.n_p * xf.core_area) if xf.core_area else None
    if two:
        limit = "at most 1/2 with clamp diodes"
    else:
        limit = (f"lossless limit N_p/(N_p + N_r) = {xf.n_p:g}/({xf.n_p:g} + {xf.n_r:g}) = "
                 f"{xf.n_p / (xf.n_p + xf.n_r):.3f}")
    reason = ("the transformer does not reset within the off-time (the magnetizing current "
              "would not return to zero before the next on-time and the core walks towards "
              f"saturation; duty ratio {limit}); lower the duty ratio: raise the minimum "
              "input voltage or the turns ratio N_s/N_p"
              + ("" if two else ", or use fewer reset turns (higher reset voltage, higher "
                 "switch voltage)"))
    return p_wind, b_peak, (t_r > t_off * (1 + 1e-9), reason)
