"""Avalanche of a MOSFET at an unclamped inductive turn-off.

Where the peak drain voltage of a corner, spike included (``spikes.apply``), reaches the
breakdown voltage at that corner's junction temperature (the sheet's ``v_ds`` scaled by
``ratings.breakdown_scale`` where the sheet gives ``v_ds_tc``), the switch avalanches:
the leakage inductance that drives the spike discharges into it. The energy per event
is the unclamped-inductive-switching relation (``uis_energy``); at every switching
cycle it is also a power (``p_avalanche`` = E·f_s). The energy is checked against the
sheet's ``e_as`` at the starting junction temperature (``ratings.e_as_scale``).

Rows (``e_avalanche`` every corner, ``p_avalanche`` steady and overload corners):

- the peak drain voltage is not computed (a leakage spike without a clamp or an
  allowance): not computed, with that reason — never a pass;
- below breakdown at a corner: 0 J there (computed: no avalanche);
- at or above breakdown: the energy, where the inductance that drives the spike is the
  transformer's leakage (switches of a flyback, forward or push-pull); not computed
  where no inductance is modelled for the spike (the ringing of a rectifier), or where
  the ideal off-state voltage itself reaches breakdown (no inductive event: the part
  would conduct in avalanche for the whole off-time);
- ``e_avalanche`` is added for every MOSFET whose sheet gives ``e_as`` or whose peak
  drain voltage carries a leakage spike (a clamp or an allowance, or none given: not
  computed); ``p_avalanche`` for the latter. The rows depend on the design alone, not on
  the corners. A row of 0 J at every corner passes without ``e_as`` on the sheet (no
  avalanche: no rating needed, ``Stress.zero_needs_no_rating``); any energy without
  ``e_as`` is unrated.
"""

from __future__ import annotations

import numpy as np

from .evaluation import Stress
from .ratings import breakdown_scale, e_as_scale
from .spikes import SPIKE_SWITCH_TOPOLOGIES

QUANTITIES = ("e_avalanche", "p_avalanche")
NO_INDUCTANCE = ("avalanche energy: the peak drain voltage reaches breakdown, but no "
                 "inductance is modelled for this position's spike")
DC_BREAKDOWN = ("the ideal off-state voltage itself reaches the breakdown voltage: not an "
                "inductive event (the part would avalanche for the whole off-time)")


def uis_energy(l, i_pk, v_br, v_dd):
    """Avalanche energy of one unclamped inductive turn-off [J].

    E_AS = ½·L·I_AS²·V_BR/(V_BR − V_DD): the inductor's energy ½·L·I² plus what the
    supply delivers while the current falls linearly at (V_BR − V_DD)/L. Makers' FAQ
    "How to obtain avalanche energy" (MOSFET FAQ, avalanche test circuit and waveforms);
    the same relation in NXP AN10273 "Power MOSFET single-shot and repetitive avalanche
    ruggedness rating", Rev. 3 (2015), §2 (from memory). In a converter V_DD is the
    voltage the drain returns to after the spike (the ideal off-state voltage: input
    plus reflected output for a flyback), L the leakage inductance that drives the
    spike.

    Parameters
    ----------
    l : array_like
        Inductance discharged into the switch [H].
    i_pk : array_like
        Current at turn-off [A].
    v_br : array_like
        Breakdown voltage during the avalanche [V].
    v_dd : array_like
        Voltage the inductance is discharged against besides the switch [V]; below v_br.

    Returns
    -------
    ndarray
        Energy per event [J]; NaN where v_dd >= v_br.
    """
    v_br = np.asarray(v_br, dtype=float)
    v_dd = np.asarray(v_dd, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        e = 0.5 * np.asarray(l, float) * np.asarray(i_pk, float) ** 2 * v_br / (v_br - v_dd)
    return np.where(v_br > v_dd, e, np.nan)


def _insert_after(stresses: list, ref: str, new: list) -> None:
    last = max(i for i, s in enumerate(stresses) if s.ref == ref)
    stresses[last + 1:last + 1] = new


def apply(design, corners, stage, result, stresses, positions) -> None:
    """Add ``e_avalanche`` (and ``p_avalanche``) rows of every MOSFET ref (in place).

    Parameters
    ----------
    design, corners, stage, result
        The evaluation's design, corners, per-corner parameters and model result.
    stresses : list of evaluation.Stress
        The stresses after ``spikes.apply`` and ``ratings.apply``.
    positions : list
        The design's device models (``key``, ``refs``, ``part``).
    """
    every = np.ones(corners.size, bool)
    steady = corners.steady_mask()
    xf = stage.transformer
    l_lk = xf.l_leak if xf is not None else 0.0
    by_ref = {}
    for s in stresses:
        by_ref.setdefault(s.ref, {})[s.quantity] = s
    for pos in positions:
        part = pos.part
        if part.kind != "mosfet":
            continue
        r = part.ratings
        rows = by_ref.get(pos.refs[0], {})
        v_peak = rows.get("v_peak")
        if v_peak is None or "v_ds" not in r:
            continue
        scale = (v_peak.rating_scale or {}).get("v_ds")
        if scale is None and "v_ds_tc" in r:
            scale = breakdown_scale(r["v_ds_tc"], corners["ambient_temperature"])
        v_br = r["v_ds"] * (scale if scale is not None else np.ones(corners.size))
        vp = np.asarray(v_peak.values, dtype=float)
        ideal = np.asarray(result.v_block[pos.key], dtype=float)
        reason = ""
        with np.errstate(invalid="ignore"):
            hit = vp >= v_br
        energy = np.zeros(corners.size)
        if np.isnan(vp).any():
            energy = np.where(np.isnan(vp), np.nan, energy)
            reason = v_peak.reason or "peak drain voltage not computed"
        if hit.any():
            inductive = (pos.key[0] == "switch" and design.topology in SPIKE_SWITCH_TOPOLOGIES
                         and l_lk > 0)
            if inductive:
                # the whole position's leakage energy into one device: paralleled MOSFETs
                # do not share an avalanche (the lowest breakdown takes it; common practice)
                i_pk = result.currents[pos.key].peak()
                e = uis_energy(l_lk, i_pk, v_br, ideal)
                energy = np.where(hit, e, energy)
                if np.isnan(e[hit]).any():
                    reason = reason or DC_BREAKDOWN
            else:
                energy = np.where(hit, np.nan, energy)
                reason = reason or NO_INDUCTANCE
        # rows present by the design alone (the nominal point of the sensitivity run
        # must give the same rows as the corners): a sheet rating, or a spike model
        spiked = bool(v_peak.spike or v_peak.reason)
        if "e_as" not in r and not spiked:
            continue
        tj = rows.get("t_j")
        t_start = np.asarray(tj.values, dtype=float) if tj is not None \
            else np.full(corners.size, np.nan)
        need = np.nan_to_num(energy) > 0
        if (need & ~np.isfinite(t_start)).any():
            energy = np.where(need & ~np.isfinite(t_start), np.nan, energy)
            reason = reason or ("the junction temperature is not computed: the avalanche "
                                "rating at the starting temperature is unknown")
        note = _note(hit, energy, design, r)
        e_row = Stress(pos.refs[0], pos.component, "e_avalanche", energy, every, reason,
                       note=note)
        e_row.zero_needs_no_rating = True  # no avalanche anywhere: pass without e_as
        # the rating at the starting junction temperature; 1 where nothing avalanches
        e_row.rating_scale = {"e_as": np.where(need & np.isfinite(t_start),
                                               e_as_scale(r, t_start), 1.0)}
        e_row.rating_temperature = t_start
        new = {ref: [e_row if ref == pos.refs[0] else _copy(e_row, ref)] for ref in pos.refs}
        if spiked:
            p = energy * corners["switching_frequency"]
            for ref in pos.refs:
                new[ref].append(Stress(ref, pos.component, "p_avalanche", p, steady, reason,
                                       note="repetitive avalanche: energy per turn-off × "
                                       "f_s; not included in p_loss or T_j"))
        for ref in pos.refs:
            _insert_after(stresses, ref, new[ref])


def _copy(s: Stress, ref: str) -> Stress:
    out = Stress(ref, s.component, s.quantity, s.values, s.applicable, s.reason,
                 note=s.note)
    out.rating_scale, out.rating_temperature = s.rating_scale, s.rating_temperature
    out.zero_needs_no_rating = s.zero_needs_no_rating
    return out


def _note(hit, energy, design, ratings) -> str:
    if not hit.any():
        return ("no avalanche: the peak drain voltage stays below the breakdown voltage "
                "at every corner")
    text = (f"avalanche at {int(hit.sum())} corner(s): the leakage energy "
            "½·L_lk·I²·V_BR/(V_BR − V_off) goes into the switch")
    if design.clamp is not None:
        text += " (the clamp is above the breakdown voltage and never conducts)"
    if "e_as_temperature_multipliers" not in ratings:
        text += "; e_as derated linearly to zero at t_j_max from the starting T_j"
    return text
