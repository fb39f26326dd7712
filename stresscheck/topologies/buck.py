"""Buck converter: high-side switch, freewheel diode or synchronous low-side MOSFET, in
continuous and discontinuous conduction.

Positions: ``switch`` (1, high side, MOSFET), ``freewheel`` (1: a diode, or a MOSFET =
synchronous low side, forced continuous), ``inductor`` (1), ``input-capacitor`` and
``output-capacitor`` banks. The periodic steady state is solved by the shared two-switch
cell (``switching_cell``, segment grid ON, DEAD_A, OFF, DEAD_B, IDLE), with the switch
node v_sw and the inductor current i_L (switch node -> output):

Lossless forms (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., §2.2–2.3
for CCM, §5.2–5.3 and Table 5.2 for DCM — from memory), to which the model reduces in the
lossless limit (the tests check them):
* CCM conversion ratio V_o = D·V_in; ripple ΔI_pp = (V_in − V_o)·D·Ts/L               [A]
* switch and freewheel both block V_in; the freewheel diode carries (1 − D)·I_o on average
* output-capacitor ripple ΔV_pp = ΔI_pp·Ts/(8·C) (§2.5)                                 [V]
* DCM (diode) M = V_o/V_in = 2/(1 + sqrt(1 + 4K/D²)), K = 2L/(R·Ts), R = V_o/I_o; the
  CCM/DCM boundary is K = 1 − D (§5.1).
With drops (same book, ch. 3): the volt-second balance takes v_sw = V_in − R_on·i in the
on-interval, −(v_f0 + r_d·i) for a conducting diode (freewheel diode, or body diode of
the low side in the dead times), −R_on,LS·i for the synchronous channel, V_in + v_f0 +
r_d·|i| when a negative current returns through the high side's body diode, and the DCR
drop of the inductor; all at the mean current of each interval.

Dead time (synchronous): after the high side turns off, the low side's body diode
carries the inductor current, so the high side blocks V_in plus that diode drop; after
the low side turns off, a positive current stays in its body diode (the dead time adds
to the off-time), a negative one (light load, forced continuous) returns to the input
through the high side's body diode (the dead time adds to the on-time) — the duty
ratio moves by about t_d·fs either way (volt-second balance, §2.2, applied to the dead
times).

The low side's channel current is counted drain -> source, so it is −i_L (negative in
normal operation, positive where i_L is negative at light load).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .base import Layout, RoleSpec, Stage, StageResult
from . import switching_cell as cell

# Largest duty ratio of a diode buck when the design gives no max_duty [1]: the
# controller needs a minimum off-time each period (bootstrap refresh of the high-side
# gate drive, current sensing, the switch turning off), typically 5 % of the period or
# more at a few hundred kHz (common practice for PWM controllers).
DIODE_MAX_DUTY = 0.95


def layout(design) -> Layout:
    """Roles of a buck design; refuses the options it does not take.

    Parameters and returns: ``Topology.layout`` (:mod:`.base`).
    """
    check_options(design, "buck")  # output below input: check_envelope
    return Layout("buck", None, {
        "switch": RoleSpec(1, kinds=("mosfet",)),
        "freewheel": RoleSpec(1, kinds=("diode", "mosfet")),
        "inductor": RoleSpec(1),
        "input-capacitor": RoleSpec(None),
        "output-capacitor": RoleSpec(None),
    })


def check_envelope(design) -> None:
    """Refuse an output that reaches the input: a buck only steps down, its duty ratio
    D = V_o/V_in < 1 at every corner (Erickson & Maksimović, 2nd ed., §2.2 —
    from memory), so the highest output must stay below the lowest input [V].

    Parameters: ``Topology.check_envelope`` (:mod:`.base`).
    """
    v_in, vo = design.input_voltage, design.output_voltage
    if vo.max >= v_in.min:
        raise InputError(design.path, "operating.output_voltage", f"a buck converter only "
                         f"steps down: the output ({vo.max:g} V at most) must stay below the "
                         f"lowest input voltage ({v_in.min:g} V, operating.input_voltage)")


def check_options(design, name: str) -> None:
    """Refuse converter options a buck or boost does not take (InputError)."""
    if design.rectifier is not None:
        raise InputError(design.path, "converter.rectifier", f"a {name} converter takes "
                         "no rectifier option: the part in its "
                         + ("freewheel" if name == "buck" else "rectifier")
                         + " role (diode or MOSFET) selects diode or synchronous")
    if design.modulation != "pwm":
        raise InputError(design.path, "converter.modulation", f"a {name} converter "
                         "uses pwm modulation only")


def synchronous(design, role: str) -> bool:
    """True where the part in ``role`` (freewheel, rectifier) is a MOSFET."""
    comps = design.by_role(role)
    return bool(comps) and comps[0].part.kind == "mosfet"


def duty_limit(design, fs, passive_role: str = "freewheel"):
    """Largest duty ratio of the switch [1] (buck; the boost passes ``"rectifier"``).

    Synchronous: the period holds the on-time and two dead times (one at each
    transition), D <= 1 − 2·t_d·fs. Diode: the controller's ``max_duty`` if given, else
    DIODE_MAX_DUTY; the dead time does not apply (one controlled switch).

    Parameters and returns: ``Topology.duty_limit`` (:mod:`.base`), ``fs`` [Hz] and the
    limit [1], (N,) each; ``passive_role`` is the role of the passive (or synchronous)
    device: "freewheel" (buck) or "rectifier" (boost).
    """
    if synchronous(design, passive_role):
        return 1.0 - 2 * design.dead_time * np.asarray(fs, dtype=float)
    limit = design.max_duty if design.max_duty is not None else DIODE_MAX_DUTY
    return np.full(np.shape(fs), limit)


def duty_limit_reason(design, passive_role: str = "freewheel") -> str:
    side, name = ("high", "buck") if passive_role == "freewheel" else ("low", "boost")
    if synchronous(design, passive_role):
        return f"the {side}-side on-time and the two dead times fill the period"
    if design.max_duty is not None:
        return "the controller's minimum off-time"
    return (f"a diode {name} needs a minimum off-time each period (assumed "
            f"{100 * (1 - DIODE_MAX_DUTY):.0f} %; give max_duty to set it)")


def evaluate(st: Stage) -> StageResult:
    """Buck, every corner, by the shared switching cell (:mod:`.switching_cell`).

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    c = cell.cell_from_stage(st, "buck", "freewheel")
    return cell.stage_result(c, cell.solve(c), "freewheel")
