"""Corners: every combination of the envelope's extremes and the part tolerances.

Levels per dimension:
  input_voltage        min, nom, max (distinct values), plus input_surge if given
  output_current       min, max, plus current_limit if given
  ambient_temperature  min, max
  output_voltage       min, max when a range
  switching_frequency  min, max when a range
  line_frequency       min, max when a range (input = "ac" only)
  <ref>.<key>          min, max of each tolerance a part sheet gives (inductance,
                       magnetizing inductance, capacitance)
The full factorial is evaluated at once as numpy arrays (one entry per corner).
A corner at the surge voltage is a *transient* corner (voltage stresses only); one at the
current limit is an *overload* corner; all others are *steady*.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from .units import Spread

ENVELOPE_UNITS = {"input_voltage": "V", "output_current": "A", "ambient_temperature": "degC",
                  "output_voltage": "V", "switching_frequency": "Hz"}
# Part keys whose tolerance spans corners, with their unit.
TOLERANCE_KEYS = {"inductance": "H", "magnetizing_inductance": "H", "capacitance": "F"}


@dataclass
class CornerSet:
    ids: list[str]
    kind: np.ndarray  # (N,) "steady" | "overload" | "transient"
    columns: dict[str, np.ndarray]  # name -> (N,) values [SI]
    units: dict[str, str]

    @property
    def size(self) -> int:
        return len(self.ids)

    def __getitem__(self, name: str) -> np.ndarray:
        return self.columns[name]

    def steady_mask(self) -> np.ndarray:
        return self.kind != "transient"

    def describe(self, i: int) -> str:
        """'c0013 (input_voltage 36 V, output_current 24 A, ...)' for messages."""
        parts = [f"{k} {self.columns[k][i]:g} {u}" for k, u in self.units.items()]
        return f"{self.ids[i]} ({', '.join(parts)})"

    def row(self, i: int) -> dict:
        out = {"id": self.ids[i], "kind": str(self.kind[i])}
        out.update({k: float(v[i]) for k, v in self.columns.items()})
        return out



def part_tolerances(design):
    """(axis name "<ref>.<key>", spread, unit) of every part value the sheets give as a
    range (TOLERANCE_KEYS): the part-tolerance axes of the corners and of the samples."""
    for comp in design.components:
        for key, unit in TOLERANCE_KEYS.items():
            spread = comp.part.spread(key) if key in comp.part.electrical else None
            if spread is not None and spread.is_range:
                yield f"{comp.refs[0]}.{key}", spread, unit

def build_corners(design) -> CornerSet:
    levels: dict[str, tuple[float, ...]] = {}
    units: dict[str, str] = {}
    vin = list(design.input_voltage.levels())
    if design.input_surge is not None and design.input_surge not in vin:
        vin.append(design.input_surge)
    levels["input_voltage"] = tuple(vin)
    io = list(design.output_current.extremes())
    if design.current_limit is not None and design.current_limit not in io:
        io.append(design.current_limit)
    levels["output_current"] = tuple(io)
    levels["ambient_temperature"] = design.ambient_temperature.extremes()
    levels["output_voltage"] = design.output_voltage.extremes()
    levels["switching_frequency"] = design.switching_frequency.extremes()
    units.update(ENVELOPE_UNITS)
    if getattr(design, "line_frequency", None) is not None:
        levels["line_frequency"] = design.line_frequency.extremes()
        units["line_frequency"] = "Hz"
    for name, spread, unit in part_tolerances(design):
        levels[name] = spread.extremes()
        units[name] = unit

    names = list(levels)
    combos = np.array(list(itertools.product(*(levels[n] for n in names))), dtype=float)
    columns = {n: combos[:, j].copy() for j, n in enumerate(names)}
    count = combos.shape[0]
    width = max(2, len(str(count)))
    ids = [f"c{i + 1:0{width}d}" for i in range(count)]
    kind = np.full(count, "steady", dtype=object)
    if design.current_limit is not None:
        kind[columns["output_current"] == design.current_limit] = "overload"
    if design.input_surge is not None:
        kind[columns["input_voltage"] == design.input_surge] = "transient"
    return CornerSet(ids, kind, columns, units)


def input_spreads(design) -> tuple[dict[str, "Spread"], dict[str, str]]:
    """Every input that spans corners, as its spread, named like the corner columns:
    the steady envelope (input voltage min..max, the surge left out; output current
    min..max, the current limit left out; ambient, output voltage, switching frequency,
    line frequency of an AC input) and each part tolerance. Plain values come as spreads of one value.

    Returns
    -------
    spreads : dict
        Column name -> Spread [SI].
    units : dict
        Column name -> unit symbol.
    """
    spreads = {"input_voltage": design.input_voltage, "output_current": design.output_current,
               "ambient_temperature": design.ambient_temperature,
               "output_voltage": design.output_voltage,
               "switching_frequency": design.switching_frequency}
    units = dict(ENVELOPE_UNITS)
    if getattr(design, "line_frequency", None) is not None:
        spreads["line_frequency"] = design.line_frequency
        units["line_frequency"] = "Hz"
    for name, spread, unit in part_tolerances(design):
        spreads[name] = spread
        units[name] = unit
    return spreads, units


def tolerance_column(corners: CornerSet, comp, key: str, default: float) -> np.ndarray:
    """Per-corner value of a part key that may span corners [SI]."""
    name = f"{comp.refs[0]}.{key}"
    if name in corners.columns:
        return corners.columns[name]
    return np.full(corners.size, default)
