"""Bridge-family converters: full-bridge (PWM or phase-shift), half-bridge and push-pull,
with center-tap, full-bridge or current-doubler rectifier, diode or synchronous (MOSFET)
rectifiers. Continuous conduction of the output inductor(s); with PWM and diode
rectifiers (center-tap or bridge) also the light-load regimes of :mod:`.bridge_light`
(one rectifier stopped in the freewheel, DCM, pulse skipping at no load). Synchronous
rectifiers keep forced CCM (regime ``forced-CCM`` where the current reverses).

This module holds the layouts and the duty limits, and hands a stage to its model:
:mod:`.bridge_pwm` (PWM, all three topologies) or :mod:`.bridge_phase_shift` (the
phase-shifted full bridge). Both share the rectifier groups of :mod:`.bridge_rectifier`.
"""

from __future__ import annotations

from ..errors import InputError
from . import bridge_phase_shift, bridge_pwm
from .base import Layout, RoleSpec, Stage, StageResult
from .bridge_rectifier import GROUPS


def layout(design) -> Layout:
    """Roles of a bridge-family design; InputError for combinations not modelled.

    Parameters and returns: ``Topology.layout`` (:mod:`.base`).
    """
    path, top, rect = design.path, design.topology, design.rectifier
    if rect is None:
        raise InputError(path, "converter.rectifier", "a bridge-family converter needs a "
                         "rectifier: " + ", ".join(GROUPS))
    rect_comps = design.by_role("rectifier")
    kinds = sorted({c.part.kind for c in rect_comps})
    if len(kinds) > 1:
        raise InputError(path, f"{rect_comps[0].key}.part", "the rectifiers of a bridge "
                         "must all be diodes or all MOSFETs (synchronous rectifiers); "
                         "mixed rectifiers are not modelled")
    rect_kinds = ("diode", "mosfet")
    if design.modulation != "pwm":
        if top != "full-bridge":
            raise InputError(path, "converter.modulation", "phase-shift modulation applies "
                             "to the full-bridge only")
        if rect == "current-doubler":
            raise InputError(path, "converter.rectifier", "phase-shift modulation with a "
                             "current-doubler rectifier is not modelled yet; use a "
                             "center-tap or full-bridge rectifier, or pwm modulation")
        for comp in design.by_role("transformer"):
            l_lk = comp.part.electrical.get("leakage_inductance")
            if l_lk is None or l_lk <= 0:
                raise InputError(path, f"{comp.key}.part", f"phase-shift modulation needs "
                                 f"leakage_inductance > 0 on the part sheet of "
                                 f"'{comp.part.id}' (include any series resonant inductor, "
                                 "referred to the primary): the primary current reverses "
                                 "through it, which sets the duty loss and the "
                                 "freewheeling current")
    n_inductors = 1
    if rect == "current-doubler":
        n_inductors = 2
        inductors = design.by_role("inductor")
        if len(inductors) > 1:
            raise InputError(path, f"{inductors[1].key}.role", "the two inductors of a "
                             "current doubler must be one component entry (identical "
                             "parts, refs = [\"L1\", \"L2\"]): unequal inductors share the "
                             "load current unequally, which is not modelled")
    roles = {
        "switch": RoleSpec(4 if top == "full-bridge" else 2, kinds=("mosfet",)),
        "rectifier": RoleSpec(4 if rect == "full-bridge" else 2, kinds=rect_kinds),
        "transformer": RoleSpec(1),
        "inductor": RoleSpec(n_inductors),
        "output-capacitor": RoleSpec(None),
    }
    if top == "half-bridge":
        roles["split-capacitor"] = RoleSpec(2)
    else:
        roles["input-capacitor"] = RoleSpec(None)
    return Layout(top, rect, roles)


def check_envelope(design) -> None:
    """Refuse a controller limit ``max_duty`` above 50 %: each switch of a bridge-family
    converter conducts at most half a period, so such a limit cannot apply.

    Parameters: ``Topology.check_envelope`` (:mod:`.base`).
    """
    if design.max_duty is not None and design.max_duty > 0.5:
        top = design.topology
        raise InputError(design.path, "converter.max_duty", f"each switch of a {top} "
                         f"conducts at most 50 % of the period; a max_duty of "
                         f"{100 * design.max_duty:g} % cannot apply (it is the limit per "
                         "switch)")


def duty_limit(design, fs):
    """Each switch conducts at most half a period less the dead time [1]; phase shift:
    the leading leg switches at least one dead time before the lagging leg.

    Parameters and returns: ``Topology.duty_limit`` (:mod:`.base`); ``fs`` [Hz],
    the limit [1], (N,) each.
    """
    return 0.5 - design.dead_time * fs


def duty_limit_reason(design) -> str:
    if design.modulation == "phase-shift":
        return ("the phase overlap of the two legs is at most half a period less the dead "
                "time, and the current reversal through the leakage inductance takes its "
                "share of it (duty loss)")
    text = "each switch conducts at most half a period"
    return text + (" less the dead time" if design.dead_time else "")


def evaluate(st: Stage) -> StageResult:
    """Periodic steady state of every corner by the stage's modulation's model.

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    if st.modulation == "phase-shift":
        return bridge_phase_shift.evaluate(st)
    return bridge_pwm.evaluate(st)
