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

from . import avalanche, measured, ratings, schema, spikes
from .corners import CornerSet, build_corners
from .devices import DeviceModel, StageParts, Temperature, build_devices
from .errors import RegulationError
from .evaluation import Evaluation, Stress
from .thermal import network_temperatures
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
    start: dict = {}  # inductances of the last pass, where a roll-off is solved
    t, runaway, unsettled = solve_temperatures(design, corners, devices, start)
    # corners where a loop ran away or did not settle: not a solution (checks.py reports
    # their rows not computed, a runaway t_j as the fail it is)
    unsolved = {key: runaway[key] | unsettled[key] for key in runaway}
    stage = build_stage(design, corners, devices, t, start)
    result = evaluate(stage)
    _check_model(design, corners, result, stage,
                 skip=np.logical_or.reduce([np.zeros(corners.size, bool),
                                            *unsolved.values()]))
    notes.extend({"level": "assumption", "text": text} for text in result.notes)
    context = devices[0].context if devices else None
    if context is not None:
        notes.extend({"level": "assumption", "text": text}
                     for text in context.extra(result).zvs_notes)
    out = derive(devices, corners, result, t, runaway, unsettled)
    stresses, losses, p_loss, driver, p_extra = out
    if result.clamp_loss is not None:  # a clamp the converter model feeds back
        p_loss = p_loss + result.clamp_loss
    if any(r.any() for r in runaway.values()):
        notes.append({"level": "warning", "text": "thermal runaway: the electro-thermal "
                      "loop (R_DS(on) rising with T_j) does not converge at some corners"})
    if any(u.any() for u in unsettled.values()):
        notes.append({"level": "warning", "text": "the electro-thermal loop did not settle "
                      "at some corners: the losses and temperatures of the devices in it "
                      "are not computed there"})
    # losses the model's waveforms do not carry (switching, recovery, core, copper above
    # its sheet temperature) are drawn from the input on top of its input current
    p_in = corners["input_voltage"] * result.input_current + p_extra
    p_out = corners["output_voltage"] * corners["output_current"]
    spike_notes, clamps = spikes.apply(design, corners, stage, result, stresses, devices,
                                       p_in)
    notes.extend({"level": "assumption", "text": text} for text in spike_notes)
    ratings.apply(stresses, corners, notes)
    taken = getattr(design, "measured", ())
    measured.apply([m for m in taken if m.quantity not in avalanche.QUANTITIES], stresses)
    # after the measurements: a measured peak drain voltage decides the avalanche
    avalanche.apply(design, corners, stage, result, stresses, devices)
    measured.apply([m for m in taken if m.quantity in avalanche.QUANTITIES], stresses)
    ev = Evaluation(design, corners, result, stage, stresses, {k: t[k] for k in runaway},
                    unsolved, p_in, p_out, p_loss, notes, losses, clamps)
    ev.driver_losses, ev.p_extra = driver, p_extra
    return ev


def build_stage(design, corners: CornerSet, devices: list[DeviceModel],
                t: dict[Key, np.ndarray], start: dict | None = None) -> Stage:
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
    start : dict, optional
        Inductor position key -> inductance [H], (N,), from which a saturation roll-off
        starts (a previous pass's solution, ``StageResult.inductance``).

    Returns
    -------
    Stage
    """
    parts = StageParts()
    for device in devices:
        device.add_to(parts, t[device.key])
    for ind in parts.inductors:
        if start and ind.key in start:
            ind.l_start = start[ind.key]
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


def solve_temperatures(design, corners: CornerSet, devices: list[DeviceModel],
                       start: dict | None = None):
    """The electro-thermal loop: fixed point of temperature -> parameters -> losses.

    Devices with ``thermal_feedback`` (losses that depend on their temperature) or on a
    shared heatsink (coupled through the sink temperature) and with a thermal path are
    iterated; the others keep their start temperature here and get theirs from their
    final losses in ``derive``.

    Parameters
    ----------
    design, corners, devices
        As for ``build_stage``.
    start : dict, optional
        Filled with the inductances each pass solved a saturation roll-off at; each
        pass starts from the previous one's (few re-evaluations once the loop settles).

    Returns
    -------
    t : dict
        Position key -> temperature [degC], (N,), of every device.
    runaway : dict
        Position key -> (N,) bool, for the iterated devices: corners where the loop runs
        away (beyond 1000 degC).
    unsettled : dict
        Position key -> (N,) bool: corners where the loop neither settled within 200
        passes nor ran away (their losses and temperatures are not computed).
    """
    t_a = corners["ambient_temperature"]
    looped = [d for d in devices if d.thermal_feedback or d.heatsink is not None]
    heated = [d for d in looped if d.r_th is not None]
    t = {d.key: d.start_temperature(t_a) for d in devices}
    runaway = {d.key: np.zeros(corners.size, bool) for d in looped}
    moving = {d.key: np.zeros(corners.size, bool) for d in looped}
    for _ in range(THERMAL_MAX_ITER if heated else 0):
        result = evaluate(build_stage(design, corners, devices, t, start))
        if start is not None:
            start.update(result.inductance)
        t_new = _temperature_step(heated, result, t, t_a, design.heatsinks)
        moved = 0.0
        for key, t_key in t_new.items():
            runaway[key] |= ~np.isfinite(t_key) | (t_key > RUNAWAY_T)
            t_key = np.where(runaway[key], RUNAWAY_T, t_key)
            step = np.abs(t_key - t[key])
            moving[key] = step >= THERMAL_TOL
            moved = max(moved, float(np.max(step)))
            t[key] = t_key
        if moved < THERMAL_TOL:
            break
    unsettled = {key: moving[key] & ~runaway[key] for key in moving}
    return t, runaway, unsettled


def _temperature_step(devices: list[DeviceModel], result: StageResult,
                      t: dict[Key, np.ndarray], t_a: np.ndarray,
                      sinks: dict) -> dict[Key, np.ndarray]:
    """One pass of the loop: each device's temperature [degC] from its losses at ``t``."""
    p = {d.key: d.total(d.losses(result, t[d.key])) for d in devices}
    return {key: temperature.values
            for key, temperature in thermal_network(devices, p, t_a, sinks).items()}


def thermal_network(devices: list[DeviceModel], p: dict[Key, np.ndarray],
                    t_a: np.ndarray, sinks: dict | None = None) -> dict[Key, Temperature]:
    """Temperatures of ``devices`` from their dissipations: the one place where devices
    meet thermally. A device on no heatsink reaches ambient through its own path
    (T = T_a + P·R_th, ``DeviceModel.temperature``); devices on a shared heatsink sit
    at T_s + P·(R_jc + R_cs) with the sink at T_s = T_a + R_sa·ΣP over every device on it
    (``thermal.network_temperatures``).

    Parameters
    ----------
    devices : list of DeviceModel
        The devices whose temperatures are wanted (every device on a sink included).
    p : dict
        Position key -> dissipation of one device [W], (N,), of at least ``devices``.
    t_a : ndarray
        Ambient temperature [degC], (N,).
    sinks : dict, optional
        Heatsink id -> sink to ambient thermal resistance [K/W].

    Returns
    -------
    dict
        Position key -> Temperature [degC], (N,).
    """
    mounted = [d for d in devices if d.heatsink is not None and d.r_th is not None]
    out = {d.key: d.temperature(p[d.key], t_a) for d in devices if d not in mounted}
    if mounted:
        paths = {d.key: (d.r_th, d.heatsink, d.devices) for d in mounted}
        temps, _ = network_temperatures(t_a, {d.key: p[d.key] for d in mounted}, paths,
                                        sinks or {})
        out.update({key: Temperature(values) for key, values in temps.items()})
    return out


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
           t: dict[Key, np.ndarray], runaway: dict[Key, np.ndarray],
           unsettled: dict[Key, np.ndarray] | None = None):
    """Every quantity of every ref [SI] from the solved model, with the losses.

    Parameters
    ----------
    devices : list of DeviceModel
        The design's device models.
    corners : CornerSet
        The corners, (N,) columns.
    result : StageResult
        The model's waveforms at the solved temperatures.
    t, runaway, unsettled : dict
        As returned by ``solve_temperatures``.

    Returns
    -------
    stresses : list of Stress
    losses : dict
        Ref -> loss term -> dissipation of one device [W], (N,).
    p_loss : ndarray
        Sum of every computed loss of the design [W], (N,).
    driver : dict
        Ref -> term -> power of one device dissipated in its driver [W], (N,).
    p_extra : ndarray
        The part of ``p_loss`` the converter model's waveforms do not carry [W], (N,).
    """
    unsettled = unsettled or {}
    t_a = corners["ambient_temperature"]
    every = np.ones(corners.size, bool)
    steady = corners.steady_mask()
    stresses: list[Stress] = []
    losses_by_ref: dict[str, dict[str, np.ndarray]] = {}
    p_loss, p_extra = np.zeros(corners.size), np.zeros(corners.size)
    driver_by_ref: dict[str, dict[str, np.ndarray]] = {}
    t = dict(t)
    for d in devices:
        if d.self_heating and not d.thermal_feedback and d.heatsink is None \
                and d.r_th is not None:
            t[d.key] = _self_heating(d, result, t_a)
    losses = {d.key: d.losses(result, t[d.key]) for d in devices}
    p = {d.key: d.total(losses[d.key]) for d in devices}
    temperatures = thermal_network([d for d in devices if not d.thermal_feedback
                                    and d.heatsink is None], p, t_a)
    for device in devices:
        key = device.key
        if losses[key]:
            p_loss += device.position_loss(p[key])
            p_extra += device.position_loss(device.outside_model(result, losses[key]))
        if key in temperatures:
            temperature = temperatures[key]
        elif device.r_th is None:
            temperature = Temperature(np.full(corners.size, np.nan), device.no_path_reason)
        else:  # the loop's own solution
            temperature = Temperature(np.where(runaway[key], np.inf, t[key]))
        rows = device.stresses(result, losses[key], temperature) + device.model_rows(result)
        driver = device.driver_losses(result)
        loose = unsettled.get(key)
        for ref in device.refs:
            losses_by_ref[ref] = losses[key]
            if driver:
                driver_by_ref[ref] = driver
            for row in rows:
                family = schema.QUANTITIES[row.quantity].family
                values, reason = np.asarray(row.values, dtype=float), row.reason
                if loose is not None and loose.any() and family == "thermal":
                    values = np.where(loose, np.nan, values)
                    reason = reason or "the electro-thermal loop did not settle"
                stresses.append(Stress(ref, device.component, row.quantity, values,
                                       steady if family != "voltage" else every, reason,
                                       note=row.note, ratings=row.ratings))
    return stresses, losses_by_ref, p_loss, driver_by_ref, p_extra


def _self_heating(device: DeviceModel, result: StageResult, t_a: np.ndarray) -> np.ndarray:
    """Temperature [degC], (N,), of a device whose loss rises with its own temperature
    but does not change the converter model: the fixed point of T = T_a + R_th·P(T),
    +inf where it runs away (beyond 1000 degC) or does not settle."""
    t = device.start_temperature(t_a)
    moved = np.full(t.shape, np.inf)
    for _ in range(THERMAL_MAX_ITER):
        t_new = device.temperature(device.total(device.losses(result, t)), t_a).values
        t_new = np.where(np.isfinite(t_new) & (t_new <= RUNAWAY_T), t_new, np.inf)
        with np.errstate(invalid="ignore"):
            moved = np.where(np.isinf(t_new), 0.0, np.abs(t_new - t))
        t = t_new
        if np.all(moved < THERMAL_TOL):
            break
    return np.where(moved < THERMAL_TOL, t, np.inf)
