"""Derating rules: the four forms that turn a part rating into an allowed stress.

Forms (CONTRACT.md, "Derating policy" and its extensions):

- factor × rating (``factor`` in (0, 1]);
- rating − margin (``margin`` ≥ 0), optionally capped at ``limit``;
- a fixed limit (``limit`` alone), never above the part's own rating of that quantity
  where the sheet gives it (``NATURAL_RATINGS``);
- a factor that is a piecewise-linear function of temperature
  (``factor_vs_temperature``), the temperature being the corner's ambient or the part's
  own computed temperature (junction or hot spot), as the rule's ``temperature`` says;
- a minimum (``minimum``), the one form of a quantity where more is better
  (``schema.MORE_IS_BETTER``: capacitor life): a fixed value or a design key
  (``minimum = "required_life"``, bound to the design's value by ``Policy.bind``). The
  ratio stays "stress over allowed": minimum / value, above 1 fails.

No form can allow a stress beyond the absolute maximum rating: factors above 1 are
refused when a policy is read (policy.py).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

TEMPERATURE_BASES = ("ambient", "device")

# The part's own rating of each quantity: the absolute maximum that a fixed limit may
# never exceed, and the rating ``rating_needed`` refers to for limit-only rules.
NATURAL_RATINGS = {
    ("mosfet", "v_peak"): "v_ds", ("mosfet", "i_peak"): "i_dm", ("mosfet", "i_rms"): "i_d",
    ("mosfet", "p_loss"): "p_d", ("mosfet", "t_j"): "t_j_max", ("mosfet", "v_gs_peak"): "v_gs",
    ("diode", "v_reverse_peak"): "v_rrm", ("diode", "i_avg"): "i_f_avg",
    ("diode", "t_j"): "t_j_max",
    ("capacitor", "v_peak"): "v_rated", ("capacitor", "i_ripple_rms"): "i_ripple",
    ("capacitor", "t_hotspot"): "t_max", ("capacitor", "life"): "life",
    ("inductor", "i_peak"): "i_sat", ("inductor", "i_rms"): "i_rms",
    ("inductor", "t_hotspot"): "t_max",
    ("transformer", "b_peak"): "b_sat", ("transformer", "t_hotspot"): "t_max",
}


@dataclass(frozen=True)
class Rule:
    id: str
    kind: str
    quantity: str
    source: str
    rating: str | None = None
    factor: float | None = None
    margin: float | None = None  # [K] (temperatures) or quantity units
    limit: float | None = None  # [SI of the quantity]
    technology: tuple[str, ...] | None = None
    stress_kinds: tuple[str, ...] | None = None
    curve: tuple[tuple[float, float], ...] | None = None  # ([degC], factor) points
    temperature: str = "ambient"  # what the curve's temperature is: see TEMPERATURE_BASES
    document: str | None = None
    table: str | None = None
    note: str | None = None
    from_memory: bool = False
    minimum: float | None = None  # [SI] the least value allowed (more-is-better form)
    minimum_from: str | None = None  # design key that gives ``minimum`` (Policy.bind)

    @property
    def is_minimum(self) -> bool:
        """True for the more-is-better form (``minimum``, fixed or from the design)."""
        return self.minimum is not None or self.minimum_from is not None

    def matches(self, part, quantity: str) -> bool:
        return (self.kind == part.kind and self.quantity == quantity
                and (self.technology is None or part.technology in self.technology))

    @property
    def identity(self) -> tuple:
        """What an extending policy replaces: kind, technology filter and quantity."""
        tech = frozenset(self.technology) if self.technology else None
        return (self.kind, tech, self.quantity)

    @property
    def rating_key(self) -> str | None:
        """The rating the rule refers to (the natural rating for a fixed limit)."""
        return self.rating or NATURAL_RATINGS.get((self.kind, self.quantity))

    def factor_at(self, temperature) -> np.ndarray:
        """Factor of a ``factor_vs_temperature`` rule at ``temperature`` [degC].

        Linear between the points; the first point's factor below the first
        temperature; 0 (the part may not be used) above the last one; NaN where the
        temperature is not known.
        """
        t = np.asarray(temperature, dtype=float)
        ts = np.array([p[0] for p in self.curve])
        fs = np.array([p[1] for p in self.curve])
        f = np.interp(t, ts, fs, left=fs[0], right=0.0)
        f = np.where(t > ts[-1], 0.0, f)
        return np.where(np.isnan(t), np.nan, f)

    def allowed(self, part, temperature=None):
        """Allowed stress for ``part`` [SI], or None when the rating is missing.

        Scalar for every form but ``factor_vs_temperature``, which needs ``temperature``
        [degC] (array over corners) and returns an array.
        """
        if self.is_minimum:
            return self.minimum  # None while a design key is not bound or not given
        if self.rating is None:
            natural = part.ratings.get(self.rating_key) if self.rating_key else None
            return self.limit if natural is None else min(self.limit, natural)
        rating = part.ratings.get(self.rating)
        if rating is None:
            return None
        value = rating
        if self.curve is not None:
            if temperature is None:
                raise ValueError(f"rule {self.id} needs a temperature")
            value = value * self.factor_at(temperature)
        if self.factor is not None:
            value = value * self.factor
        if self.margin is not None:
            value = value - self.margin
        if self.limit is not None:
            value = np.minimum(value, self.limit) if self.curve is not None \
                else min(value, self.limit)
        return value

    def rating_needed(self, stress, temperature=None) -> np.ndarray:
        """The smallest rating (of ``rating_key``) with which ``stress`` passes [SI].

        Inverse of the rule's form: stress / factor for a factor rule, stress + margin
        for a margin rule, (stress + margin) / factor(T) for a temperature-dependent
        factor, the stress itself for a fixed limit (which caps at the rating). Where no
        rating can pass (the stress is above a fixed ``limit``, or above the last
        temperature of a curve) the result is +inf; NaN where the stress is unknown.
        """
        s = np.asarray(stress, dtype=float)
        if self.rating is None:
            need = s.copy()
        else:
            f = np.ones_like(s)
            if self.curve is not None:
                f = f * self.factor_at(temperature)
            if self.factor is not None:
                f = f * self.factor
            with np.errstate(divide="ignore", invalid="ignore"):
                need = np.where(f > 0, (s + (self.margin or 0.0)) / np.where(f > 0, f, 1),
                                np.where(np.isnan(f), np.nan, np.inf))
        if self.limit is not None:
            need = np.where(s > self.limit, np.inf, need)
        return need

    def form(self) -> str:
        """The rule's form in words: ``0.8 × v_ds``, ``t_j_max − 25 K, at most 125 degC``."""
        if self.is_minimum:
            if self.minimum_from is not None:
                text = f"at least the design's [operating] {self.minimum_from}"
                if self.minimum is not None:
                    text += f" ({self._value_text(self.minimum)})"
                return text
            return f"at least {self._value_text(self.minimum)}"
        if self.rating is None:
            cap = f" (at most {self.rating_key})" if self.rating_key else ""
            return f"{_num(self.limit)} {_unit(self.quantity)}{cap}"
        text = self.rating
        if self.curve is not None:
            pts = ", ".join(f"{_num(f)} at {_num(t)} degC" for t, f in self.curve)
            text = f"f(T_{self.temperature}) × {self.rating} with f = {pts} " \
                   f"(linear between; none above {_num(self.curve[-1][0])} degC)"
        if self.factor is not None:
            text = f"{_num(self.factor)} × {text}"
        if self.margin is not None:
            unit = "K" if _unit(self.quantity) == "degC" else _unit(self.quantity)
            text = f"{text} − {_num(self.margin)} {unit}"
        if self.limit is not None:
            text = f"{text}, at most {_num(self.limit)} {_unit(self.quantity)}"
        return text

    def _value_text(self, value: float) -> str:
        """A value of the rule's quantity in words; times (life) in hours."""
        if _unit(self.quantity) == "s":
            return f"{_num(value / 3600.0)} h"
        return f"{_num(value)} {_unit(self.quantity)}"

    def as_dict(self) -> dict:
        out = self._as_dict()
        if self.is_minimum:
            out.update(minimum=self.minimum, minimum_from=self.minimum_from)
        return out

    def _as_dict(self) -> dict:
        return {"id": self.id, "kind": self.kind, "quantity": self.quantity,
                "rating": self.rating, "factor": self.factor, "margin": self.margin,
                "limit": self.limit,
                "factor_vs_temperature": ([{"temperature": t, "factor": f}
                                           for t, f in self.curve] if self.curve else None),
                "temperature": self.temperature if self.curve else None,
                "technology": list(self.technology) if self.technology else None,
                "stress_kinds": list(self.stress_kinds) if self.stress_kinds else None,
                "form": self.form(),
                "source": self.source, "document": self.document, "table": self.table,
                "note": self.note, "from_memory": self.from_memory}


def _num(x) -> str:
    return f"{x:g}"


def _unit(quantity: str) -> str:
    from .schema import QUANTITIES
    return QUANTITIES[quantity].unit
