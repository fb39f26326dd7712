"""Boost converter: low-side switch, boost diode or synchronous rectifier MOSFET, in
continuous and discontinuous conduction.

Positions: ``switch`` (1, low side, MOSFET), ``rectifier`` (1: the boost diode, or a
MOSFET = synchronous rectifier, forced continuous), ``inductor`` (1), ``input-capacitor``
and ``output-capacitor`` banks. The periodic steady state is solved by the shared
two-switch cell (``switching_cell``), with the switch node v_sw and the inductor current
i_L (input -> switch node).

Lossless forms (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., §2.3
for CCM, §5.3 and Table 5.2 for DCM — from memory), to which the model reduces in the
lossless limit (the tests check them):
* CCM conversion ratio V_o = V_in/(1 − D); mean inductor current I_o/(1 − D)
* ripple ΔI_pp = V_in·D·Ts/L                                                          [A]
* switch and rectifier both block V_o; the rectifier carries I_o on average
* output-capacitor ripple ΔV_pp = I_o·D·Ts/C (the capacitor alone feeds the load in the
  on-interval, §2.3)                                                                  [V]
* DCM (diode) M = V_o/V_in = (1 + sqrt(1 + 4D²/K))/2, K = 2L/(R·Ts), R = V_o/I_o; the
  CCM/DCM boundary is K = D·(1 − D)² (§5.1).
With drops (same book, ch. 3, the boost example with conduction losses): v_sw = R_on·i
in the on-interval, V_out + v_f0 + r_d·i while the diode (or the rectifier's body
diode, in the dead times) conducts, V_out + R_on,SR·i for the synchronous channel,
−(v_f0 + r_d·|i|) when a negative current (light load, forced continuous) flows through
the low side's body diode after the rectifier turns off, and the DCR drop of the
inductor; all at the mean current of each interval.

Dead time (synchronous): after the low side turns off, the rectifier's body diode
carries the inductor current, so the low side blocks V_out plus that diode drop; after
the rectifier turns off, a positive current stays in its body diode, a negative one
flows through the low side's body diode and the rectifier blocks V_out plus that drop.

The rectifier's channel current is counted drain (output) -> source (switch node), so
it is −i_L.
"""

from __future__ import annotations

from ..errors import InputError
from .base import Layout, RoleSpec, Stage, StageResult
from . import switching_cell as cell
from . import buck
from .buck import check_options

# The diode boost's duty limit is the buck's DIODE_MAX_DUTY (the controller's minimum
# off-time), which also keeps it clear of the peak of its lossy conversion ratio.


def check_envelope(design) -> None:
    """Refuse an output that does not stay above the input: a boost only steps up, its
    duty ratio D = 1 − V_in/V_o > 0 at every corner (Erickson & Maksimović, 2nd ed.,
    §2.3 — from memory), so the lowest output must exceed the highest input [V].

    Parameters: ``Topology.check_envelope`` (:mod:`.base`).
    """
    v_in, vo = design.input_voltage, design.output_voltage
    if vo.min <= v_in.max:
        raise InputError(design.path, "operating.output_voltage", f"a boost converter only "
                         f"steps up: the output ({vo.min:g} V at least) must stay above the "
                         f"highest input voltage ({v_in.max:g} V, operating.input_voltage)")


def layout(design) -> Layout:
    """Roles of a boost design; refuses the options it does not take and a surge that
    reaches the output voltage.

    Parameters and returns: ``Topology.layout`` (:mod:`.base`).
    """
    check_options(design, "boost")  # output above input: check_envelope
    path = design.path
    if design.input_surge is not None and design.input_surge >= design.output_voltage.min:
        raise InputError(path, "operating.input_surge", f"a surge of "
                         f"{design.input_surge:g} V reaches the output voltage "
                         f"({design.output_voltage.min:g} V): it passes through the "
                         "inductor and rectifier to the output, which this model does not "
                         "cover; check that case separately or lower the surge")
    return Layout("boost", None, {
        "switch": RoleSpec(1, kinds=("mosfet",)),
        "rectifier": RoleSpec(1, kinds=("diode", "mosfet")),
        "inductor": RoleSpec(1),
        "input-capacitor": RoleSpec(None),
        "output-capacitor": RoleSpec(None),
    })


def duty_limit(design, fs):
    """Largest duty ratio of the switch [1]: as the buck's, with the rectifier as the
    passive (or synchronous) device.

    Parameters and returns: ``Topology.duty_limit`` (:mod:`.base`); ``fs`` [Hz],
    the limit [1], (N,) each.
    """
    return buck.duty_limit(design, fs, "rectifier")


def duty_limit_reason(design) -> str:
    return buck.duty_limit_reason(design, "rectifier")


def evaluate(st: Stage) -> StageResult:
    """Boost, every corner, by the shared switching cell (:mod:`.switching_cell`).

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`).
    """
    c = cell.cell_from_stage(st, "boost", "rectifier")
    return cell.stage_result(c, cell.solve(c), "rectifier")
