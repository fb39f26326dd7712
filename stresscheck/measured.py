"""Measured values: ``[[measured]]`` entries of a design file.

Each entry names a ref and a quantity, the measured value with its unit, its provenance
(``instrument``, ``probe_point``, ``date``) and a ``mode``:

- ``replace``: the measurement stands for the computed value at every corner;
- ``bound``: the measurement bounds the stress from below: at each corner the larger of
  the computed and the measured value (a stress not computed stays not computed); for a
  quantity where more is better (life) the smaller, the worse side.

The affected rows carry ``basis = "measured"`` and ``measured = {value, instrument,
probe_point, date, mode}`` in every output.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import schema
from .errors import InputError
from .tomlio import check_keys, optional_text, require_str, shorten

MODES = ("replace", "bound")
KEYS = ("ref", "quantity", "value", "instrument", "probe_point", "date", "mode")
# quantity unit -> dimension of units.DIMENSIONS
UNIT_DIMENSIONS = {"V": "voltage", "A": "current", "W": "power", "degC": "temperature",
                   "T": "flux_density", "s": "time", "K": "temperature_difference",
                   "1": "fraction"}


@dataclass(frozen=True)
class Measurement:
    ref: str
    quantity: str
    value: float  # [SI]
    mode: str
    instrument: str | None = None
    probe_point: str | None = None
    date: str | None = None

    def as_dict(self) -> dict:
        return {"value": self.value, "instrument": self.instrument,
                "probe_point": self.probe_point, "date": self.date, "mode": self.mode}


def load_measured(doc: dict, path, components) -> list[Measurement]:
    """The design's ``[[measured]]`` entries, validated against its refs and their
    part kinds' quantities."""
    from .units import parse_quantity
    entries = doc.get("measured")
    if entries is None:
        return []
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise InputError(path, "measured", "must be an array of tables [[measured]]")
    kinds = {ref: c.part.kind for c in components for ref in c.refs}
    out, seen = [], set()
    for i, entry in enumerate(entries):
        key = f"measured[{i}]"
        check_keys(entry, KEYS, path, f"{key}.")
        ref = require_str(entry, "ref", path, f"{key}.")
        if ref not in kinds:
            raise InputError(path, f"{key}.ref", f"no component has ref {shorten(ref)}")
        quantity = require_str(entry, "quantity", path, f"{key}.",
                               choices=schema.KIND_QUANTITIES[kinds[ref]])
        if "value" not in entry:
            raise InputError(path, f"{key}.value", "missing key")
        unit = schema.QUANTITIES[quantity].unit
        value = parse_quantity(entry["value"], UNIT_DIMENSIONS[unit], path, f"{key}.value")
        mode = require_str(entry, "mode", path, f"{key}.", optional=True,
                           choices=MODES) or "replace"
        if (ref, quantity) in seen:
            raise InputError(path, f"{key}.quantity", f"{ref} {quantity} is measured twice")
        seen.add((ref, quantity))
        text = {k: optional_text(entry, k, path, f"{key}.", max_length=200,
                                 single_line=True) for k in ("instrument", "probe_point")}
        date = entry.get("date")
        out.append(Measurement(ref, quantity, value, mode, text["instrument"],
                               text["probe_point"], None if date is None else str(date)))
    return out


def apply(measurements, stresses) -> None:
    """Put the measurements into the stresses (in place): ``values``, ``basis`` and
    ``measured``."""
    by_key = {(s.ref, s.quantity): s for s in stresses}
    for m in measurements:
        s = by_key.get((m.ref, m.quantity))
        if s is None:
            continue
        if m.mode == "replace":
            s.values = np.full_like(s.values, m.value)
            s.reason = ""
            s.note = f"measured value ({m.probe_point or 'probe point not given'})"
        elif m.quantity in schema.MORE_IS_BETTER:  # the worse side of a life is lower
            s.values = np.minimum(s.values, m.value)  # NaN stays NaN: not computed
            s.note = "; ".join(x for x in (s.note, "at most the measured value (more is "
                                           "better)") if x)
        else:
            s.values = np.maximum(s.values, m.value)  # NaN stays NaN: not computed
            s.note = "; ".join(x for x in (s.note, "at least the measured value") if x)
        s.basis = "measured"
        s.measured = m.as_dict()
