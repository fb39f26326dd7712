"""Forward converters: single switch with a reset winding, and two-switch forward with
clamp diodes; diode rectifier (forward diode + freewheel diode), output inductor in
continuous (CCM) or discontinuous (DCM) conduction, or synchronous rectifiers (MOSFETs
in the rectifier and/or freewheel role, with dead time; forced continuous conduction).

Circuit and conventions
-----------------------
Single switch ("forward"): primary N_p from the bus (dot) to the drain of Q1; reset winding
N_r with its dot at ground and its other end through the reset diode to the bus; the
secondary N_s (dot) through the forward diode (role ``rectifier``) to the inductor, the
freewheel diode (role ``freewheel``) from the output return to the inductor.
Two switch ("two-switch-forward"): Q1 from the bus to the primary dot, Q2 from the undotted
end to ground (both gated together), clamp diodes (role ``reset``) D_a from ground to the
dot (index 0) and D_b from the undotted end to the bus (index 1).
Duty D = on-time / period Ts = 1/fs; n = N_s/N_p; a_r = N_p/N_r (two-switch: a_r = 1, the
primary resets itself at the bus voltage).

Segment grid of one period (the off-time T_off = (1 − D)·Ts is split at the end of the reset
t_r and at the instant t_z where the inductor current reaches zero, whichever comes
first; t_z = T_off in CCM; the synchronous model cuts the off-time at the dead
times too, see :mod:`.forward_sync`):
  0: on-time D·Ts: switch(es), forward diode, magnetizing current rising (from −δ)
  1: [0, min(t_r, t_z)] after turn-off: reset (magnetizing current falling), freewheel
  2: [min, max(t_r, t_z)]: idle with freewheel (t_r < t_z), or reset at zero inductor
     current (DCM, t_z < t_r)
  3: [max(t_r, t_z), T_off]: idle at zero inductor current (DCM only; else zero length)

Relations (ideal forms in Erickson & Maksimović, Fundamentals of Power Electronics, 2nd
ed., §6.3.3 forward converter, and Mohan, Undeland & Robbins, Power Electronics, 3rd ed.,
§10.4 — from memory), extended here with conduction drops, magnetizing current and bus
ripple. Lossless limit:
  V_o = D·V_in·N_s/N_p                                           [V]
  reset: V_in·D·Ts = (V_in·N_p/N_r)·t_r  ->  t_r = D·Ts·N_r/N_p <= (1 − D)·Ts
         D_max = N_p/(N_p + N_r)  (two-switch: 1/2)               [1]
  switch: V_in·(1 + N_p/N_r) (two-switch: V_in)                   [V]
  reset diode: V_in·(1 + N_r/N_p) (two-switch clamp diodes: V_in) [V]
  forward diode: V_in·N_s/N_r during the reset (two-switch: V_in·N_s/N_p)
  freewheel diode: V_in·N_s/N_p during the on-time                [V]

The model is in three modules: :mod:`.forward_primary` (switch, reset and transformer
side, shared), :mod:`.forward_diode` (diode rectifiers, CCM and DCM) and
:mod:`.forward_sync` (synchronous rectifiers); this module holds the layout, the duty
limit and the choice between the two rectifier models.

Not modelled: leakage inductance and the turn-off spike it causes (stresses are "before
any spike"; ``spikes.apply`` adds the design's overshoot allowance), switch and diode
capacitances (the drain rings after the reset; in the idle
interval the two-switch forward's midpoint voltages are set by them, so its switches and
clamp diodes are given the conservative bound V_bus there), reverse recovery, core loss;
with synchronous rectifiers: diode emulation (light-load DCM), self-driven gate timing,
the body diodes' reverse recovery at the end of each dead time.
"""


from __future__ import annotations

import numpy as np

from ..errors import InputError
from . import forward_diode, forward_sync
from .base import Layout, RoleSpec, Stage, StageResult
from .forward_primary import TWO_SWITCH


def _transformer_part(design):
    comps = design.by_role("transformer")
    return comps[0] if comps else None


def _synchronous_freewheel(design) -> bool:
    """True where the freewheel position is a MOSFET (driven complementary to the
    switch, with the design's dead time between the two)."""
    comps = design.by_role("freewheel")
    return bool(comps) and comps[0].part.kind == "mosfet"


def check_envelope(design) -> None:
    """Nothing to refuse up front: the turns ratio lets a forward converter step up or
    down; a ratio that cannot reach the output at some corner is refused by the engine
    with that corner named (``RegulationError``).

    Parameters: ``Topology.check_envelope`` (:mod:`.base`).
    """


def layout(design) -> Layout:
    """Roles of a forward-family design; InputError for options not modelled.

    Parameters and returns: ``Topology.layout`` (:mod:`.base`).
    """
    path, top = design.path, design.topology
    two = top == TWO_SWITCH
    if design.rectifier is not None:
        raise InputError(path, "converter.rectifier", f"a {top} converter has its own "
                         "rectifier (forward and freewheel diodes, roles 'rectifier' and "
                         "'freewheel'); remove the key")
    if design.modulation != "pwm":
        raise InputError(path, "converter.modulation", f"a {top} converter takes pwm "
                         "modulation only")
    if design.dead_time and not _synchronous_freewheel(design):
        raise InputError(path, "converter.dead_time", f"a {top} converter with a diode "
                         "in the freewheel role has no complementary switches, so a dead "
                         "time has no meaning here (it applies between the switch and a "
                         "synchronous freewheel MOSFET); remove the key")
    comp = _transformer_part(design)
    if comp is not None:
        e = comp.part.electrical
        if two and "reset_turns" in e:
            raise InputError(path, f"{comp.key}.part", f"transformer '{comp.part.id}' has "
                             "reset_turns; a two-switch forward resets through its clamp "
                             "diodes and has no reset winding: use a transformer part "
                             "without reset_turns")
        if not two and "reset_turns" not in e:
            raise InputError(path, f"{comp.key}.part", f"transformer '{comp.part.id}' has "
                             "no reset_turns; a single-switch forward needs the reset "
                             "winding's turns (use two-switch-forward for a clamp-diode "
                             "reset)")
    roles = {
        "switch": RoleSpec(2 if two else 1, kinds=("mosfet",)),
        "transformer": RoleSpec(1),
        "rectifier": RoleSpec(1, kinds=("diode", "mosfet")),
        "freewheel": RoleSpec(1, kinds=("diode", "mosfet")),
        "reset": RoleSpec(2 if two else 1, kinds=("diode",)),
        "inductor": RoleSpec(1),
        "input-capacitor": RoleSpec(None),
        "output-capacitor": RoleSpec(None),
    }
    return Layout(top, None, roles)


def duty_limit(design, fs):
    """Largest duty ratio at which the core resets in the off-time, lossless [1].

    Single switch: the reset winding clamps the primary at −V_in·N_p/N_r, so the reset
    takes D·Ts·N_r/N_p and D·N_r/N_p <= 1 − D gives D_max = N_p/(N_p + N_r)
    (Erickson & Maksimović, 2nd ed., §6.3.3 — from memory). Two-switch: the clamp diodes
    reset at V_in, D_max = 1/2. The reset with drops is checked at every corner in
    ``evaluate``.

    Parameters and returns: ``Topology.duty_limit`` (:mod:`.base`); ``fs`` [Hz],
    the limit [1], (N,) each.
    """
    fs = np.asarray(fs, dtype=float)
    if design.topology == TWO_SWITCH:
        limit = np.full(fs.shape, 0.5)
    else:
        e = _transformer_part(design).part.electrical
        limit = np.full(fs.shape, e["primary_turns"] / (e["primary_turns"]
                                                       + e["reset_turns"]))
    if _synchronous_freewheel(design):  # the off-time holds the two dead times
        limit = np.minimum(limit, 1.0 - 2 * design.dead_time * fs)
    return limit


def duty_limit_reason(design) -> str:
    if design.topology == TWO_SWITCH:
        text = ("the core resets through the clamp diodes at the bus voltage, which takes "
                "as long as the on-time: at most 1/2")
    else:
        e = _transformer_part(design).part.electrical
        n_p, n_r = e["primary_turns"], e["reset_turns"]
        text = (f"the core must reset in the off-time at the reset winding's clamp "
                f"voltage: at most N_p/(N_p + N_r) = {n_p:g}/({n_p:g} + {n_r:g}) = "
                f"{n_p / (n_p + n_r):.3f}")
    if _synchronous_freewheel(design) and design.dead_time:
        text += "; and the off-time must hold the two dead times of the freewheel MOSFET"
    return text


def evaluate(st: Stage) -> StageResult:
    """Periodic steady state of every corner: the synchronous model where a MOSFET takes
    the rectifier or the freewheel position, else the diode model.

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    if "mosfet" in (st.devices[("rectifier", 0)].kind, st.devices[("freewheel", 0)].kind):
        return forward_sync.evaluate(st)
    return forward_diode.evaluate(st)
