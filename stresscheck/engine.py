"""The stress engine: design + corners -> every stress of every ref at every corner.

An orchestrator of three steps, all vectorised over the corners (no per-corner loop):

1. device models (``devices/``): one per position, from the part sheets;
2. the electro-thermal loop: the converter model (``topologies/``) is evaluated with the
   part-sheet parameters at the devices' temperatures, their losses give new
   temperatures, until the temperatures settle (R_DS(on) rises with T_j);
3. stresses: every quantity of every ref as an (N,) array, NaN where not computed.

The engine never asks what kind a part is: each kind answers for itself.
"""

from __future__ import annotations

import numpy as np

from . import measured, ratings, schema, spikes
from .corners import CornerSet, build_corners
from .devices import DeviceModel, StageParts, Temperature, build_devices
from .errors import RegulationError
from .evaluation import Evaluation, Stress
from .topologies import (Stage, StageResult, duty_limit_reason, evaluate,
                         topology_duty_limit)

THERMAL_TOL = 1e-3  # [K] convergence of the electro-thermal loop
THERMAL_MAX_ITER = 200
RUNAWAY_T = 1000.0  # [degC] a temperature beyond this is taken as thermal runaway

Key = tuple[str, int]


def run(design, corners: CornerSet | None = None) -> Evaluation:
    """Evaluate every stress of ``design`` at every corner.

    Parameters
    ----------
    design : Design
        A loaded design.
    corners : CornerSet, optional
        The corners (or samples) to evaluate; by default those of the design.

    Returns
    -------
    Evaluation
        Stresses, temperatures, losses and the model's waveforms, (N,) arrays.

    Raises
    ------
    RegulationError
        Where the converter cannot regulate or its model does not hold.
    """
    corners = corners if corners is not None else build_corners(design)
    devices = build_devices(design, corners)
    notes = [note for device in devices for note in device.notes()]
    t, runaway = solve_temperatures(design, corners, devices)
    stage = build_stage(design, corners, devices, t)
    result = evaluate(stage)
    _check_model(design, corners, result, stage,
                 skip=np.logical_or.reduce([np.zeros(corners.size, bool),
                                            *runaway.values()]))
    notes.extend({"level": "assumption", "text": text} for text in result.notes)
    stresses, losses, p_loss = derive(devices, corners, result, t, runaway)
    if result.clamp_loss is not None:  # a clamp the converter model feeds back
        p_loss = p_loss + result.clamp_loss
    if any(r.any() for r in runaway.values()):
        notes.append({"level": "warning", "text": "thermal runaway: the electro-thermal "
                      "loop (R_DS(on) rising with T_j) does not converge at some corners"})
    p_in = corners["input_voltage"] * result.input_current
    p_out = corners["output_voltage"] * corners["output_current"]
    spike_notes, clamps = spikes.apply(design, corners, stage, result, stresses, devices,
                                       p_in)
    notes.extend({"level": "assumption", "text": text} for text in spike_notes)
    ratings.apply(stresses, corners, notes)
    measured.apply(getattr(design, "measured", ()), stresses)
    return Evaluation(design, corners, result, stage, stresses, {k: t[k] for k in runaway},
                      runaway, p_in, p_out, p_loss, notes, losses, clamps)


def build_stage(design, corners: CornerSet, devices: list[DeviceModel],
                t: dict[Key, np.ndarray]) -> Stage:
    """The converter model's per-corner parameters with the devices at temperatures ``t``.

    Parameters
    ----------
    design : Design
        A loaded design.
    corners : CornerSet
        The corners, (N,) columns.
    devices : list of DeviceModel
        The design's device models (``devices.build_devices``).
    t : dict
        Position key -> device temperature [degC], (N,).

    Returns
    -------
    Stage
    """
    parts = StageParts()
    for device in devices:
        device.add_to(parts, t[device.key])
    return Stage(topology=design.topology, rectifier=design.rectifier,
                 modulation=design.modulation, v_in=corners["input_voltage"],
                 vo=corners["output_voltage"],
                 io=corners["output_current"]
                 + design.minimum_load_current(corners["output_voltage"]),
                 fs=corners["switching_frequency"],
                 duty_limit=topology_duty_limit(design, corners["switching_frequency"]),
                 dead_time=design.dead_time, devices=parts.semiconductors,
                 transformer=parts.transformer, inductors=parts.inductors,
                 capacitors=parts.capacitors,
                 line_frequency=corners.columns.get("line_frequency"),
                 hold_up=(None if design.hold_up_time is None
                          else (design.hold_up_time, design.hold_up_voltage)),
                 handover=spikes.handover(design))


def solve_temperatures(design, corners: CornerSet, devices: list[DeviceModel]):
    """The electro-thermal loop: fixed point of temperature -> parameters -> losses.

    Only devices with ``thermal_feedback`` (losses that depend on their temperature) and
    a thermal path are iterated; the others keep their start temperature here and get
    theirs from their final losses in ``derive``.

    Parameters
    ----------
    design, corners, devices
        As for ``build_stage``.

    Returns
    -------
    t : dict
        Position key -> temperature [degC], (N,), of every device.
    runaway : dict
        Position key -> (N,) bool, for the devices with thermal feedback: corners where
        the loop runs away (beyond 1000 degC), or every corner when it does not converge
        within 200 passes.
    """
    t_a = corners["ambient_temperature"]
    looped = [d for d in devices if d.thermal_feedback]
    heated = [d for d in looped if d.r_th is not None]
    t = {d.key: d.start_temperature(t_a) for d in devices}
    runaway = {d.key: np.zeros(corners.size, bool) for d in looped}
    converged = not looped
    for _ in range(THERMAL_MAX_ITER if looped else 0):
        result = evaluate(build_stage(design, corners, devices, t))
        t_new = _temperature_step(heated, result, t, t_a)
        moved = 0.0
        for key, t_key in t_new.items():
            runaway[key] |= ~np.isfinite(t_key) | (t_key > RUNAWAY_T)
            t_key = np.where(runaway[key], RUNAWAY_T, t_key)
            moved = max(moved, float(np.max(np.abs(t_key - t[key]))))
            t[key] = t_key
        if moved < THERMAL_TOL:
            converged = True
            break
    if not converged:
        for key in runaway:
            runaway[key] |= True  # no convergence: every corner counts as runaway
    return t, runaway


def _temperature_step(devices: list[DeviceModel], result: StageResult,
                      t: dict[Key, np.ndarray], t_a: np.ndarray) -> dict[Key, np.ndarray]:
    """One pass of the loop: each device's temperature [degC] from its losses at ``t``."""
    p = {d.key: d.total(d.losses(result, t[d.key])) for d in devices}
    return {key: temperature.values
            for key, temperature in thermal_network(devices, p, t_a).items()}


def thermal_network(devices: list[DeviceModel], p: dict[Key, np.ndarray],
                    t_a: np.ndarray) -> dict[Key, Temperature]:
    """Temperatures of ``devices`` from their dissipations: the one place where devices
    meet thermally. Each device reaches ambient through its own path today
    (T = T_a + P·R_th, ``DeviceModel.temperature``); devices that share a heatsink would
    be coupled here, from the summed losses of every device on it.

    Parameters
    ----------
    devices : list of DeviceModel
        The devices whose temperatures are wanted.
    p : dict
        Position key -> dissipation of one device [W], (N,), of at least ``devices``.
    t_a : ndarray
        Ambient temperature [degC], (N,).

    Returns
    -------
    dict
        Position key -> Temperature [degC], (N,).
    """
    return {d.key: d.temperature(p[d.key], t_a) for d in devices}


def _check_model(design, corners, result: StageResult, stage: Stage, skip=None):
    """Refuse the design where the model does not hold: first a duty beyond the limit
    (at such a corner nothing else the model says is meaningful), then the model's own
    reasons (a model that cannot reach the output at all reports at the limit).
    Corners in ``skip`` (an electro-thermal runaway: R_DS(on) at the clamp, not a
    solution) are left out; their rows are reported not-computed by the checks."""
    keep = np.ones(corners.size, bool) if skip is None else ~skip
    over = (result.duty > stage.duty_limit) & keep
    if over.any():
        i = _first_corner(corners, over, result.duty - stage.duty_limit)
        key, which = CORNER_KEYS[corners.kind[i]]
        raise RegulationError(design.path, key, f"cannot regulate at {which}corner "
                              f"{corners.describe(i)}: needs a duty ratio of "
                              f"{result.duty[i]:.3f} per switch, above the limit of "
                              f"{stage.duty_limit[i]:.3f} ({duty_limit_reason(design)})")
    for mask, reason in result.invalid:
        mask = mask & keep
        if mask.any():
            i = _first_corner(corners, mask)
            key, which = CORNER_KEYS[corners.kind[i]]
            raise RegulationError(design.path, key, f"at {which}corner "
                                  f"{corners.describe(i)}: {reason}")


# The key a corner's kind comes from, named in a message about that corner.
CORNER_KEYS = {"steady": ("operating", ""),
               "overload": ("operating.current_limit", "the current-limit "),
               "transient": ("operating.input_surge", "the input-surge ")}


def _first_corner(corners, mask, score=None) -> int:
    """The corner a message names: a steady corner before an overload one before a
    transient one (a surge or current limit is blamed only where the steady envelope
    holds); within a kind the highest ``score``, or the first."""
    for kind in ("steady", "overload", "transient"):
        hit = np.flatnonzero(mask & (corners.kind == kind))
        if hit.size:
            return int(hit[np.argmax(score[hit])] if score is not None else hit[0])
    return int(np.flatnonzero(mask)[0])


def derive(devices: list[DeviceModel], corners: CornerSet, result: StageResult,
           t: dict[Key, np.ndarray], runaway: dict[Key, np.ndarray]):
    """Every quantity of every ref [SI] from the solved model, with the losses.

    Parameters
    ----------
    devices : list of DeviceModel
        The design's device models.
    corners : CornerSet
        The corners, (N,) columns.
    result : StageResult
        The model's waveforms at the solved temperatures.
    t, runaway : dict
        As returned by ``solve_temperatures``.

    Returns
    -------
    stresses : list of Stress
    losses : dict
        Ref -> loss term -> dissipation of one device [W], (N,).
    p_loss : ndarray
        Sum of every computed loss of the design [W], (N,).
    """
    t_a = corners["ambient_temperature"]
    every = np.ones(corners.size, bool)
    steady = corners.steady_mask()
    stresses: list[Stress] = []
    losses_by_ref: dict[str, dict[str, np.ndarray]] = {}
    p_loss = np.zeros(corners.size)
    losses = {d.key: d.losses(result, t[d.key]) for d in devices}
    p = {d.key: d.total(losses[d.key]) for d in devices}
    temperatures = thermal_network([d for d in devices if not d.thermal_feedback], p, t_a)
    for device in devices:
        key = device.key
        if losses[key]:
            p_loss += device.position_loss(p[key])
        if not device.thermal_feedback:
            temperature = temperatures[key]
        elif device.r_th is None:
            temperature = Temperature(np.full(corners.size, np.nan), device.no_path_reason)
        else:  # the loop's own solution
            temperature = Temperature(np.where(runaway[key], np.inf, t[key]))
        rows = device.stresses(result, losses[key], temperature) + device.model_rows(result)
        for ref in device.refs:
            losses_by_ref[ref] = losses[key]
            for row in rows:
                voltage = schema.QUANTITIES[row.quantity].family == "voltage"
                stresses.append(Stress(ref, device.component, row.quantity,
                                       np.asarray(row.values, dtype=float),
                                       every if voltage else steady, row.reason))
    return stresses, losses_by_ref, p_loss
