"""Monte Carlo sampling: ``check --samples N [--seed S]``.

Every input that spans corners (``corners.input_spreads``: the steady envelope and the
part tolerances) is drawn from its distribution: uniform between min and max by default,
or normal around nom with the spread's ``sigma`` (default tolerance/3), truncated at min
and max (a tolerance is a limit the part is made to; a draw outside is drawn again).
The input surge and the current limit are corners, not sampled: samples are steady
operating points.

The samples go through the same ``engine.run`` as the corners, in chunks of at most
``CHUNK`` samples, so memory stays bounded whatever N. Chunk c draws from
``Generator(PCG64(SeedSequence(seed, spawn_key=(c,))))``: the same seed gives the same
samples on any machine.

Per check a ``Tally`` keeps, over all chunks, the count, the count beyond ``allowed``
(above it; below it for a minimum, where more is better),
the exact maximum (and the sample that gives it) and a histogram of ``FINE_BINS`` bins
from which p50, p95 and p99 are read (within one bin width: (range of the first
chunk, widened by half)/4096, far below the sampling error of a percentile).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .checks import governing_rule, is_capped, status_of
from .corners import CornerSet, input_spreads
from .schema import MORE_IS_BETTER

CHUNK = 8192  # samples per engine call
FINE_BINS = 4096  # histogram bins per check for the percentiles
HISTOGRAM_BINS = 32  # bins of the histogram written to results.json
# A sample counts as beyond the corner worst case when its ratio (or, without an
# allowed value, its stress) exceeds the corners' by more than this fraction: the
# electro-thermal loop settles to 1e-3 K, so near a corner a sample may differ from it
# by that much without any non-monotonic behaviour.
RAISE_TOLERANCE = 1e-4


def draw(spread, n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` values of one input [SI] from its spread's distribution.

    Parameters
    ----------
    spread : Spread
        min, nom, max [SI]; ``distribution`` "uniform" or "normal" (``sigma``, default
        (max − min)/6), the normal truncated at min and max by drawing again.
    n : int
    rng : numpy.random.Generator

    Returns
    -------
    ndarray
        (n,) values [SI].
    """
    if not spread.is_range:
        return np.full(n, spread.nom)
    if spread.distribution == "uniform":
        return rng.uniform(spread.min, spread.max, n)
    out = rng.normal(spread.nom, spread.std, n)
    outside = (out < spread.min) | (out > spread.max)
    while outside.any():
        out[outside] = rng.normal(spread.nom, spread.std, int(outside.sum()))
        outside = (out < spread.min) | (out > spread.max)
    return out


def chunk_rng(seed: int, chunk: int) -> np.random.Generator:
    """The generator of chunk number ``chunk`` for ``seed`` (independent streams)."""
    return np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed,
                                                                      spawn_key=(chunk,))))


def sample_chunk(spreads: dict, units: dict, start: int, n: int,
                 rng: np.random.Generator) -> CornerSet:
    """``n`` samples as a CornerSet of steady points, ids s0000001, s0000002, ..."""
    columns = {name: draw(spread, n, rng) for name, spread in spreads.items()}
    ids = [f"s{start + i + 1:07d}" for i in range(n)]
    return CornerSet(ids, np.full(n, "steady", dtype=object), columns, dict(units))


class Tally:
    """Running statistics of one check's stress over every chunk of samples.

    ``lower_worse`` for a quantity where more is better (life): ``allowed`` is then a
    minimum, a sample below it counts in ``p_exceed`` and the worst sample is the
    lowest (``worst_row``, ``min``).
    """

    def __init__(self, allowed: float | None, lower_worse: bool = False):
        self.allowed = allowed  # [SI] for steady points, None without a rule or rating
        self.lower_worse = lower_worse
        self.n = 0
        self.not_computed = 0
        self.runaway = 0
        self.exceed = 0
        self.max = -np.inf
        self.min = np.inf
        self.worst_row: dict | None = None
        self.lo = self.hi = None
        self.counts = np.zeros(FINE_BINS, dtype=np.int64)

    def add(self, values: np.ndarray, corners: CornerSet) -> None:
        """Account for one chunk's (n,) stresses [SI]."""
        self.n += values.size
        self.not_computed += int(np.isnan(values).sum())
        self.runaway += int(np.isposinf(values).sum())
        if self.allowed is not None:
            beyond = values < self.allowed if self.lower_worse else values > self.allowed
            self.exceed += int(beyond.sum())  # runaway counts, NaN not
        idx = np.flatnonzero(np.isfinite(values))
        if idx.size == 0:
            return
        v = values[idx]
        j = int(np.argmin(v) if self.lower_worse else np.argmax(v))
        if (v[j] < self.min) if self.lower_worse else (v[j] > self.max):
            self.worst_row = corners.row(int(idx[j]))
        self.max = max(self.max, float(v.max()))
        self.min = min(self.min, float(v.min()))
        if self.lo is None:  # the first chunk sets the bins, widened by half its range
            lo, hi = float(v.min()), float(v.max())
            pad = (hi - lo) / 4 if hi > lo else max(abs(hi) * 1e-6, 1e-12)
            self.lo, self.hi = lo - pad, hi + pad
        k = np.floor((v - self.lo) / (self.hi - self.lo) * FINE_BINS)
        k = np.clip(k, 0, FINE_BINS - 1).astype(np.int64)
        self.counts += np.bincount(k, minlength=FINE_BINS)

    def _edges(self) -> np.ndarray:
        edges = np.linspace(self.lo, self.hi, FINE_BINS + 1)
        edges[0], edges[-1] = min(edges[0], self.min), max(edges[-1], self.max)
        return edges

    def quantile(self, q: float) -> float:
        """The q-quantile of the computed samples [SI], linear within one fine bin."""
        total = int(self.counts.sum())
        edges = self._edges()
        cum = np.cumsum(self.counts)
        target = q * total
        b = int(np.searchsorted(cum, target, side="left"))
        before = cum[b - 1] if b > 0 else 0
        inside = self.counts[b]
        lo, hi = max(edges[b], self.min), min(edges[b + 1], self.max)
        share = (target - before) / inside if inside else 0.0
        return float(lo + (hi - lo) * min(max(share, 0.0), 1.0))

    def histogram(self) -> dict:
        """``HISTOGRAM_BINS`` bins of the fine histogram, empty ends trimmed; the outer
        edges are the smallest and largest sample, so every sample is counted."""
        per = FINE_BINS // HISTOGRAM_BINS
        counts = self.counts.reshape(HISTOGRAM_BINS, per).sum(axis=1)
        edges = self._edges()[::per]
        used = np.flatnonzero(counts)
        first, last = int(used[0]), int(used[-1])
        counts = counts[first:last + 1]
        edges = edges[first:last + 2].copy()
        edges[0], edges[-1] = self.min, self.max
        return {"edges": [float(e) for e in edges], "counts": [int(c) for c in counts]}

    def summary(self) -> dict:
        """The ``monte_carlo`` field of a check."""
        computed = self.n - self.not_computed
        finite = self.lo is not None
        out = {"samples": self.n,
               "p50": self.quantile(0.50) if finite else None,
               "p95": self.quantile(0.95) if finite else None,
               "p99": self.quantile(0.99) if finite else None,
               "max": self.max if finite else None,
               "p_exceed": (self.exceed / computed if self.allowed is not None and computed
                            else None)}
        if finite:
            out["histogram"] = self.histogram()
        if self.lower_worse and finite:
            out["min"] = self.min  # the worst sample where more is better
        if self.not_computed:
            out["not_computed"] = self.not_computed
        if self.runaway:
            out["runaway"] = self.runaway
        return out


def steady_allowed(component, quantity: str, policy):
    """(rule, allowed [SI], rating [SI] or None) that apply to a steady point, or
    (None, None, None)."""
    part = component.part
    rule = governing_rule(policy.rules_for(part, quantity), part, "steady")
    if rule is None or (rule.rating is not None and rule.rating not in part.ratings):
        return None, None, None
    rating = float(part.ratings[rule.rating]) if rule.rating is not None else None
    return rule, float(rule.allowed(part)), rating


@dataclass
class Sampling:
    """What a Monte Carlo run did, for results.json (``sampling``)."""

    samples: int
    seed: int
    inputs: list[dict]
    worst_samples: list[dict]

    def as_dict(self) -> dict:
        return {"samples": self.samples, "seed": self.seed, "chunk": CHUNK,
                "inputs": self.inputs, "worst_samples": self.worst_samples}


def run_monte_carlo(design, checks: list, policy, samples: int, seed: int = 0,
                    progress=None) -> Sampling:
    """Draw ``samples`` points, evaluate them in chunks and annotate ``checks``.

    Each check gets ``monte_carlo`` (see ``Tally.summary``); where a sample is beyond
    the corner worst case (a stress not monotonic in its inputs) the check's stress,
    corner, ratio and status are raised to that sample's and ``method`` becomes
    "monte-carlo".

    Parameters
    ----------
    design : Design
    checks : list of Check
        The corner checks, in the engine's stress order (``checks.run_checks``).
    policy : Policy
    samples : int
        Number of samples, at least 1.
    seed : int
        Seed of the generator (``SeedSequence``).
    progress : callable, optional
        Called as ``progress(done, total)`` after each chunk.

    Returns
    -------
    Sampling
    """
    from .engine import run  # the engine imports nothing from here

    policy = policy.bind(design)  # minimum = "required_life" and the like
    spreads, units = input_spreads(design)
    tallies: list[Tally] | None = None
    rules: list = []
    for c, start in enumerate(range(0, samples, CHUNK)):
        n = min(CHUNK, samples - start)
        corners = sample_chunk(spreads, units, start, n, chunk_rng(seed, c))
        ev = run(design, corners)
        if tallies is None:
            keys = [(s.ref, s.quantity) for s in ev.stresses]
            if keys != [(ch.ref, ch.quantity) for ch in checks]:
                raise RuntimeError("samples and corners gave different stress lists")
            rules = [steady_allowed(s.component, s.quantity, policy) for s in ev.stresses]
            tallies = [Tally(allowed, s.quantity in MORE_IS_BETTER)
                       for s, (_, allowed, _) in zip(ev.stresses, rules)]
        for tally, stress in zip(tallies, ev.stresses):
            tally.add(stress.values, corners)
        if progress is not None:
            progress(start + n, samples)
    worst = {}
    for check, tally, steady in zip(checks, tallies or [], rules):
        if check.status == "not-computed":
            continue
        check.monte_carlo = tally.summary()
        if _raise(check, tally, steady, policy):
            worst[tally.worst_row["id"]] = tally.worst_row
            if check.capped is not None:
                check.capped = bool(is_capped(check.quantity, check.stress))
        if tally.runaway and check.status != "fail":
            check.status, check.method = "fail", "monte-carlo"
            text = (f"thermal runaway at {tally.runaway} of {tally.n} Monte Carlo samples "
                    "(the electro-thermal loop does not converge there)")
            check.note = f"{check.note}; {text}" if check.note else text
    inputs = [{"name": name, "unit": units[name], "distribution": s.distribution,
               "min": s.min, "nom": s.nom, "max": s.max,
               "sigma": s.std if s.distribution == "normal" else None}
              for name, s in spreads.items() if s.is_range]
    return Sampling(samples, seed, inputs, [worst[k] for k in sorted(worst)])


def _raise(check, tally: Tally, steady, policy) -> bool:
    """Raise ``check`` to the worst sample where it lies beyond the corners."""
    rule, _, rating = steady
    if tally.worst_row is None or check.stress is None:
        return False
    unit = check.unit
    low = tally.lower_worse
    value = tally.min if low else tally.max  # the worst sample
    if tally.allowed is not None and tally.allowed > 0 and check.ratio is not None:
        if low and not value > 0:
            return False
        ratio = tally.allowed / value if low else value / tally.allowed
        if ratio - check.ratio <= RAISE_TOLERANCE * abs(check.ratio):
            return False
        check.ratio, check.allowed = ratio, tally.allowed
        check.rule, check.rule_source = rule.id, rule.source
        check.rating, check.rating_key = rating, rule.rating_key
        check.status = status_of(ratio, policy)
    elif ((check.stress - value) if low else (value - check.stress)) \
            <= RAISE_TOLERANCE * abs(check.stress):
        return False
    before = check.stress
    check.stress, check.corner = value, tally.worst_row["id"]
    check.stress_kind, check.method = "steady", "monte-carlo"
    text = (f"raised by Monte Carlo: sample {check.corner} gives {value:.4g} {unit}, "
            f"beyond the corner worst case {before:.4g} {unit} (the stress is not "
            "monotonic in its inputs)")
    check.note = f"{check.note}; {text}" if check.note else text
    return True
