"""The losses beyond conduction, for every position of a design, from one evaluation.

Glue between the relations (``losses.py``, ``magnetics_loss.py``), the event finder
(``switching.py``) and the flux pieces (``flux.py``) on one side, and the engine's
positions, stage and waveforms on the other. Everything is per device, (N,) arrays.

Term names (results.json ``losses``; every term is dissipated in the device itself):
``conduction`` (R_DS(on), body diode, diode forward drop), ``overlap``, ``c_oss``,
``commutation`` (recovery charge and capacitance of the diode a switch commutates),
``recovery`` (a diode's own reverse-recovery loss), ``esr``, ``copper``, ``core``.
The gate-drive power (``gate_drive``) is dissipated in the driver and reported apart.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import flux, line_cycle_losses, magnetics_loss, switching

SWITCH_TERMS = ("overlap", "c_oss", "commutation")
DIODE_TERMS = ("recovery",)
DEFAULT_RESISTANCE_T = 25.0  # [degC] sheet winding resistances when not stated
# Models whose waveform grid spans a line cycle (each segment standing for many
# switching periods), not one switching period: the transitions cannot be read off it;
# their switching and core losses come from the per-angle solution the model gives
# (``StageResult.line_cycle``, ``line_cycle_losses.py``), averaged over the line cycle.
LINE_CYCLE_TOPOLOGIES = ("pfc-boost",)
LINE_CYCLE_NOTE = ("switching and core losses: the line-cycle model gave no per-angle "
                   "solution")


@dataclass
class Extra:
    """Switching-related losses of every semiconductor position (per device [W], (N,)
    arrays) and the phase-shifted bridge's zero-voltage notes."""

    switching: dict = field(default_factory=dict)  # key -> switching.SwitchingLosses
    zvs_notes: list = field(default_factory=list)

    def semi_terms(self, key) -> dict:
        """Named switching-related terms in a semiconductor [W] (empty if none)."""
        sw = self.switching.get(key)
        return dict(sw.terms) if sw is not None else {}


def semis(positions) -> list:
    """``switching.Semi`` of every MOSFET and diode position."""
    return [switching.Semi(p.key, p.refs[0], p.role, p.component.part.kind,
                           p.component.part.technology, p.component.part.electrical,
                           p.devices, p.component.part.ratings)
            for p in positions if p.component.part.kind in ("mosfet", "diode")]


class LossContext:
    """What the device kinds share for the losses that couple positions: the switching
    events of one evaluation (a switch dissipates the recovery of the diode it
    commutates) and the design's converter options. One per design evaluation; the
    events are computed once per converter-model result and cached.
    """

    def __init__(self, design, positions, corners):
        self.design = design
        self.positions = positions
        self.corners = corners
        self.magnetics = None  # a callable giving the transformer's Magnetics, if any
        self._semis = semis(positions)
        self._cache: tuple | None = None
        self.line_cycle = design.topology in LINE_CYCLE_TOPOLOGIES

    def heating(self) -> np.ndarray:
        """(N,) bool: corners whose losses heat the parts (steady and overload; not the
        transient surge corners)."""
        return self.corners.steady_mask()

    def extra(self, result) -> Extra:
        """Switching-related losses of every semiconductor for ``result`` (cached)."""
        if self._cache is not None and self._cache[0] is result:
            return self._cache[1]
        out = Extra()
        d = self.design
        drive = switching.GateDrive(d.gate_voltage, getattr(d, "overlap_method", "times"),
                                    getattr(d, "gate_resistance", None))
        phase_shift = None
        if self.line_cycle and getattr(result, "line_cycle", None) is None:
            out.switching = {p.key: switching.SwitchingLosses(left_out=[LINE_CYCLE_NOTE])
                             for p in self._semis}
            self._cache = (result, out)
            return out
        if self.line_cycle:
            out.switching = line_cycle_losses.switching_losses(result, self._semis, drive)
        else:
            if d.modulation == "phase-shift" and self.magnetics is not None:
                xf = self.magnetics()
                phase_shift = {"l_lk": xf.l_leak, "l_m": xf.l_m}
            out.switching = switching.compute(result, self._semis, d.gate_voltage,
                                              phase_shift, drive)
        # a surge (transient corner) is too short to heat anything: its switching losses
        # are left out there (its thermal rows are not checked), so the loop keeps the
        # junctions at their steady temperatures for the voltage stresses of the surge
        hot = self.heating()
        for sw in out.switching.values():
            sw.terms = {name: np.where(hot, v, 0.0) for name, v in sw.terms.items()}
        if phase_shift is not None:
            out.zvs_notes = _zvs_notes(self.positions, out.switching, self.corners)
        self._cache = (result, out)
        return out


def transformer_core(part, topology, magnetics, corners, result):
    """Core loss of the transformer [W], (N,), or (None, why)."""
    stage_like = _StageView(topology, magnetics, corners["input_voltage"],
                            corners["output_voltage"])
    pieces = flux.transformer_pieces(stage_like, result)
    if pieces is None:
        return None, "no core_area on the part sheet"
    loss = magnetics_loss.core_loss(part.electrical, *pieces, result.grid.period)
    if loss is None:
        return None, "no core-loss data (steinmetz_*, core_volume) on the part sheet"
    return loss, ""


def inductor_core(part, current, inductance, result):
    """Core loss of one inductor position [W], (N,), or (None, why); for a line-cycle
    model (``result.line_cycle`` set) the line-cycle average of
    ``line_cycle_losses.inductor_core``, with ``inductance`` [H] per device and the
    loss per device."""
    e = part.electrical
    if "turns" not in e:
        return None, "no turns and core_area on the part sheet"
    cyc = getattr(result, "line_cycle", None)
    if cyc is not None:
        loss = line_cycle_losses.inductor_core(e, cyc, inductance)
        if loss is None:
            return None, "no core-loss data (steinmetz_*, core_volume) on the part sheet"
        return loss, ""
    pieces = flux.inductor_pieces(current, inductance, e["turns"], e["core_area"])
    loss = magnetics_loss.core_loss(e, *pieces, result.grid.period)
    if loss is None:
        return None, "no core-loss data (steinmetz_*, core_volume) on the part sheet"
    return loss, ""


@dataclass
class _StageView:
    """The few stage fields the flux pieces read."""

    topology: str
    transformer: object
    v_in: np.ndarray
    vo: np.ndarray


def copper_at(part, t, p_ref):
    """Copper loss [W] at temperature ``t`` [degC] from its value at the sheet's
    resistance temperature (``resistance_temperature``, default 25 °C); the sheet's
    value where ``t`` is not finite (no thermal path)."""
    t_ref = part.electrical.get("resistance_temperature", DEFAULT_RESISTANCE_T)
    t = np.asarray(t, dtype=float)
    factor = magnetics_loss.copper_factor(np.where(np.isfinite(t), t, t_ref), t_ref)
    return p_ref * factor


def _zvs_notes(positions, sw, corners) -> list[str]:
    """One line per leg of the phase-shifted bridge: where zero-voltage turn-on holds."""
    steady = corners.steady_mask()
    notes = []
    legs = {"leading": (0, 1), "lagging": (2, 3)}
    for name, ks in legs.items():
        refs, ok = [], np.ones(corners.size, bool)
        for p in positions:
            if p.role == "switch" and p.key[1] in ks and sw[p.key].zvs is not None:
                refs.append(p.refs[0])
                ok &= sw[p.key].zvs
        if not refs:
            continue
        lost = [corners.ids[i] for i in np.flatnonzero(steady & ~ok)]
        if not lost:
            text = (f"{', '.join(refs)} ({name} leg): zero-voltage turn-on at every corner "
                    "(the inductive energy exceeds 2·E_oss(V_in))")
        else:
            shown = ", ".join(lost[:8]) + (" …" if len(lost) > 8 else "")
            text = (f"{', '.join(refs)} ({name} leg): zero-voltage turn-on lost at "
                    f"{len(lost)} of {int(steady.sum())} corners ({shown}); the residual "
                    "C_oss energy is counted there")
        notes.append(text)
    return notes
