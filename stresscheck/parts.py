"""Part sheets: loading, validation and lookup in parts libraries.

A part sheet is one TOML file per part (``<id>.toml``); see CONTRACT.md. Values are held
in SI base units; a key whose table allows it may hold a ``Spread`` (range or tolerance).
"""

from __future__ import annotations

import importlib.util
import os
import re
import stat
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from . import schema
from .errors import InputError
from .fsio import file_kind
from .soa import load_soa
from .tomlio import check_keys, optional_text, read_toml, require_str, shorten, type_name
from .units import Spread, parse_quantity, parse_spread

PART_ID = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.-]{0,79}$")

# Dimensions that are never negative on a part sheet (magnitudes as datasheets give them;
# zero is allowed where the key is not in schema.POSITIVE_KEYS, e.g. an ideal r_d = 0).
# Temperatures and temperature coefficients may be negative.
NON_NEGATIVE_DIMENSIONS = ("voltage", "current", "frequency", "inductance", "capacitance",
                           "resistance", "power", "time", "charge", "energy",
                           "thermal_resistance", "flux_density", "area", "fraction",
                           "count")


@dataclass
class Part:
    id: str
    kind: str
    technology: str
    description: str
    path: Path
    ratings: dict[str, float] = field(default_factory=dict)
    electrical: dict[str, float | Spread] = field(default_factory=dict)
    thermal: dict[str, float] = field(default_factory=dict)
    extra: dict = field(default_factory=dict)  # informational tables kept as read
    # Sheets of the same id in later folders of the search order, not used.
    shadowed: list[Path] = field(default_factory=list)

    def value(self, key: str) -> float | None:
        """Nominal value of an electrical or thermal key [SI], or None."""
        v = self.electrical.get(key, self.thermal.get(key))
        if isinstance(v, Spread):
            return v.nom
        return v

    def spread(self, key: str) -> Spread | None:
        v = self.electrical.get(key)
        if v is None:
            return None
        return v if isinstance(v, Spread) else Spread(v, v, v)


@dataclass(frozen=True)
class Curve:
    """A sheet's table of a factor against a quantity (SI), e.g. ripple multipliers
    against frequency; read by straight lines between the points, held flat beyond."""

    x: tuple[float, ...]
    y: tuple[float, ...]

    def __call__(self, x):
        return np.interp(np.asarray(x, dtype=float), self.x, self.y)

    def lowest_from(self, x):
        """The smallest factor at ``x`` or beyond (per element) [1]: a bound for a
        spread of frequencies at and above ``x``."""
        x = np.asarray(x, dtype=float)
        ys = np.array(self.y)
        beyond = np.where(np.array(self.x)[None, :] >= x[..., None], ys, np.inf)
        return np.minimum(self(x), beyond.min(axis=-1))


def parse_curve(raw, spec, path, key) -> Curve:
    """``{ "<x with unit>" = factor, ... }`` -> Curve, x in SI, factors > 0."""
    if not isinstance(raw, dict) or not raw:
        raise InputError(path, key, f"expected a table such as {{ \"{_curve_example(spec)}\""
                         " = 0.8, ... }: points of a factor against "
                         f"{spec.curve.replace('_', ' ')}")
    points = []
    for x_raw, y_raw in raw.items():
        x = parse_quantity(x_raw, spec.curve, path, f"{key}.{x_raw}")
        y = parse_quantity(y_raw, "fraction", path, f"{key}.{x_raw}")
        if y <= 0:
            raise InputError(path, f"{key}.{x_raw}", "a factor must be greater than zero")
        points.append((x, y))
    points.sort()
    if len({x for x, _ in points}) != len(points):
        raise InputError(path, key, "two points at the same abscissa")
    return Curve(tuple(x for x, _ in points), tuple(y for _, y in points))


def _curve_example(spec) -> str:
    return {"frequency": "100 kHz", "temperature": "85 degC", "voltage": "25 V",
            "current": "5 A"}.get(
        spec.curve, "1")


def valid_part_id(part_id) -> bool:
    return isinstance(part_id, str) and bool(PART_ID.match(part_id)) and ".." not in part_id


def load_part(path: str | Path) -> Part:
    """Read and validate one part sheet."""
    path = Path(path)
    doc = read_toml(path, "part sheet")
    check_keys(doc, ("schema", "id", "kind", "technology", "description", "ratings",
                     "electrical", "thermal", "notes", "source", "soa"), path)
    version = require_str(doc, "schema", path)
    if version != schema.PART_SCHEMA:
        raise InputError(path, "schema", f"unknown schema version {shorten(version)}; "
                         f"expected '{schema.PART_SCHEMA}'")
    part_id = require_str(doc, "id", path)
    if not valid_part_id(part_id):
        raise InputError(path, "id", "a part id may hold letters, digits, '.', '_' and '-' "
                         "only (no path separators), at most 80 characters")
    if part_id != path.stem:
        raise InputError(path, "id", f"id '{part_id}' must equal the file name stem "
                         f"{shorten(path.stem)}")
    kind = require_str(doc, "kind", path, choices=schema.KINDS)
    technology = require_str(doc, "technology", path, choices=schema.TECHNOLOGIES[kind])
    description = require_str(doc, "description", path, optional=True) or ""
    for key in ("notes", "source"):
        optional_text(doc, key, path)
    part = Part(part_id, kind, technology, description, path)
    tables = schema.PART_KEYS[kind]
    for section in ("ratings", "electrical", "thermal"):
        table = doc.get(section, {})
        if not isinstance(table, dict):
            raise InputError(path, section, f"[{section}] must be a table, got "
                             f"{type_name(table)}")
        check_keys(table, tables[section], path, prefix=f"{section}.")
        target = getattr(part, section)
        for key, raw in table.items():
            spec = tables[section][key]
            full = f"{section}.{key}"
            if (section, key) == ("ratings", "soa"):
                raise InputError(path, full, "give the SOA as [[soa]] tables (pulse_width, "
                                 "v_ds and i_d lists) at the top level of the sheet")
            if spec.curve:
                target[key] = parse_curve(raw, spec, path, full)
                continue
            if spec.spread:
                value = parse_spread(raw, spec.dimension, path, full)
                low = value.min
            else:
                value = parse_quantity(raw, spec.dimension, path, full)
                low = value
            if key in schema.POSITIVE_KEYS and low <= 0:
                raise InputError(path, full, f"must be greater than zero, got "
                                 f"{shorten(raw)}")
            if spec.dimension in NON_NEGATIVE_DIMENSIONS and low < 0:
                raise InputError(path, full, f"must not be negative, got {shorten(raw)} "
                                 "(give the magnitude the datasheet lists)")
            target[key] = value
    if "soa" in doc:
        if kind != "mosfet":
            raise InputError(path, "soa", "an SOA table is read for MOSFETs only")
        part.ratings["soa"] = load_soa(doc["soa"], path)
    _check_consistency(part)
    return part


def _check_consistency(part: Part) -> None:
    e, path = part.electrical, part.path
    if part.kind == "mosfet":
        if "r_ds_on" not in e:
            raise InputError(path, "electrical.r_ds_on", "a MOSFET needs r_ds_on")
        if ("r_ds_on_hot" in e) != ("r_ds_on_hot_temperature" in e):
            raise InputError(path, "electrical.r_ds_on_hot",
                             "r_ds_on_hot and r_ds_on_hot_temperature go together")
        if "r_ds_on_hot_temperature" in e and e["r_ds_on_hot_temperature"] <= 25.0:
            raise InputError(path, "electrical.r_ds_on_hot_temperature",
                             "must be above 25 degC (r_ds_on is the 25 degC value)")
    if part.kind == "mosfet":
        for key in ("e_oss", "q_oss"):
            if key in e and "oss_voltage" not in e:
                raise InputError(path, f"electrical.{key}", f"{key} needs oss_voltage (the "
                                 "drain-source voltage at which the sheet states it)")
    if part.kind in ("inductor", "transformer"):
        _check_core_loss(part)
    if part.kind == "diode" and "v_f0" not in e:
        raise InputError(path, "electrical.v_f0", "a diode needs v_f0 (forward drop at "
                         "zero current of its straight-line model)")
    if part.kind == "capacitor" and "capacitance" not in e:
        raise InputError(path, "electrical.capacitance", "a capacitor needs a capacitance")
    if part.kind == "inductor" and "inductance" not in e:
        raise InputError(path, "electrical.inductance", "an inductor needs an inductance")
    r = part.ratings
    key = {"inductor": "i_sat", "transformer": "b_sat"}.get(part.kind)
    if key is not None and (f"{key}_hot" in r) != (f"{key}_hot_temperature" in r):
        raise InputError(path, f"ratings.{key}_hot", f"{key}_hot and "
                         f"{key}_hot_temperature go together")
    if key is not None and f"{key}_hot" in r:
        if key not in r:
            raise InputError(path, f"ratings.{key}", f"{key}_hot needs {key} (the 25 degC "
                             "value) too")
        if r[f"{key}_hot_temperature"] <= 25.0:
            raise InputError(path, f"ratings.{key}_hot_temperature", "must be above "
                             f"25 degC ({key} is the 25 degC value)")
    roll = e.get("inductance_vs_current") if part.kind == "inductor" else None
    if roll is not None:
        if roll.x[0] < 0:
            raise InputError(path, "electrical.inductance_vs_current", "currents must not "
                             "be negative (the fraction is read at the current's magnitude)")
        if max(roll.y) > 1.0 or any(b > a for a, b in zip(roll.y, roll.y[1:])):
            raise InputError(path, "electrical.inductance_vs_current", "fractions must be "
                             "at most 1 and must not rise with the current (a saturation "
                             "roll-off of the sheet's inductance)")
    if part.kind == "transformer":
        for key in ("primary_turns", "secondary_turns"):
            if key not in e:
                raise InputError(path, f"electrical.{key}", "a transformer needs turns")


def _check_core_loss(part: Part) -> None:
    """Steinmetz keys come as a set: k or a loss density at a stated flux and frequency,
    with both exponents and the core volume."""
    e, path = part.electrical, part.path
    point = ("core_loss_density", "core_loss_flux", "core_loss_frequency")
    given = [k for k in point if k in e]
    if given and len(given) < 3:
        missing = [k for k in point if k not in e][0]
        raise InputError(path, f"electrical.{missing}", "core_loss_density, core_loss_flux "
                         "and core_loss_frequency go together")
    if "steinmetz_k" in e and given:
        raise InputError(path, "electrical.steinmetz_k", "give steinmetz_k or "
                         "core_loss_density (with its flux and frequency), not both")
    if "steinmetz_k" in e or given:
        for key in ("steinmetz_alpha", "steinmetz_beta", "core_volume"):
            if key not in e:
                raise InputError(path, f"electrical.{key}", "core-loss coefficients need "
                                 "steinmetz_alpha, steinmetz_beta and core_volume")
    if part.kind == "inductor" and ("turns" in e) != ("core_area" in e):
        raise InputError(path, "electrical.turns" if "turns" not in e else
                         "electrical.core_area", "turns and core_area go together (the "
                         "flux swing of an inductor is L·ΔI/(N·A_e))")


def shipped_library() -> Path:
    """Folder of the part library shipped inside the package (``parts/`` of the source
    tree, installed as the data package ``stresscheck.part_library``)."""
    try:  # a data folder without __init__.py is a namespace package: take its folder
        spec = importlib.util.find_spec("stresscheck.part_library")
    except ModuleNotFoundError:
        spec = None
    if spec is not None and spec.submodule_search_locations:
        return Path(list(spec.submodule_search_locations)[0])
    return Path(__file__).resolve().parent.parent / "parts"  # a source checkout


class PartLibrary:
    """Looks a part id up in an ordered list of folders (first hit wins)."""

    def __init__(self, folders):
        self.folders = [Path(f) for f in folders]
        self._cache: dict[str, Part] = {}

    def get(self, part_id, where, key: str) -> Part:
        """Load part ``part_id``; ``where``/``key`` name the design entry that asked for it."""
        if not valid_part_id(part_id):
            raise InputError(where, key, f"invalid part id {shorten(part_id)}: a string of "
                             "letters, digits, '.', '_' and '-' (no path separators, no "
                             "'..'), starting with a letter or digit, at most 80 characters")
        if part_id in self._cache:
            return self._cache[part_id]
        found: list[Path] = []
        for folder in self.folders:
            # part_id matches PART_ID (no separators, no ".."), so the candidate is a
            # file directly inside ``folder``: a design cannot reach outside its libraries.
            candidate = folder / f"{part_id}.toml"
            if os.path.lexists(candidate):
                require_regular_file(candidate, f"{where}, {key}")
                found.append(candidate)
        if not found:
            searched = ", ".join(str(f) for f in self.folders)
            raise InputError(where, key, f"part '{part_id}' is not in any parts library "
                             f"(searched: {searched})")
        part = load_part(found[0])
        part.shadowed = found[1:]
        self._cache[part_id] = part
        return part

    def all_parts(self) -> list[Part]:
        seen: dict[str, Part] = {}
        for folder in self.folders:
            for file in sorted(folder.glob("*.toml")):
                require_regular_file(file)
                if file.stem not in seen:
                    seen[file.stem] = load_part(file)
                else:
                    seen[file.stem].shadowed.append(file)
        return list(seen.values())


def require_regular_file(path: Path, asked_by: str | None = None) -> None:
    """Refuse a part sheet that is not a regular file (or a link to one): a FIFO, a
    device, a socket, a folder or a dangling link is an error naming it, never skipped
    in favour of a sheet of the same id further down the search order."""
    path = Path(path)
    why = f" (asked for by {asked_by})" if asked_by else ""
    link = path.is_symlink()
    try:
        mode = path.stat().st_mode
    except FileNotFoundError:
        target = os.readlink(path) if link else "?"
        raise InputError(path, None, f"part sheet is a symbolic link to '{target}', which "
                         f"does not exist{why}") from None
    except OSError as exc:
        raise InputError(path, None, f"cannot read the part sheet: "
                         f"{exc.strerror or exc}{why}") from None
    if stat.S_ISREG(mode):
        return
    kind = file_kind(mode)
    via = "a symbolic link to " if link else ""
    raise InputError(path, None, f"part sheet is {via}{kind}, not a regular file; a part "
                     f"sheet must be a regular file{why}")
