"""Converter models, one module per family, and the layout (roles and counts) of each.

A model turns the per-corner electrical parameters of a design (``Stage``) into periodic
waveforms on a shared segment grid (``StageResult``); the engine derives every stress
from those. Adding a topology = a layout here plus a model module.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import schema
from ..errors import InputError
from ..waveforms import PWL, Grid


@dataclass(frozen=True)
class RoleSpec:
    count: int | None  # exact number of refs; None = a bank of one or more refs
    required: bool = True


@dataclass
class Layout:
    topology: str
    rectifier: str | None
    roles: dict[str, RoleSpec]

    def validate(self, design) -> None:
        path = design.path
        for comp in design.components:
            if comp.role not in self.roles:
                raise InputError(path, f"{comp.key}.role", f"role '{comp.role}' is not part "
                                 f"of a {self.describe()}; its roles are: "
                                 + ", ".join(self.roles))
        for role, spec in self.roles.items():
            comps = design.by_role(role)
            refs = [r for c in comps for r in c.refs]
            if not comps:
                if spec.required:
                    raise InputError(path, "components", f"a {self.describe()} needs a "
                                     f"component with role '{role}'")
                continue
            if spec.count is None and len(comps) > 1:
                raise InputError(path, f"{comps[1].key}.role", f"role '{role}' is one bank "
                                 "of identical parts: list all its refs in one entry")
            if spec.count is not None and len(refs) != spec.count:
                raise InputError(path, f"{comps[0].key}.refs", f"a {self.describe()} has "
                                 f"{spec.count} '{role}' position(s); {len(refs)} given")
            for comp in comps:
                if role in ("rectifier", "freewheel") and comp.part.kind == "mosfet":
                    raise InputError(path, f"{comp.key}.part", "synchronous rectifiers "
                                     "(a MOSFET in a rectifier position) are not modelled "
                                     "yet for this topology; use a diode part")

    def describe(self) -> str:
        if self.rectifier:
            return f"{self.topology} converter with {self.rectifier} rectifier"
        return f"{self.topology} converter"


def layout_for(design) -> Layout:
    """The roles a design's topology needs; InputError for combinations not modelled."""
    path, top, rect = design.path, design.topology, design.rectifier
    if top in schema.BRIDGE_TOPOLOGIES:
        if rect is None:
            raise InputError(path, "converter.rectifier", "a bridge-family converter needs "
                             "a rectifier: " + ", ".join(schema.RECTIFIERS))
        if rect == "current-doubler":
            raise InputError(path, "converter.rectifier", "the current-doubler rectifier "
                             "is not modelled yet; use center-tap or full-bridge")
        if design.modulation != "pwm":
            if top != "full-bridge":
                raise InputError(path, "converter.modulation", "phase-shift modulation "
                                 "applies to the full-bridge only")
            raise InputError(path, "converter.modulation", "phase-shift modulation is not "
                             "modelled yet; use pwm")
        roles = {
            "switch": RoleSpec(4 if top == "full-bridge" else 2),
            "rectifier": RoleSpec(2 if rect == "center-tap" else 4),
            "transformer": RoleSpec(1),
            "inductor": RoleSpec(1),
            "output-capacitor": RoleSpec(None),
        }
        if top == "half-bridge":
            roles["split-capacitor"] = RoleSpec(2)
        else:
            roles["input-capacitor"] = RoleSpec(None)
        return Layout(top, rect, roles)
    raise InputError(path, "converter.topology", f"topology '{top}' is in the contract but "
                     "not modelled yet in this version; modelled: "
                     + ", ".join(schema.BRIDGE_TOPOLOGIES))


@dataclass
class Stage:
    """Per-corner electrical parameters of one design, each (N,) [SI units].

    Positions hold the equivalent of their paralleled devices. Lists follow the order of
    the refs in the design file.
    """

    topology: str
    rectifier: str | None
    vin: np.ndarray
    vo: np.ndarray
    io: np.ndarray
    fs: np.ndarray
    duty_limit: np.ndarray
    switch_r: list[np.ndarray]
    rect_vf0: list[np.ndarray]
    rect_rd: list[np.ndarray]
    n_p: float = 1.0
    n_s: float = 1.0
    l_m: np.ndarray | None = None
    r_p: float = 0.0
    r_s: float = 0.0
    core_area: float | None = None
    l_out: np.ndarray | None = None
    dcr: float = 0.0
    c_out: np.ndarray | None = None
    esr_out: float = 0.0
    c_in: np.ndarray | None = None
    esr_in: float = 0.0
    c_split: list[np.ndarray] = field(default_factory=list)
    esr_split: list[float] = field(default_factory=list)


@dataclass
class StageResult:
    """Waveforms and stresses of one evaluation, position totals, each (N,) or PWL."""

    duty: np.ndarray
    grid: Grid
    currents: dict[tuple[str, int], PWL]  # device currents (capacitors: their AC current)
    v_block: dict[tuple[str, int], np.ndarray]  # peak blocking / terminal voltage [V]
    input_current: np.ndarray  # [A] DC current drawn from the source
    winding_loss: np.ndarray  # [W] transformer copper loss
    b_peak: np.ndarray | None  # [T]
    i_m_peak: np.ndarray  # [A] magnetizing current peak, referred to the primary
    i_l_start: np.ndarray  # [A] inductor current at the start of the period
    i_m_start: np.ndarray  # [A] magnetizing current at the start of the period
    # corners where the model's assumptions fail: (mask, reason)
    invalid: list[tuple[np.ndarray, str]] = field(default_factory=list)
    regime: np.ndarray | None = None  # e.g. "CCM" per corner


def evaluate(stage: Stage) -> StageResult:
    from . import bridge
    if stage.topology in schema.BRIDGE_TOPOLOGIES:
        return bridge.evaluate(stage)
    raise NotImplementedError(stage.topology)


def duty_limit_reason(design) -> str:
    if design.topology in schema.BRIDGE_TOPOLOGIES:
        text = "each switch conducts at most half a period"
        if design.dead_time:
            text += " less the dead time"
        if design.max_duty is not None:
            text += f", and the controller's max_duty of {design.max_duty:.3g}"
        return text
    return "the topology's duty limit"


def topology_duty_limit(design, fs: np.ndarray) -> np.ndarray:
    limit = 0.5 - design.dead_time * fs
    if design.max_duty is not None:
        limit = np.minimum(limit, design.max_duty)
    return limit
