"""Leakage spikes in the voltage stresses of isolated converters.

The converter models give ideal (spike-free) off-state voltages. Where the transformer
has leakage inductance, the positions it drives see a spike on top:

- the switches of a flyback, a forward with reset winding and a push-pull (the leakage
  current has no path at turn-off but the drain capacitance or a clamp). The switches of
  a full bridge and a half bridge are held at the input rail by the body diodes of the
  other switches of their leg, those of a two-switch forward by its clamp diodes: no
  spike from the transformer's leakage;
- the diodes (or synchronous MOSFETs) on the windings of every isolated converter:
  rectifiers, the forward's freewheel and the single-switch forward's reset diode ring
  with the leakage and their own capacitance when they turn off.

The design gives ``[converter] clamp`` (an RCD or a voltage clamp of the switches; the
relations are in :mod:`stresscheck.clamps`) or ``[converter] overshoot`` (an allowance,
a fraction of the ideal off-state voltage, per side: ``switch``, ``rectifier``). An
affected position with neither is not computed, with the reason :data:`NO_SPIKE_MODEL`,
never its spike-free value as a pass.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import clamps
from .errors import InputError
from .tomlio import check_keys, require_str, shorten

CLAMP_KINDS = ("rcd", "voltage")
OVERSHOOT_SIDES = ("switch", "rectifier")
#: Topologies whose switches see the leakage spike, and those with a clamp model.
SPIKE_SWITCH_TOPOLOGIES = ("flyback", "forward", "push-pull")
CLAMP_TOPOLOGIES = ("flyback", "push-pull")
#: Winding-side roles that ring with the leakage (the 'rectifier' allowance); the reset
#: diode only in the single-switch forward (two-switch forward: clamp diodes to the rails).
SECONDARY_ROLES = ("rectifier", "freewheel")
MAX_OVERSHOOT = 1.0  # an undamped L-C step at most doubles the voltage (common practice)
NO_SPIKE_MODEL = "leakage spike: no clamp or allowance given"


@dataclass(frozen=True)
class Clamp:
    """``[converter] clamp``: ``kind`` "rcd" (``resistance`` [ohm], ``capacitance`` [F],
    ``diode_drop`` [V]) or "voltage" (``voltage`` [V] above the input rail)."""

    kind: str
    resistance: float | None = None
    capacitance: float | None = None
    voltage: float | None = None
    diode_drop: float = clamps.DEFAULT_DIODE_DROP


def load_clamp(conv: dict, path) -> Clamp | None:
    """``[converter] clamp`` of a design file, validated; None when absent."""
    from .units import parse_quantity
    table = conv.get("clamp")
    if table is None:
        return None
    if not isinstance(table, dict):
        raise InputError(path, "converter.clamp", "expected a table such as { kind = "
                         "\"rcd\", resistance = \"47 kohm\", capacitance = \"4.7 nF\" } or "
                         "{ kind = \"voltage\", voltage = \"150 V\" }")
    kind = require_str(table, "kind", path, "converter.clamp.", choices=CLAMP_KINDS)
    keys = {"rcd": ("kind", "resistance", "capacitance", "diode_drop"),
            "voltage": ("kind", "voltage")}[kind]
    check_keys(table, keys, path, "converter.clamp.")
    dims = {"resistance": "resistance", "capacitance": "capacitance",
            "voltage": "voltage", "diode_drop": "voltage"}
    values = {}
    for key in keys[1:]:
        if key not in table:
            if key == "diode_drop":
                continue
            raise InputError(path, f"converter.clamp.{key}", f"missing key (a {kind} "
                             f"clamp needs {', '.join(keys[1:3 if kind == 'rcd' else 2])})")
        values[key] = parse_quantity(table[key], dims[key], path, f"converter.clamp.{key}")
        if values[key] <= 0 and key != "diode_drop":
            raise InputError(path, f"converter.clamp.{key}", "must be greater than zero")
        if values[key] < 0:
            raise InputError(path, f"converter.clamp.{key}", "must not be negative")
    return Clamp(kind, **values)


def load_overshoot(conv: dict, path) -> dict[str, float]:
    """``[converter] overshoot`` of a design file: side -> fraction [1]; {} when absent."""
    from .units import parse_quantity
    table = conv.get("overshoot")
    if table is None:
        return {}
    if not isinstance(table, dict):
        raise InputError(path, "converter.overshoot", "expected a table such as "
                         "{ switch = \"25 %\", rectifier = \"30 %\" }")
    check_keys(table, OVERSHOOT_SIDES, path, "converter.overshoot.")
    out = {}
    for side, value in table.items():
        key = f"converter.overshoot.{side}"
        a = parse_quantity(value, "fraction", path, key)
        if not 0 <= a <= MAX_OVERSHOOT:
            raise InputError(path, key, f"an allowance from 0 % to {100 * MAX_OVERSHOOT:g} "
                             f"% of the ideal off-state voltage expected, got {shorten(value)}"
                             " (an undamped leakage ringing at most doubles the voltage)")
        out[side] = a
    return out


def check_spike_options(design) -> None:
    """Refuse a clamp where it is not modelled, and a clamp beside a switch allowance."""
    path = design.path
    if design.clamp is not None:
        if design.topology not in CLAMP_TOPOLOGIES:
            why = ("its switches are held at the input rail by diodes (the body diodes of "
                   "the leg, or the clamp diodes), so the leakage does not spike them"
                   if design.topology not in SPIKE_SWITCH_TOPOLOGIES else
                   "a clamp model for it is not available yet; give overshoot.switch")
            raise InputError(path, "converter.clamp", f"a clamp is modelled for "
                             f"{' and '.join(CLAMP_TOPOLOGIES)} only; for a "
                             f"{design.topology}: {why}")
        if "switch" in design.overshoot:
            raise InputError(path, "converter.overshoot.switch", "give either a clamp or "
                             "an overshoot allowance for the switch, not both")


def secondary_roles(topology: str) -> tuple[str, ...]:
    return SECONDARY_ROLES + (("reset",) if topology == "forward" else ())


def clamped_switch(design, stage, result, key):
    """(v_peak [V], reason, record) of a clamped switch position at every corner."""
    cl = design.clamp
    ideal = result.v_block[key]
    vin = stage.v_in
    l_lk = stage.transformer.l_leak
    plateau = ideal - vin  # winding voltage of the off-state (flyback: reflected V_o)
    v_r = plateau if design.topology == "flyback" else np.zeros_like(plateau)
    i_pk = result.currents[key].peak()
    interval = 1.0 / stage.fs
    if cl.kind == "rcd":
        st = clamps.rcd_clamp_state(l_lk, i_pk, interval, cl.resistance, cl.capacitance,
                                    v_r, floor=plateau)
        v = np.maximum(ideal, vin + st["v_peak"] + cl.diode_drop)
        rec = {"kind": "rcd", "v_clamp": st["v_peak"], "p_clamp": st["p_resistor"],
               "v_ripple": st["v_ripple"], "i_ripple_rms": st["i_cap_rms"], "t_s": st["t_s"],
               # the capacitor's swing in the hand-over exceeds the voltage that drives
               # the leakage current down (light load): the linear fall is a poor model
               "swing_large": (st["v_ripple"] > st["v_handover"] - v_r) & (v_r > 0)}
        return v, "", rec
    st = clamps.voltage_clamp_state(l_lk, i_pk, interval, cl.voltage, v_r)
    ok = cl.voltage > plateau
    v = np.where(ok, np.maximum(ideal, vin + cl.voltage), np.nan)
    rec = {"kind": "voltage", "v_clamp": np.where(ok, cl.voltage, np.nan),
           "p_clamp": np.where(ok, st["p_clamp"], np.nan), "t_s": st["t_s"]}
    why = "" if ok.all() else (f"clamp voltage {cl.voltage:g} V is not above the winding's "
                               "off-state voltage: the clamp would conduct all the off-time")
    return v, why, rec


def apply(design, corners, stage, result, stresses, positions, p_in) -> tuple[list, list]:
    """Put the spike into the voltage stresses of the affected positions (in place).

    Parameters
    ----------
    design, corners, stage, result
        The evaluation's design, corners, per-corner parameters and model result.
    stresses : list of evaluation.Stress
        Rows to update (``values``, ``reason``, ``note``).
    positions : list
        The design's positions (device models): ``key`` (role, index) and ``refs``.
    p_in : array
        Input power per corner [W], to state the clamp's share.

    Returns
    -------
    (notes, clamp records)
        Notes for the report; one record per clamped switch ref (worst values and their
        corners) for results.json.
    """
    xf = stage.transformer
    if xf is None:
        return [], []
    l_lk = xf.l_leak
    notes, records = [], []
    by_ref = {}
    for s in stresses:
        if s.quantity in ("v_peak", "v_reverse_peak"):
            by_ref.setdefault(s.ref, []).append(s)
    steady = corners.steady_mask()
    for pos in positions:
        role = pos.key[0]
        if role == "switch":
            side, affected = "switch", design.topology in SPIKE_SWITCH_TOPOLOGIES
        elif role in secondary_roles(design.topology):
            side, affected = "rectifier", True
        else:
            continue
        ideal = result.v_block[pos.key]
        reason, note, rec, spike = "", "", None, ""
        if side == "switch" and design.clamp is not None:
            values, reason, rec = clamped_switch(design, stage, result, pos.key)
            spike = "clamp"
            note = (f"includes the leakage spike: {design.clamp.kind} clamp, V_in + V_clamp"
                    + (" + diode drop" if design.clamp.kind == "rcd" else ""))
        elif side in design.overshoot:
            a = design.overshoot[side]
            values, spike = clamps.overshoot_peak(ideal, a), "allowance"
            note = f"includes an overshoot allowance of {100 * a:g} % of the ideal voltage"
        elif affected and l_lk > 0:
            values, reason = np.full_like(ideal, np.nan), NO_SPIKE_MODEL
        else:
            continue
        for ref in pos.refs:
            for s in by_ref.get(ref, []):
                s.values = np.asarray(values, dtype=float)
                s.reason, s.note, s.spike = reason, note, spike
        if rec is not None:
            records.append(_record(pos, rec, corners, steady, p_in))
            low = rec.get("swing_large", np.zeros(corners.size, bool)) & steady
            if low.any():
                i = int(np.flatnonzero(low)[0])
                notes.append(f"{', '.join(pos.refs)}: at {int(low.sum())} corner(s) (first "
                             f"{corners.ids[i]}) the RCD clamp's capacitor swings more in "
                             "the hand-over than the voltage driving the leakage current "
                             "down (light load): the linear fall of the model is poor there, "
                             "and the rectifier and output currents are approximate "
                             "(rectifier peak 8 % low against ngspice at 5 % load); the "
                             "switch voltage is not affected")
    for r in records:
        if r["v_clamp"] is None or r["p_clamp"] is None:
            continue  # not computed: the rows say why
        notes.append(f"{', '.join(r['refs'])}: {r['kind']} clamp at {r['v_clamp']:.4g} V "
                     f"above the input rail (corner {r['v_clamp_corner']}); clamp power "
                     f"{r['p_clamp']:.3g} W (corner {r['p_clamp_corner']}), "
                     f"{100 * r['share_of_input']:.2g} % of the input power"
                     + (", in the converter model's energy balance and currents at the "
                        "DCM corners (delayed commutation of the leakage current); at CCM "
                        "corners reported only (the leakage's turn-on commutation is not "
                        "modelled)" if result.clamp_loss is not None
                        else ", reported here and not fed back into the converter "
                        "model's currents"))
    return notes, records


def handover(design):
    """The hand-over of the leakage current to a flyback's clamp, for the converter
    model (``Stage.handover``), or None without a clamp: a function (l_lk [H], i_pk [A],
    v_r [V], fs [Hz]) -> (t_s [s], v_c [V]) with the clamp's mean voltage over the
    hand-over (RCD: b·V_p; voltage clamp: V_z; no hand-over, t_s = 0, where V_z <= V_r).
    """
    cl = design.clamp
    if cl is None or design.topology != "flyback":
        return None

    def f(l_lk, i_pk, v_r, fs):
        if cl.kind == "rcd":
            st = clamps.rcd_clamp_state(l_lk, i_pk, 1.0 / fs, cl.resistance,
                                        cl.capacitance, v_r)
            return st["t_s"], st["v_handover"]
        t_s = clamps.clamp_interval(l_lk, i_pk, cl.voltage, v_r)
        ok = np.isfinite(t_s)
        return np.where(ok, t_s, 0.0), np.where(ok, cl.voltage, 0.0)
    return f


def circuit_clamp(design, stage, result, i: int) -> dict:
    """The clamp of corner ``i`` for the ngspice circuit (``Circuit.clamp``) [SI]: its
    parameters, the analytic clamp voltage as the capacitor's start value ``v0`` and
    the switch current at turn-off ``i_pk``."""
    cl = design.clamp
    _, _, rec = clamped_switch(design, stage, result, ("switch", 0))
    out = {"kind": cl.kind, "i_pk": float(result.currents[("switch", 0)].peak()[i])}
    if cl.kind == "rcd":
        out.update(resistance=cl.resistance, capacitance=cl.capacitance,
                   diode_drop=cl.diode_drop, v0=float(rec["v_clamp"][i]))
    else:
        out["voltage"] = cl.voltage
    return out


def _record(pos, rec, corners, steady, p_in) -> dict:
    """Worst clamp figures of one position: voltage over every corner, power and
    ripple over steady and overload corners [SI]."""
    def worst(x, mask):
        x = np.where(mask, np.asarray(x, dtype=float), -np.inf)
        x = np.where(np.isnan(x), -np.inf, x)
        i = int(np.argmax(x))
        return (float(x[i]) if np.isfinite(x[i]) else None), corners.ids[i]

    out = {"refs": list(pos.refs), "kind": rec["kind"]}
    all_c = np.ones(corners.size, bool)
    out["v_clamp"], out["v_clamp_corner"] = worst(rec["v_clamp"], all_c)
    out["p_clamp"], out["p_clamp_corner"] = worst(rec["p_clamp"], steady)
    share = np.asarray(rec["p_clamp"]) / np.asarray(p_in)
    out["share_of_input"] = worst(share, steady)[0]
    for key in ("v_ripple", "i_ripple_rms"):
        if key in rec:
            out[key] = worst(rec[key], steady)[0]
    return out
