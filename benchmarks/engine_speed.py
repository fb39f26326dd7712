"""Speed and memory of the stress engine: the demo's corners, and 10^5 random samples
through the same vectorised engine (the size Monte Carlo will use).

Run:  python3 benchmarks/engine_speed.py   (prints figures; asserts nothing)
"""

from __future__ import annotations

import resource
import time

import numpy as np

from stresscheck.checks import run_checks
from stresscheck.cli import demo_design
from stresscheck.corners import CornerSet, build_corners
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.policy import load_policy


def random_corners(design, corners: CornerSet, n: int, seed: int = 1) -> CornerSet:
    """n samples drawn uniformly between each column's extremes (steady corners only)."""
    rng = np.random.default_rng(seed)
    steady = corners.kind == "steady"
    columns = {}
    for name, values in corners.columns.items():
        lo, hi = values[steady].min(), values[steady].max()
        columns[name] = rng.uniform(lo, hi, n) if hi > lo else np.full(n, lo)
    ids = [f"s{i:06d}" for i in range(n)]
    return CornerSet(ids, np.full(n, "steady", dtype=object), columns, corners.units)


def timed(label, fn):
    t0 = time.perf_counter()
    out = fn()
    dt = time.perf_counter() - t0
    print(f"{label:45s} {dt * 1e3:9.1f} ms")
    return out


def main():
    design = load_design(demo_design())
    policy = load_policy("commercial")
    corners = build_corners(design)
    ev = timed(f"engine, demo corners (N = {corners.size})", lambda: run(design, corners))
    timed("checks, demo corners", lambda: run_checks(ev, policy))
    for n in (10_000, 100_000):
        samples = random_corners(design, corners, n)
        timed(f"engine, random samples (N = {n})", lambda: run(design, samples))
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"{'peak resident memory':45s} {peak:9.1f} MiB")


if __name__ == "__main__":
    main()
