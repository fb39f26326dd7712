"""Device kinds: one module per kind of part, one registry.

Each kind (a ``DeviceModel`` subclass) says, for one position of a design over all
corners, what the converter model needs from its part sheet (``add_to``: R_DS(on), ESR,
DCR, turns…), what it dissipates (``losses``: named terms in W), how hot it runs
(``temperature``, ``thermal_feedback``) and which quantities it is checked on
(``stresses``). The engine orchestrates them without knowing any kind. Adding a kind =
its module here, one line in ``KINDS``, its tests (DEVELOPERS.md, "Adding a device kind").
"""

from __future__ import annotations

from ..loss_model import LossContext
from ..topologies import layout_for
from .base import DeviceModel, Losses, Position, Row, StageParts, Temperature, total_loss
from .capacitor import Capacitor
from .diode import Diode
from .inductor import Inductor
from .mosfet import Mosfet
from .transformer import Transformer

KINDS: dict[str, type[DeviceModel]] = {
    "mosfet": Mosfet,
    "diode": Diode,
    "capacitor": Capacitor,
    "inductor": Inductor,
    "transformer": Transformer,
}

__all__ = ["KINDS", "DeviceModel", "Losses", "Position", "Row", "StageParts",
           "Temperature", "build_devices", "positions", "total_loss"]


def positions(design) -> list[Position]:
    """Every position of ``design``, in layout order; a capacitor bank is one position.

    Parameters
    ----------
    design : Design
        A loaded design.

    Returns
    -------
    list of Position
    """
    out: list[Position] = []
    for role, spec in layout_for(design).roles.items():
        if spec.count is None:
            for comp in design.by_role(role):
                out.append(Position(role, 0, comp, list(comp.refs),
                                    len(comp.refs) * comp.parallel))
        else:
            for k, (ref, comp) in enumerate(design.positions(role)):
                out.append(Position(role, k, comp, [ref], comp.parallel))
    return out


def build_devices(design, corners) -> list[DeviceModel]:
    """One device model per position of ``design``, in layout order.

    Parameters
    ----------
    design : Design
        A loaded design.
    corners : CornerSet
        The corners (or samples) every array runs over.

    Returns
    -------
    list of DeviceModel
    """
    places = positions(design)
    context = LossContext(design, places, corners)
    devices = [KINDS[pos.component.part.kind](pos, corners, context) for pos in places]
    for device in devices:
        device.share(context)
    return devices
