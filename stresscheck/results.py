"""The results document (results.json) from an evaluation and its checks.

Deterministic: the same inputs give the same bytes (no timestamps, no absolute paths;
inputs are identified by name and sha256).
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

import numpy as np

from . import __version__, schema
from .checks import ROLE_ORDER, summarise, uncovered
from .parts import shipped_library
from .runid import stamp_run_id
from .sweeps import input_sweeps
from .texts import CAUTIONS

LOSSES_INCLUDED = (
    "MOSFET conduction: R_DS(on) at the solved junction temperature × I_rms² (term "
    "'conduction', body diode included)",
    "diode forward conduction: v_f0·I_avg + r_d·I_rms² ('conduction')",
    "MOSFET hard-switching overlap: ½·V_off·(I_on·t_rise + I_off·t_fall)·f_s with the "
    "sheet's t_rise, t_fall (or, with [converter] overlap_method = \"gate-charge\", the "
    "times Q_sw/I_G from the gate charge and the gate-drive current; each switch's row "
    "note names the method) and the device current at each transition ('overlap')",
    "MOSFET output capacitance at hard turn-on: E_oss(V_off)·f_s from e_oss, c_oss "
    "(energy equivalent) or q_oss ('c_oss'); phase-shifted bridge: the residual energy "
    "where the inductive energy does not reach 2·E_oss(V_in)",
    "recovery charge and capacitance of the diode a switch commutates, in that switch: "
    "(Q_rr·V_R + ½·C_j·V_R²)·f_s ('commutation')",
    "diode reverse recovery in the diode: ¼·Q_rr·V_R·f_s ('recovery')",
    "capacitor ESR: ESR × I_rms² ('esr', ESR as given on the part sheet)",
    "inductor and transformer copper: R × I_rms² with the resistance at the solved hot "
    "spot, copper 0.393 %/K ('copper')",
    "core loss of inductors and transformers: improved generalised Steinmetz equation "
    "on the flux waveform, from the sheet's coefficients and core volume ('core')",
    "gate drive Q_g·V_gs·f_s: reported per MOSFET in driver_losses (dissipated in the "
    "driver, not in the switch)",
    "line-cycle models (pfc-boost): the switching-period terms above at each line angle "
    "(CCM or DCM; a DCM turn-on has no overlap and no recovery charge, its C_oss and the "
    "diode's C_j still charged from the peak blocking voltage), averaged over the line "
    "cycle; core loss from the switching-period flux loops per angle plus the "
    "line-frequency loop",
)
LOSSES_NOT_INCLUDED = (
    "leakage-inductance energy (clamp or snubber loss; a modelled clamp's power is "
    "reported under 'clamps' and in the notes, not in these losses)",
    "capacitive snubbing of turn-off by C_oss (the turn-off overlap is counted in full)",
    "valley switching and a bridge leg's resting voltage: transitions are taken at the "
    "peak blocking voltage",
    "recovery of a diode whose current falls to zero through an inductance before the "
    "switch turns on (discontinuous conduction, leakage-limited commutation)",
)
CONVENTIONS = (
    "ratio = stress / allowed (percent of allowed); marginal above the policy's "
    "marginal_above",
    "stress is the value at the governing corner: the corner with the highest ratio "
    "(for info rows, the highest stress)",
    "voltage stresses and flux are taken over every corner, the input surge included "
    "(stress kind 'transient'); current and thermal stresses over steady and overload "
    "(current-limit) corners",
    "the input source supplies only DC: the input (or split) capacitors carry all the AC "
    "current (conservative for their ripple rating)",
    "steady-state periodic operation, continuous or discontinuous conduction as found per "
    "corner (the regime column); no start-up",
    "leakage spikes: where the transformer has leakage inductance, the voltages of the "
    "positions it drives include the design's clamp or overshoot allowance (each row's "
    "note says which); with neither they are not computed",
    "duty ratio = on-time of each switch / its switching period",
    "values in SI base units; temperatures in degC",
)


def file_sha256(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def build_results(evaluation, checks, policy) -> dict:
    design, corners = evaluation.design, evaluation.corners
    parts = {}
    for comp in design.components:
        parts.setdefault(comp.part.id, comp.part)
    inputs = [{"role": "design", "name": design.path.name, "sha256": file_sha256(design.path)}]
    inputs += [_part_input(pid, p, design.path.parent) for pid, p in sorted(parts.items())]
    inputs.append({"role": "policy", "name": policy.name, "sha256": policy.sha256})
    notes = list(evaluation.notes) + [
        {"level": "warning", "text": f"part '{item['name']}': the sheet {item['path']} is "
         f"used; it shadows {', '.join(item['shadowed'])} (same id further down the search "
         "order: --parts folders, parts/ beside the design, the shipped library)"}
        for item in inputs if item.get("shadowed")]

    rows = sorted(checks, key=lambda c: (ROLE_ORDER[c.role], _ref_key(c.ref)))
    corner_rows = []
    duty = evaluation.result.duty
    for i in range(corners.size):
        row = corners.row(i)
        row["duty"] = float(duty[i])
        row["regime"] = str(evaluation.result.regime[i])
        corner_rows.append(row)
    units = dict(corners.units)
    units["duty"] = "1"
    regimes: dict[str, list[str]] = {}
    for row in corner_rows:
        regimes.setdefault(row["regime"], []).append(row["id"])
    losses = _losses_at_governing(evaluation, checks)
    doc = {
        "schema": schema.RESULTS_SCHEMA,
        "design": design.name,
        "policy": policy.name,
        "policy_details": policy.details(),
        "summary": summarise(checks),
        "tool": {"name": "stresscheck", "version": __version__},
        "converter": {"topology": design.topology, "rectifier": design.rectifier,
                      "modulation": design.modulation},
        "inputs": inputs,
        "losses": {ref: terms for ref, (_, terms) in losses.items()},
        "losses_corners": {ref: corner for ref, (corner, _) in losses.items()},
        "driver_losses": _driver_losses(evaluation, checks),
        "losses_included": list(LOSSES_INCLUDED),
        "losses_not_included": list(LOSSES_NOT_INCLUDED),
        "conventions": list(CONVENTIONS),
        "cautions": list(CAUTIONS),
        "notes": notes,
        "uncovered_quantities": uncovered(checks),
        "policy_rules": [r.as_dict() for r in policy.rules],
        "corner_keys": list(corners.columns),
        "corner_units": units,
        "corners": corner_rows,
        "regimes": regimes,
        "checks": [c.as_dict() for c in rows],
        "sweeps": input_sweeps(evaluation, rows),
    }
    review = getattr(design, "review", None)
    if review:
        doc["review"] = dict(review)
    if getattr(evaluation, "clamps", None):
        doc["clamps"] = evaluation.clamps
    return stamp_run_id(doc)


SHIPPED = "(shipped library)"


def sheet_path(path, design_dir) -> str:
    """Where a part sheet was read, as written in results.json: relative to the design's
    folder with "/" separators ("parts/x.toml", "../lib/x.toml"), or
    "(shipped library)/x.toml"; never absolute, so results do not depend on where the
    files live."""
    path = Path(os.path.abspath(path))
    shipped = Path(os.path.abspath(shipped_library()))
    if path.parent == shipped:
        return f"{SHIPPED}/{path.name}"
    try:
        rel = os.path.relpath(path, os.path.abspath(design_dir))
    except ValueError:  # another drive (Windows): the folder name is all that is stable
        rel = str(Path(path.parent.name) / path.name)
    return Path(rel).as_posix()


def _part_input(pid, part, design_dir) -> dict:
    """The inputs entry of a part sheet: id, sha256, the path used and any shadowed."""
    entry = {"role": "part", "name": pid, "sha256": file_sha256(part.path),
             "path": sheet_path(part.path, design_dir)}
    if part.shadowed:
        entry["shadowed"] = [sheet_path(p, design_dir) for p in part.shadowed]
    return entry


THERMAL_QUANTITIES = ("t_j", "t_hotspot", "p_loss")


def _governing_index(evaluation, checks, ref):
    """Corner index of a ref's governing thermal corner: that of its temperature check
    (else its loss row); the corner of the highest total loss if none has a corner."""
    ids = {cid: i for i, cid in enumerate(evaluation.corners.ids)}
    for quantity in THERMAL_QUANTITIES:
        for c in checks:
            if c.ref == ref and c.quantity == quantity and c.corner in ids:
                return ids[c.corner]
    return None


def _terms_at(terms: dict, i) -> dict:
    return {name: (float(v[i]) if np.isfinite(v[i]) else None)
            for name, v in terms.items()}


def _losses_at_governing(evaluation, checks) -> dict:
    """ref -> (corner id, {term: W}) at the ref's governing thermal corner, per device."""
    out = {}
    steady = evaluation.corners.steady_mask()
    for ref, terms in sorted(evaluation.losses.items(), key=lambda kv: _ref_key(kv[0])):
        i = _governing_index(evaluation, checks, ref)
        if i is None:
            total = sum(np.where(np.isfinite(v), v, 0.0) for v in terms.values())
            i = int(np.argmax(np.where(steady, total, -np.inf)))
        out[ref] = (evaluation.corners.ids[i], _terms_at(terms, i))
    return out


def _driver_losses(evaluation, checks) -> dict:
    """ref -> {term: W} of the gate drive, at the same corner as ``losses``."""
    out = {}
    for ref, terms in sorted(evaluation.driver_losses.items(),
                             key=lambda kv: _ref_key(kv[0])):
        i = _governing_index(evaluation, checks, ref) or 0
        out[ref] = _terms_at(terms, i)
    return out


def _ref_key(ref: str):
    """Q2 before Q10: split the trailing number."""
    head = ref.rstrip("0123456789")
    tail = ref[len(head):]
    return (head, int(tail) if tail else -1, ref)
