"""Power-factor-correcting boost fed from the utility through a diode bridge.

Positions: ``bridge-rectifier`` (4 diodes: the first two refs conduct in the positive
half of the line cycle, the last two in the negative half), ``switch`` (1 MOSFET),
``rectifier`` (1 boost diode; a synchronous MOSFET is refused for now), ``inductor`` (1),
``output-capacitor`` (the bulk bank) and ``input-capacitor`` (optional: the filter
capacitor after the bridge).

The line cycle is solved by :mod:`stresscheck.pfc_line` (average-current control with a
sinusoidal reference, CCM or DCM at each of M line angles, conduction drops, crest
current from the bulk capacitor's charge balance). Its waveforms go to the engine on a
grid of M angles × 3 segments (on, off, idle), each angle's three segments scaled to
last T_line/M together: the grid's period is one line cycle, so mean, rms and peak over
it are the line-cycle values (exact at the sampled angles). Anything integrated in time
over that grid would be wrong, so this model gives every voltage itself (``v_block``):
the bus peak from :func:`~stresscheck.pfc_line.bus_ripple`.

Choices where practice varies (CONTRACT.md, "Extensions in this version"):
* with an input capacitor, it carries the switching ripple of the inductor current
  (i_L minus its local average) and the bridge the local average only; without one, the
  bridge carries i_L itself (conservative for its rms and peak);
* a bridge diode blocks the line crest √2·V_rms;
* the bulk capacitor's current is split into its line-frequency part (rms of the local
  averages over the cycle) and its switching-frequency part (the rest), reported beside
  the whole rms as ``i_ripple_rms_lf`` and ``i_ripple_rms_hf``;
* hold-up: the capacitance 2·P·t_hold/(V_start² − V_hold²) with P = V_o·I_o and V_start
  the lowest bus voltage of the line cycle (the line may fail at the ripple's trough),
  reported as a share of the bank's capacitance at its lowest tolerance (``hold_up``);
  the policy's limit covers end of life (−20 %: common practice);
* ``input_surge`` is refused for now (a surge at the bridge is a later step).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..pfc_line import (DEFAULT_ANGLES, bus_ripple, hold_up_capacitance, line_angles,
                        solve_line_cycle)
from ..waveforms import Grid
from . import buck
from .base import Layout, RoleSpec, Stage, StageResult

INPUTS = ("ac",)  # the utility, through the bridge (registry.check_envelope)
SQRT2 = np.sqrt(2.0)
BULK = ("output-capacitor", 0)
FILTER = ("input-capacitor", 0)


def check_envelope(design) -> None:
    """Refuse a bus that does not stay above the line crest: the boost only steps up,
    so V_o,min > √2·V_rms,max (Erickson & Maksimović, 2nd ed., §2.3 — from memory).

    Parameters: ``Topology.check_envelope`` (:mod:`.base`).
    """
    crest = SQRT2 * design.input_voltage.max
    if design.output_voltage.min <= crest:
        raise InputError(design.path, "operating.output_voltage", f"a PFC boost only "
                         f"steps up: the bus ({design.output_voltage.min:g} V at least) "
                         f"must stay above the crest of the highest line voltage "
                         f"({crest:.4g} V = √2 × {design.input_voltage.max:g} V rms, "
                         "operating.input_voltage)")


def layout(design) -> Layout:
    """Roles of a PFC boost; refuses ``input_surge`` (not modelled yet).

    Parameters and returns: ``Topology.layout`` (:mod:`.base`).
    """
    if design.input_surge is not None:
        raise InputError(design.path, "operating.input_surge", "a surge at the bridge of "
                         "a pfc-boost is not modelled yet; check it separately and leave "
                         "the key out")
    if design.rectifier is not None:
        raise InputError(design.path, "converter.rectifier", "a pfc-boost has no "
                         "transformer rectifier; leave the key out")
    return Layout("pfc-boost", None, {
        "bridge-rectifier": RoleSpec(4, kinds=("diode",)),
        "switch": RoleSpec(1, kinds=("mosfet",)),
        "rectifier": RoleSpec(1, kinds=("diode",)),
        "inductor": RoleSpec(1),
        "input-capacitor": RoleSpec(None, required=False),
        "output-capacitor": RoleSpec(None),
    })


def duty_limit(design, fs):
    """Largest duty ratio of the switch at the line crest [1] (the duty reported per
    corner): the controller's ``max_duty`` if given, else the diode boost's minimum
    off-time (``buck.DIODE_MAX_DUTY``). Near the zero crossings the duty tends to one
    in any PFC boost; that is not refused.

    Parameters and returns: ``Topology.duty_limit`` (:mod:`.base`).
    """
    return buck.duty_limit(design, fs, "rectifier")


def duty_limit_reason(design) -> str:
    return "at the line crest, " + buck.duty_limit_reason(design, "rectifier")


def _mean(devices, name):
    return sum(getattr(d, name) for d in devices) / len(devices)


def regime_summary(dcm: np.ndarray, conducting: np.ndarray) -> np.ndarray:
    """Regime per corner in words from the regime at each angle, (N,) str: "CCM",
    "DCM" or "mixed, DCM over x % of the cycle" (share of the conducting angles)."""
    n_on = np.maximum(conducting.sum(axis=1), 1)
    share = 100.0 * (dcm & conducting).sum(axis=1) / n_on
    out = np.empty(dcm.shape[0], dtype=object)
    for k, x in enumerate(share):  # strings only: the arrays above are vectorised
        out[k] = "CCM" if x == 0 else "DCM" if x >= 100 else \
            f"mixed, DCM over {max(round(x), 1):.0f} % of the cycle"
    return out


def evaluate(st: Stage, m: int = DEFAULT_ANGLES) -> StageResult:
    """PFC boost over one line cycle, every corner.

    Parameters and returns: ``Topology.evaluate`` (:mod:`.base`); ``m`` line angles.
    """
    ind = st.inductors[0]
    sw, rect = st.devices[("switch", 0)], st.devices[("rectifier", 0)]
    bridge = [st.devices[("bridge-rectifier", k)] for k in range(4)]
    cyc = solve_line_cycle(st.v_in, st.line_frequency, st.fs, st.vo, st.io, ind.l,
                           r_on=sw.r_on, dcr=ind.dcr, vf_boost=rect.v_f0,
                           rd_boost=rect.r_d, vf_bridge=_mean(bridge, "v_f0"),
                           rd_bridge=_mean(bridge, "r_d"), m=m)
    n = st.v_in.shape[0]
    a, b, frac = cyc.segments()
    grid = Grid((frac * (cyc.t_line / m)[:, None, None]).reshape(n, 3 * m))

    def wave(x, y=None):
        x = x.reshape(n, 3 * m)
        return grid.wave(x, x if y is None else y.reshape(n, 3 * m))

    seg = np.arange(3 * m) % 3
    i_l = wave(a, b)
    i_sw, i_d = i_l.only(seg == 0), i_l.only(seg == 1)
    local = np.repeat(cyc.local_mean("all"), 3, axis=1)  # (N, 3M) local average of i_L
    filtered = FILTER in st.capacitors
    i_line = wave(local) if filtered else i_l
    positive = np.repeat(np.sin(cyc.theta) > 0, 3)
    bulk = st.capacitors[BULK]
    i_bulk = i_d - st.io
    up, down, _ = bus_ripple(cyc, bulk.c, bulk.esr)
    v_bus_peak = st.vo + up
    v_crest = SQRT2 * st.v_in
    currents = {("inductor", 0): i_l, ("switch", 0): i_sw, ("rectifier", 0): i_d,
                BULK: i_bulk}
    v_f_peak = rect.v_f0 + rect.r_d * i_d.peak()
    v_block = {("switch", 0): v_bus_peak + v_f_peak, ("rectifier", 0): v_bus_peak,
               BULK: v_bus_peak, ("inductor", 0): v_bus_peak}
    for k in range(4):
        half = positive if k < 2 else ~positive
        currents[("bridge-rectifier", k)] = i_line.only(half)
        v_block[("bridge-rectifier", k)] = v_crest
    # the bulk capacitor's line-frequency part: rms of its local averages (equal slices)
    lf = np.sqrt(np.mean((cyc.local_mean("off") - st.io[:, None]) ** 2, axis=1))
    hf = np.sqrt(np.maximum(i_bulk.rms() ** 2 - lf ** 2, 0.0))
    shared = {BULK: {"i_ripple_rms_lf": lf, "i_ripple_rms_hf": hf},
              ("switch", 0): {"i_avg": i_sw.mean()}}
    if filtered:
        currents[FILTER] = i_l - wave(local)
        v_block[FILTER] = v_crest
        shared[FILTER] = {"i_ripple_rms_lf": np.zeros(n),
                          "i_ripple_rms_hf": currents[FILTER].rms()}
    # the capacitors' ESR loss is drawn from the line too (the line-cycle solution takes
    # the bus as ideal): ESR·I_rms² of each bank (common practice)
    p_esr = sum(st.capacitors[k].esr * currents[k].rms() ** 2 for k in (BULK, FILTER)
                if k in currents)
    crest = m // 4  # line_angles puts the positive crest at this index
    conducting = cyc.i_avg > 0
    result = StageResult(
        duty=cyc.t_on[:, crest] / cyc.ts, grid=grid, currents=currents, v_block=v_block,
        input_current=(cyc.p_line + p_esr) / st.v_in, winding_loss=np.zeros(n), b_peak=None,
        i_m_peak=np.zeros(n), i_l_start=cyc.i_start[:, crest], i_m_start=np.zeros(n),
        regime=regime_summary(cyc.dcm, conducting), shared_rows=shared,
        notes=[f"pfc-boost: average-current control with a sinusoidal reference (unity "
               f"power factor), the line cycle sampled at {m} angles; duty = at the line "
               "crest; bus voltage peaks from the line-cycle ripple (line- and switching-"
               "frequency parts and ESR); bridge diodes block the line crest; no inrush, "
               "no line transients"])
    result.line_cycle = cyc  # per-angle events for the switching and core losses
    finite = np.isfinite(cyc.i_peak).all(axis=1) & np.isfinite(up)
    result.invalid.append((~finite, "the line cycle cannot be solved (the conduction "
                           "drops leave no regulation margin)"))
    if st.hold_up is not None:
        t_hold, v_hold = st.hold_up
        v_start = st.vo + down
        result.invalid.append((v_start <= v_hold, f"the bus ripple's trough falls below "
                               f"hold_up_voltage ({v_hold:g} V) in steady state"))
        with np.errstate(divide="ignore", invalid="ignore"):
            result.capacitance_needed[BULK] = np.where(
                v_start > v_hold, hold_up_capacitance(st.vo * st.io, t_hold, v_start,
                                                      v_hold), np.nan)
    return result


__all__ = ["INPUTS", "check_envelope", "layout", "duty_limit", "duty_limit_reason",
           "evaluate", "line_angles", "regime_summary"]
