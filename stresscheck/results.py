"""The results document (results.json) from an evaluation and its checks.

Deterministic: the same inputs give the same bytes (no timestamps, no absolute paths;
inputs are identified by name and sha256).
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

from . import __version__, schema
from .checks import ROLE_ORDER, summarise, uncovered
from .parts import shipped_library
from .runid import stamp_run_id
from .sweeps import input_sweeps
from .texts import CAUTIONS

LOSSES_INCLUDED = (
    "MOSFET conduction: R_DS(on) at the solved junction temperature × I_rms²",
    "diode forward conduction: v_f0·I_avg + r_d·I_rms²",
    "capacitor ESR: ESR × I_rms² (ESR as given on the part sheet)",
    "inductor DCR: DCR × I_rms² (DCR as given, no temperature rise of copper)",
    "transformer winding copper loss: R × I_rms² per winding",
)
LOSSES_NOT_INCLUDED = (
    "switching (overlap), C_oss, gate-drive and reverse-recovery losses",
    "core losses of transformer and inductor",
    "leakage-inductance energy (clamp or snubber loss; a modelled clamp's power is "
    "reported under 'clamps' and in the notes, not in these losses)",
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


def _ref_key(ref: str):
    """Q2 before Q10: split the trailing number."""
    head = ref.rstrip("0123456789")
    tail = ref[len(head):]
    return (head, int(tail) if tail else -1, ref)
