"""Converter models, one module per family, and the layout (roles and counts) of each.

A model turns the per-corner electrical parameters of a design (``Stage``) into periodic
waveforms on a shared segment grid (``StageResult``); the engine derives every stress
from those. Adding a topology = a layout here plus a model module.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass, field

import numpy as np

from .. import schema
from ..errors import InputError
from ..waveforms import PWL, Grid


@dataclass(frozen=True)
class RoleSpec:
    count: int | None  # exact number of refs; None = a bank of one or more refs
    required: bool = True
    kinds: tuple[str, ...] | None = None  # part kinds modelled here (None: schema.ROLE_KINDS)


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
                if spec.kinds is not None and comp.part.kind not in spec.kinds:
                    raise InputError(path, f"{comp.key}.part", f"a {comp.part.kind} in the "
                                     f"'{role}' position is not modelled yet for a "
                                     f"{self.describe()}; use a " + " or a ".join(spec.kinds))

    def describe(self) -> str:
        if self.rectifier:
            return f"{self.topology} converter with {self.rectifier} rectifier"
        return f"{self.topology} converter"


# topology -> model module (in this package). A topology whose module is missing is
# refused with a clear message.
MODEL_MODULES = {
    "full-bridge": "bridge", "half-bridge": "bridge", "push-pull": "bridge",
    "forward": "forward", "two-switch-forward": "forward", "flyback": "flyback",
    "buck": "buck", "boost": "boost",
}


def model_for(topology: str):
    """The model module of a topology, or None when it is not modelled yet."""
    name = MODEL_MODULES[topology]
    try:
        return importlib.import_module(f"{__name__}.{name}")
    except ModuleNotFoundError as exc:
        if exc.name == f"{__name__}.{name}":
            return None
        raise


def modelled_topologies() -> list[str]:
    return [t for t in schema.TOPOLOGIES if model_for(t) is not None]


def layout_for(design) -> Layout:
    """The roles a design's topology needs; InputError for combinations not modelled."""
    model = model_for(design.topology)
    if model is None:
        raise InputError(design.path, "converter.topology", f"topology "
                         f"'{design.topology}' is in the contract but not modelled yet in "
                         "this version; modelled: " + ", ".join(modelled_topologies()))
    return model.layout(design)


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
    # what the model leaves out or assumes, for the report (e.g. "v_peak before spikes")
    notes: list[str] = field(default_factory=list)


def evaluate(stage: Stage) -> StageResult:
    return model_for(stage.topology).evaluate(stage)


def duty_limit_reason(design) -> str:
    """Words for what limits the duty ratio of ``design`` (for error messages)."""
    text = model_for(design.topology).duty_limit_reason(design)
    if design.max_duty is not None:
        text += f"; the controller's max_duty is {design.max_duty:.3g}"
    return text


def topology_duty_limit(design, fs: np.ndarray) -> np.ndarray:
    """Largest duty ratio per switch at each corner [1]: the topology's and the
    controller's (``max_duty``), whichever is lower."""
    limit = model_for(design.topology).duty_limit(design, fs)
    if design.max_duty is not None:
        limit = np.minimum(limit, design.max_duty)
    return limit
