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
class Device:
    """A semiconductor position (its paralleled devices as one equivalent), (N,) arrays."""

    kind: str  # "mosfet" | "diode"
    v_f0: np.ndarray  # [V] diode drop at zero current (MOSFET: its body diode)
    r_d: np.ndarray  # [ohm] diode slope resistance (MOSFET: its body diode)
    r_on: np.ndarray | None = None  # [ohm] MOSFET channel at the solved T_j


@dataclass
class Magnetics:
    """The transformer (or coupled inductor) of an isolated stage."""

    n_p: float
    n_s: float
    l_m: np.ndarray  # [H] (N,) referred to n_p turns
    r_p: float = 0.0  # [ohm] per primary winding (push-pull: per half)
    r_s: float = 0.0  # [ohm] per secondary winding (center-tap: per half)
    core_area: float | None = None  # [m^2]
    n_r: float | None = None  # reset winding turns
    r_r: float = 0.0  # [ohm] reset winding
    l_leak: float = 0.0  # [H] leakage, referred to the primary


@dataclass
class Inductor:
    l: np.ndarray  # [H] (N,)
    dcr: float = 0.0  # [ohm]


@dataclass
class CapacitorBank:
    c: np.ndarray  # [F] (N,) whole bank of the position
    esr: float = 0.0  # [ohm] whole bank of the position


@dataclass
class Stage:
    """Per-corner electrical parameters of one design [SI units].

    Positions hold the equivalent of their paralleled devices; position indexes follow
    the order of the refs in the design file (see ``Layout``).
    """

    topology: str
    rectifier: str | None
    modulation: str
    vin: np.ndarray
    vo: np.ndarray
    io: np.ndarray
    fs: np.ndarray
    duty_limit: np.ndarray
    dead_time: float
    devices: dict[tuple[str, int], Device]
    transformer: Magnetics | None
    inductors: list[Inductor]
    capacitors: dict[tuple[str, int], CapacitorBank]

    def count(self, role: str) -> int:
        return sum(1 for r, _ in self.devices if r == role)

    def group(self, role: str) -> list[Device]:
        return [self.devices[(role, k)] for k in range(self.count(role))]


@dataclass
class StageResult:
    """Waveforms and stresses of one evaluation, position totals, (N,) arrays or PWL."""

    duty: np.ndarray
    grid: Grid
    # device currents: diodes forward current; MOSFETs channel current (drain to source);
    # capacitors their (AC) current; inductors and windings their current
    currents: dict[tuple[str, int], PWL]
    v_block: dict[tuple[str, int], np.ndarray]  # peak blocking / terminal voltage [V]
    input_current: np.ndarray  # [A] DC current drawn from the source
    winding_loss: np.ndarray  # [W] transformer copper loss
    b_peak: np.ndarray | None  # [T]
    i_m_peak: np.ndarray  # [A] magnetizing current peak, referred to the primary
    i_l_start: np.ndarray  # [A] inductor current at the start of the period
    i_m_start: np.ndarray  # [A] magnetizing current at the start of the period
    # MOSFET body-diode forward current (source to drain, >= 0) where it conducts
    body: dict[tuple[str, int], PWL] = field(default_factory=dict)
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
