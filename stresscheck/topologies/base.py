"""The shapes a converter model works with: its layout (roles and counts), the per-corner
parameters it receives (``Stage``), the waveforms it returns (``StageResult``), and the
``Topology`` protocol every model module meets.

This module imports nothing from the models, so every model and the registry
(:mod:`.registry`) import it without a circle.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Protocol, runtime_checkable

import numpy as np

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
    # [m^2] low end of the core area's tolerance (None: no tolerance): the peak flux is
    # checked there (devices.transformer), the core loss taken at ``core_area``
    core_area_low: float | None = None


@dataclass
class Inductor:
    l: np.ndarray  # [H] (N,)
    dcr: float = 0.0  # [ohm]
    # saturation roll-off (``saturation.solve``): fraction of ``l`` against the current
    # of one device [A] -> [1]; None: the inductance does not depend on the current
    roll_off: object = None
    key: tuple[str, int] | None = None  # the position's key in ``StageResult.currents``
    devices: int = 1  # identical devices sharing the position's current
    ref: str = ""  # the position's first ref, for notes
    # [H] (N,) where the roll-off's iteration starts (a previous solution); None: ``l``
    l_start: np.ndarray | None = None


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
    v_in: np.ndarray  # [V] input (source) voltage, (N,)
    vo: np.ndarray  # [V] output voltage, (N,)
    io: np.ndarray  # [A] output (load) current, (N,)
    fs: np.ndarray  # [Hz] switching frequency of each switch, (N,)
    duty_limit: np.ndarray  # [1] largest duty ratio per switch, (N,)
    dead_time: float  # [s]
    devices: dict[tuple[str, int], Device]
    transformer: Magnetics | None
    inductors: list[Inductor]
    capacitors: dict[tuple[str, int], CapacitorBank]
    # input = "ac": the line frequency [Hz], (N,); None for a DC input
    line_frequency: np.ndarray | None = None
    # (hold_up_time [s], hold_up_voltage [V]) when the design asks for a hold-up check
    hold_up: tuple[float, float] | None = None
    # a clamp's hand-over of the leakage current (spikes.handover): (l_lk [H], i_pk [A],
    # v_r [V], fs [Hz]) -> (t_s [s], v_c [V]); None: no clamp modelled
    handover: object = None

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
    # quantities a model adds for a position beyond its kind's own, as position totals
    # its devices share equally: position key -> quantity -> (N,) [SI] (e.g. the line-
    # and switching-frequency parts of a bulk capacitor's ripple current)
    shared_rows: dict[tuple[str, int], dict[str, np.ndarray]] = field(default_factory=dict)
    # capacitance a capacitor position needs [F], (N,) (hold-up), checked by the capacitor
    # against its capacitance at the lowest tolerance
    capacitance_needed: dict[tuple[str, int], np.ndarray] = field(default_factory=dict)
    clamp_loss: np.ndarray | None = None  # [W] a modelled clamp's power, in the balance
    # a model whose grid spans a line cycle gives its per-angle solution here (a
    # ``pfc_line.LineCycle``): the switching and core losses are taken from it
    line_cycle: object | None = None
    # inductance each inductor position was solved with where its sheet gives a roll-off
    # (``saturation.solve``): position key -> (N,) [H] of one device
    inductance: dict[tuple[str, int], np.ndarray] = field(default_factory=dict)


@runtime_checkable
class Topology(Protocol):
    """What a converter model offers: one model module per family meets it (a module
    with these five functions), and :data:`.registry.TOPOLOGIES` maps each topology
    name to one.

    ``check_envelope`` runs before ``layout`` and refuses an operating envelope the
    converter cannot produce (a buck whose output reaches its input, say), naming the
    key; ``layout`` returns the roles and counts and refuses the options not modelled;
    ``duty_limit`` is the topology's own largest duty ratio per switch [1] at each
    switching frequency ``fs`` [Hz] (the controller's ``max_duty`` is applied by the
    registry), ``duty_limit_reason`` says in words what sets it; ``evaluate`` solves the
    periodic steady state of every corner at once.
    """

    def check_envelope(self, design) -> None:
        """Refuse an operating envelope the converter cannot produce.

        Parameters
        ----------
        design : Design
            The loaded design: its topology, ``input_voltage`` and ``output_voltage``
            spreads [V] and ``max_duty`` [1].

        Raises
        ------
        InputError
            Naming the design file and the key that cannot hold.
        """

    def layout(self, design) -> Layout:
        """The roles of the design's converter and their counts.

        Parameters
        ----------
        design : Design
            The loaded design.

        Returns
        -------
        Layout
            Roles, counts and the part kinds modelled in each.

        Raises
        ------
        InputError
            For an option or a combination the model does not cover.
        """

    def duty_limit(self, design, fs: np.ndarray) -> np.ndarray:
        """The topology's own largest duty ratio per switch.

        Parameters
        ----------
        design : Design
            The loaded design.
        fs : numpy.ndarray
            Switching frequency of each switch per corner, (N,) [Hz].

        Returns
        -------
        numpy.ndarray
            Largest duty ratio per corner, (N,) [1].
        """

    def duty_limit_reason(self, design) -> str:
        """What sets ``duty_limit``, in words for an error message."""

    def evaluate(self, stage: Stage) -> StageResult:
        """Periodic steady state of every corner at once.

        Parameters
        ----------
        stage : Stage
            Per-corner electrical parameters [SI units].

        Returns
        -------
        StageResult
            Waveforms [A] on a shared segment grid [s], peak blocking voltages [V],
            winding loss [W], peak flux density [T], and the corners outside the
            model's validity.
        """
