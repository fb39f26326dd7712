"""Root-sum-square estimate and normalised sensitivities of every check.

At the nominal point x₀ (every input that spans corners at its ``nom``, a steady point)
the engine is evaluated once more with each input moved up and down by ``STEP`` of its
range, all rows in one vectorised call. Central differences give the slope ∂y/∂x_j of
every stress y. Then, per check:

- contribution of input j: the rise of y when x_j goes to the limit of its spread that
  raises y, linearised: c_j = ∂y/∂x_j·(max_j − nom_j) for a rising slope,
  −∂y/∂x_j·(nom_j − min_j) for a falling one [unit of y];
- RSS estimate: y_rss = y(x₀) + √(Σ c_j²), the statistical worst case of independent
  inputs at their limits (root-sum-square tolerance analysis; e.g. Fowlkes & Creveling,
  Engineering Methods for Robust Product Design, 1995, ch. 5 — from memory);
- normalised sensitivity: S_j = (∂y/∂x_j)·(x_j/y) at x₀, the relative change of y per
  relative change of x_j [1]; temperatures (input or stress) are taken on the kelvin
  scale so that S does not depend on the origin of the Celsius scale;
- share: c_j² / Σ c², the part of the RSS spread each input explains [1].

Central differences are exact for a stress quadratic in one input; ``STEP`` = 10⁻³ of
the range keeps the engine's iteration tolerances (10⁻³ K in the thermal loop) far below
the differences taken.
"""

from __future__ import annotations

import numpy as np

from .corners import CornerSet, input_spreads
from .errors import RegulationError
from .schema import MORE_IS_BETTER

STEP = 1e-3  # central-difference step, as a fraction of each input's range
KELVIN = 273.15  # [K] at 0 degC


def perturbation_corners(spreads: dict, units: dict):
    """The nominal point and each ranged input moved up and down, as one CornerSet.

    Returns
    -------
    corners : CornerSet
        Row 0 nominal, rows 2j+1 / 2j+2 input j up / down; all steady.
    names : list of str
        The ranged inputs, in order.
    steps : ndarray
        (J,) difference x_up − x_down of each input [SI].
    """
    names = [n for n, s in spreads.items() if s.is_range]
    rows = 1 + 2 * len(names)
    columns = {n: np.full(rows, s.nom) for n, s in spreads.items()}
    steps = np.zeros(len(names))
    ids = ["nominal"]
    for j, name in enumerate(names):
        s = spreads[name]
        h = STEP * (s.max - s.min)
        up, down = min(s.nom + h, s.max), max(s.nom - h, s.min)
        columns[name][2 * j + 1], columns[name][2 * j + 2] = up, down
        steps[j] = up - down
        ids += [f"{name}+", f"{name}-"]
    kind = np.full(rows, "steady", dtype=object)
    return CornerSet(ids, kind, columns, dict(units)), names, steps


def linear_estimate(y: np.ndarray, spreads: dict, names: list[str], steps: np.ndarray,
                    temperature_output: bool):
    """RSS estimate and sensitivities of one stress from its values at the rows of
    ``perturbation_corners``.

    Parameters
    ----------
    y : ndarray
        (2J+1,) stress at the nominal point and at each input up / down [SI].
    spreads, names, steps
        As for ``perturbation_corners``.
    temperature_output : bool
        The stress is a temperature [degC] (normalised on the kelvin scale).

    Returns
    -------
    (nominal [SI], rss value [SI], list of {input, coefficient, contribution, share}),
    or None where a value is not finite.
    """
    if not np.all(np.isfinite(y)):
        return None
    y0 = float(y[0])
    slopes = (y[1::2] - y[2::2]) / steps
    contributions = []
    for name, slope in zip(names, slopes):
        s = spreads[name]
        contributions.append(slope * (s.max - s.nom) if slope > 0
                             else -slope * (s.nom - s.min))
    c = np.asarray(contributions, dtype=float)
    total = float(np.sum(c ** 2))
    y_norm = y0 + KELVIN if temperature_output else y0
    rows = []
    for name, slope, cj in zip(names, slopes, c):
        x0 = spreads[name].nom + (KELVIN if name == "ambient_temperature" else 0.0)
        coefficient = float(slope * x0 / y_norm) if y_norm != 0 else None
        rows.append({"input": name, "coefficient": coefficient,
                     "contribution": float(cj) + 0.0,
                     "share": float(cj ** 2 / total) if total > 0 else 0.0})
    rows.sort(key=lambda r: (-r["share"], -abs(r["coefficient"] or 0.0), r["input"]))
    return y0, y0 + float(np.sqrt(total)), rows


def annotate(design, checks: list, policy) -> str | None:
    """Set ``rss`` and ``sensitivity`` on every computed check.

    ``rss = {nominal, value, ratio}``: the stress at the nominal point, the RSS
    estimate and its ratio to the allowed value of a steady point (None without one).
    For a quantity where more is better (life) the estimate is y(x₀) − √(Σ c_j²) and
    the ratio minimum / estimate; both None where that linear estimate is not positive
    (life is exponential in temperature: over a wide range the line overshoots).

    Returns
    -------
    str or None
        Why nothing was set (the nominal point cannot be evaluated), else None.
    """
    from .engine import run
    from .sampling import steady_allowed

    policy = policy.bind(design)
    spreads, units = input_spreads(design)
    corners, names, steps = perturbation_corners(spreads, units)
    try:
        ev = run(design, corners)
    except RegulationError as exc:
        return f"no RSS estimate: the nominal point cannot be evaluated ({exc.detail})"
    if [(s.ref, s.quantity) for s in ev.stresses] != [(c.ref, c.quantity) for c in checks]:
        raise RuntimeError("nominal point and corners gave different stress lists")
    for check, stress in zip(checks, ev.stresses):
        if check.status == "not-computed":
            continue
        found = linear_estimate(stress.values, spreads, names, steps, check.unit == "degC")
        if found is None:
            continue
        y0, value, rows = found
        _, allowed, _ = steady_allowed(stress.component, stress.quantity, policy)
        if stress.quantity in MORE_IS_BETTER:  # the worst is below the nominal (life)
            value = 2 * y0 - value
            if value <= 0:  # the linearisation overshoots (life is exponential in T)
                value = None
            ratio = allowed / value if allowed is not None and value else None
        else:
            ratio = value / allowed if allowed is not None and allowed > 0 else None
        check.rss = {"nominal": y0, "value": value, "ratio": ratio}
        check.sensitivity = rows
    return None
