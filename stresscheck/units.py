"""Quantities: parsing of "100 kHz"-style strings into SI floats, with dimension checks.

Parsing of prefixes and unit symbols is delegated to pint; this module only splits the
number from the unit (pint cannot parse a negative offset temperature such as "-40 degC"
as one expression) and checks the dimension expected for each key.
Everything inside stresscheck is SI base units, temperatures in degC, temperature
differences in K.
"""

from __future__ import annotations

import math
import re
import unicodedata
from dataclasses import dataclass, field
from functools import lru_cache

import pint

from .errors import InputError
from .tomlio import shorten, suggest, type_name

# number, then the unit text (surrounding blanks are stripped before matching).
_NUMBER = re.compile(r"([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*)", re.DOTALL)
_NON_FINITE = re.compile(r"[-+]?(?:nan|inf|infinity)\b", re.IGNORECASE)
MAX_QUANTITY_TEXT = 100  # "4.7 uF"-style strings are short; longer text is not a value

# Plausible magnitudes [SI]: a value outside 1e-15 .. 1e15 (zero excepted) is a unit
# mistake (e.g. "4.7 F" for "4.7 uF" is still inside; "1e300 V" is not) and would
# overflow the computation. Temperatures have their own limits.
MIN_MAGNITUDE = 1e-15
MAX_MAGNITUDE = 1e15
ABSOLUTE_ZERO = -273.15  # [degC]
MAX_TEMPERATURE = 5000.0  # [degC] above any component rating


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """pint's unit table, built once per process. pint keeps the parsed definitions in
    its on-disk cache (the user's cache folder), which cuts the build from about a
    second to a tenth; where that folder cannot be used the table is built without it."""
    try:
        return pint.UnitRegistry(autoconvert_offset_to_baseunit=False, cache_folder=":auto:")
    except Exception:  # an unusable cache folder must not stop a run
        return pint.UnitRegistry(autoconvert_offset_to_baseunit=False)


# Dimension name -> (pint reference unit, SI unit symbol used in outputs).
# "temperature" is an absolute temperature in degC; "temperature_difference" in K.
DIMENSIONS: dict[str, tuple[str, str]] = {
    "voltage": ("volt", "V"),
    "current": ("ampere", "A"),
    "frequency": ("hertz", "Hz"),
    "inductance": ("henry", "H"),
    "capacitance": ("farad", "F"),
    "resistance": ("ohm", "ohm"),
    "power": ("watt", "W"),
    "time": ("second", "s"),
    "charge": ("coulomb", "C"),
    "energy": ("joule", "J"),
    "temperature": ("degC", "degC"),
    "temperature_difference": ("kelvin", "K"),
    "thermal_resistance": ("kelvin / watt", "K/W"),
    "per_kelvin": ("1 / kelvin", "1/K"),
    "flux_density": ("tesla", "T"),
    "area": ("meter ** 2", "m^2"),
    "volume": ("meter ** 3", "m^3"),
    "power_density": ("watt / meter ** 3", "W/m^3"),
    "fraction": ("dimensionless", "1"),
    "count": ("dimensionless", "1"),
}


def unit_symbol(dimension: str) -> str:
    return DIMENSIONS[dimension][1]


def parse_quantity(value, dimension: str, path, key: str) -> float:
    """Parse one scalar quantity into SI base units [SI unit of ``dimension``].

    Accepts a bare number (already SI) or a string "<number> <unit>".
    Raises InputError naming ``path`` and ``key`` for anything else.
    """
    if dimension not in DIMENSIONS:  # programming error, not user error
        raise KeyError(dimension)
    return _check_range(_parse(value, dimension, path, key), dimension, path, key, value)


def _parse(value, dimension: str, path, key: str) -> float:
    if isinstance(value, bool):
        raise InputError(path, key, f"expected a {_name(dimension)} value such as "
                         f"\"{_example(dimension)}\", got a boolean")
    if isinstance(value, (int, float)):
        number = float(value)
        _check_finite(number, path, key)
        return number
    if not isinstance(value, str):
        raise InputError(path, key, f"expected a {_name(dimension)} value such as "
                         f"\"{_example(dimension)}\", got {type_name(value)}")
    text = _fold(value).strip()
    if len(text) > MAX_QUANTITY_TEXT:
        raise InputError(path, key, f"cannot read {shorten(value)} as a quantity: too "
                         f"long; expected a number and a unit, such as "
                         f"\"{_example(dimension)}\"")
    if _NON_FINITE.match(text):
        raise InputError(path, key, f"value must be a finite number, got {shorten(value)}")
    match = _NUMBER.fullmatch(text)
    if not match:
        raise InputError(path, key, f"cannot read {shorten(value)} as a quantity; expected "
                         f"a number and a unit, such as \"{_example(dimension)}\"")
    number = float(match.group(1))
    _check_finite(number, path, key)
    unit_text = match.group(2).strip()
    if not unit_text:
        return number
    ureg = registry()
    try:
        unit = ureg.Unit(_normalise_unit(unit_text))
        dimensionality = unit.dimensionality
    except Exception:
        raise InputError(path, key, f"unknown unit {shorten(unit_text)} in {shorten(value)};"
                         f" expected a {_name(dimension)} unit such as "
                         f"\"{_example(dimension)}\"") from None
    reference = ureg.Unit(DIMENSIONS[dimension][0])
    if dimensionality != reference.dimensionality:
        raise _wrong_dimension(path, key, value, dimension)
    try:
        quantity = ureg.Quantity(number, unit)
        if dimension == "temperature":
            result = float(quantity.to("degC").magnitude)
        elif dimension == "temperature_difference" and not quantity._is_multiplicative:
            # "25 degC" or "45 degF" given for a difference: read as a difference
            # (25 K, 25 K), not as an absolute temperature.
            result = float(ureg.Quantity(number, f"delta_{unit}").to(reference).magnitude)
        else:
            result = float(quantity.to(reference).magnitude)
    except Exception:
        raise _wrong_dimension(path, key, value, dimension) from None
    _check_finite(result, path, key)
    return result


def _check_range(number: float, dimension: str, path, key: str, value) -> float:
    """Refuse magnitudes no component or operating point has [SI units]."""
    if dimension == "temperature":
        if number < ABSOLUTE_ZERO:
            raise InputError(path, key, f"{shorten(value)} is below absolute zero "
                             "(-273.15 degC)")
        if number > MAX_TEMPERATURE:
            raise InputError(path, key, f"{shorten(value)} is above {MAX_TEMPERATURE:g} "
                             "degC; not a plausible temperature")
        return number
    magnitude = abs(number)
    if magnitude != 0 and not MIN_MAGNITUDE <= magnitude <= MAX_MAGNITUDE:
        unit = unit_symbol(dimension)
        raise InputError(path, key, f"{shorten(value)} = {number:.3g} {unit} is not a "
                         f"plausible {_name(dimension)} (expected between "
                         f"{MIN_MAGNITUDE:g} and {MAX_MAGNITUDE:g} {unit}, or 0); "
                         "check the number and its unit prefix")
    return number


def _name(dimension: str) -> str:
    return dimension.replace("_", " ")


def _normalise_unit(text: str) -> str:
    """Unit text as pint reads it: Greek capital omega -> ohm, degree sign -> deg (the
    compatibility forms pasted from datasheets, OHM SIGN U+2126, DEGREE CELSIUS U+2103,
    KELVIN SIGN U+212A, MICRO SIGN U+00B5, squared forms such as U+338C, are folded to
    these by `_fold` first)."""
    text = text.replace("\u03a9", "ohm").replace("\u00b0C", "degC")
    text = text.replace("\u00b0", "deg")
    return text


def _fold(text: str) -> str:
    """NFKC normal form of a quantity string (Unicode compatibility forms folded:
    OHM SIGN -> GREEK CAPITAL OMEGA, DEGREE CELSIUS -> DEGREE SIGN + C, MICRO SIGN ->
    GREEK SMALL MU, full-width digits -> ASCII digits)."""
    return unicodedata.normalize("NFKC", text)


def _check_finite(number: float, path, key):
    if not math.isfinite(number):
        raise InputError(path, key, f"value must be a finite number, got {number}")


def _wrong_dimension(path, key, value, dimension):
    return InputError(path, key, f"{shorten(value)} is not a {_name(dimension)}; "
                      f"expected a value such as \"{_example(dimension)}\"")


_EXAMPLES = {
    "voltage": "48 V", "current": "10 A", "frequency": "100 kHz", "inductance": "10 uH",
    "capacitance": "4.7 uF", "resistance": "12 mohm", "power": "2 W", "time": "50 ns",
    "charge": "30 nC", "energy": "10 uJ", "temperature": "75 degC",
    "temperature_difference": "25 K", "thermal_resistance": "3 K/W", "per_kelvin": "0.5 %/K",
    "flux_density": "300 mT", "area": "80 mm^2", "fraction": "20 %", "count": "2",
    "volume": "17.8 cm^3", "power_density": "200 kW/m^3",
}


def _example(dimension: str) -> str:
    return _EXAMPLES.get(dimension, "1")


@dataclass(frozen=True)
class Spread:
    """A value given as a nominal with its extremes [SI units].

    ``nom`` is always set (the mean of min and max when not given).
    ``min``/``max`` equal ``nom`` for a plain value. ``distribution`` and ``sigma`` say
    how Monte Carlo sampling draws the value (``check --samples``): "uniform" between
    min and max (default), or "normal" around nom with standard deviation ``sigma``
    (default (max − min)/6, i.e. tolerance/3), truncated at min and max. They take no
    part in equality: corners use only min, nom and max.
    """

    min: float
    nom: float
    max: float
    distribution: str = field(default="uniform", compare=False)
    sigma: float | None = field(default=None, compare=False)

    @property
    def std(self) -> float:
        """Standard deviation of a normal draw [unit of the value]."""
        return self.sigma if self.sigma is not None else (self.max - self.min) / 6

    @property
    def is_range(self) -> bool:
        return self.min != self.max

    def extremes(self) -> tuple[float, ...]:
        return (self.min, self.max) if self.is_range else (self.nom,)

    def levels(self) -> tuple[float, ...]:
        """min, nom, max without repeats (for the input voltage)."""
        out: list[float] = []
        for v in (self.min, self.nom, self.max):
            if v not in out:
                out.append(v)
        return tuple(out)


def parse_spread(value, dimension: str, path, key: str, *, allow_range: bool = True) -> Spread:
    """Parse a value, a range {min, nom, max} or a tolerance {nom, tolerance} [SI].

    Contract: any of min/nom/max may be left out but not all; a tolerance is a fraction.
    """
    if isinstance(value, dict):
        if not allow_range:
            raise InputError(path, key, "a single value is expected here, not a range")
        allowed = ("min", "nom", "max", "tolerance", "distribution", "sigma")
        unknown = sorted(set(value) - set(allowed))
        if unknown:
            field_name = unknown[0] if unknown[0].isprintable() and len(unknown[0]) <= 60 \
                else shorten(unknown[0])
            raise InputError(path, f"{key}.{field_name}", "unknown field in a range; "
                             "expected min, nom, max or tolerance (and optionally "
                             "distribution, sigma)" + suggest(unknown[0], allowed))
        how = _distribution(value, dimension, path, key)
        value = {k: v for k, v in value.items() if k not in ("distribution", "sigma")}
        if "tolerance" in value:
            if "nom" not in value:
                raise InputError(path, key, "a tolerance needs a nominal value 'nom'")
            if "min" in value or "max" in value:
                raise InputError(path, key, "give either min/max or a tolerance, not both")
            nom = parse_quantity(value["nom"], dimension, path, f"{key}.nom")
            tol = parse_quantity(value["tolerance"], "fraction", path, f"{key}.tolerance")
            if not 0 <= tol < 1:
                raise InputError(path, f"{key}.tolerance",
                                 "tolerance must be between 0 % and 100 %")
            lo, hi = sorted((nom * (1 - tol), nom * (1 + tol)))
            return Spread(lo, nom, hi, *how)
        parts = {k: parse_quantity(value[k], dimension, path, f"{key}.{k}")
                 for k in ("min", "nom", "max") if k in value}
        if not parts:
            raise InputError(path, key, "a range needs at least one of min, nom, max")
        lo = parts.get("min", parts.get("nom", parts.get("max")))
        hi = parts.get("max", parts.get("nom", parts.get("min")))
        if lo > hi:
            unit = unit_symbol(dimension)
            raise InputError(path, key, f"min ({lo:g} {unit}) is above max ({hi:g} {unit})")
        nom = parts.get("nom", (lo + hi) / 2)
        if not lo <= nom <= hi:
            raise InputError(path, f"{key}.nom", "nom must lie between min and max")
        return Spread(lo, nom, hi, *how)
    number = parse_quantity(value, dimension, path, key)
    return Spread(number, number, number)


DISTRIBUTIONS = ("uniform", "normal")  # how ``check --samples`` draws a spread


def _distribution(value: dict, dimension: str, path, key: str) -> tuple[str, float | None]:
    """The optional ``distribution`` and ``sigma`` of a range (sampling only)."""
    how = value.get("distribution", "uniform")
    if how not in DISTRIBUTIONS:
        raise InputError(path, f"{key}.distribution", f"unknown distribution "
                         f"{shorten(how)}; expected one of: " + ", ".join(DISTRIBUTIONS))
    if "sigma" not in value:
        return how, None
    if how != "normal":
        raise InputError(path, f"{key}.sigma", "sigma needs distribution = \"normal\"")
    spread_dim = "temperature_difference" if dimension == "temperature" else dimension
    sigma = parse_quantity(value["sigma"], spread_dim, path, f"{key}.sigma")
    if not sigma > 0:
        raise InputError(path, f"{key}.sigma", "sigma must be greater than zero")
    return how, sigma
