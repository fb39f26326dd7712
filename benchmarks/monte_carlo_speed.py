"""Speed and memory of corners, Monte Carlo and start-up, against the targets of the
Monte Carlo issue. Prints figures and whether each target is met (or by how much it is
missed); asserts nothing.

Run:  python3 benchmarks/monte_carlo_speed.py [--samples 100000 1000000] [--spice 3]

Figures:
- engine time per corner (demo corners, and per sample at 10^4 samples) for the demo
  and a 30-part design, the ngspice time per corner of the same circuit (``verify``'s
  steady-state simulation) and their ratio (target ≥ 2·10^4);
- wall time and peak resident memory of ``check --samples N`` (a fresh process each),
  against a plain ``check`` (target: 10^5 samples of the demo within 3× a plain check;
  ≤ 2 s for the 30-part design; ≤ 500 MB at 10^6 samples);
- ``check`` wall time on the demo, imports included (target ≤ 0.4 s);
- how the engine time grows with the number of corners and of parts.
"""

from __future__ import annotations

import argparse
import json
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

CHILD = """
import json, resource, sys, time
t0 = time.perf_counter()
from stresscheck.cli import main
rc = main(sys.argv[2:])
out = {"rc": rc, "seconds_in_process": time.perf_counter() - t0,
       "peak_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}
open(sys.argv[1], "w").write(json.dumps(out))
"""


def cli_run(args: list[str], tmp: Path) -> dict:
    """Wall time [s] (interpreter start included) and peak memory [MiB] of one CLI run."""
    report = tmp / "child.json"
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-c", CHILD, str(report)] + args, check=False,
                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    out = json.loads(report.read_text())
    out["wall"] = wall
    return out


def design_with_parts(demo: Path, tmp: Path, n_in: int, n_out: int) -> Path:
    """The demo with n_in input and n_out output capacitors (4 + 2 + 1 + 1 other parts)."""
    text = demo.read_text()
    ins = ", ".join(f'"C{i}"' for i in range(1, n_in + 1))
    outs = ", ".join(f'"C{100 + i}"' for i in range(n_out))
    text = re.sub(r'refs = \["C10"[^\]]*\]', f"refs = [{outs}]", text)
    text = re.sub(r'refs = \["C1", "C2"[^\]]*\]', f"refs = [{ins}]", text)
    path = tmp / f"design-{8 + n_in + n_out}.toml"
    path.write_text(text)
    return path


def verdict(value: float, target: float, higher_is_better: bool, unit: str) -> str:
    ok = value >= target if higher_is_better else value <= target
    if ok:
        return f"target {'≥' if higher_is_better else '≤'} {target:g} {unit}: met"
    factor = target / value if higher_is_better else value / target
    return (f"target {'≥' if higher_is_better else '≤'} {target:g} {unit}: MISSED by "
            f"{factor:.2f}×")


def engine_figures(path: Path, spice_corners: int) -> dict:
    import numpy as np

    from stresscheck.corners import build_corners, input_spreads
    from stresscheck.design import load_design
    from stresscheck.engine import run
    from stresscheck.sampling import chunk_rng, sample_chunk

    design = load_design(path)
    corners = build_corners(design)
    with np.errstate(all="ignore"):
        run(design, corners)  # warm-up
        t0 = time.perf_counter()
        ev = run(design, corners)
        per_corner = (time.perf_counter() - t0) / corners.size
        spreads, units = input_spreads(design)
        growth = {}
        for n in (100, 1000, 8192):
            sample = sample_chunk(spreads, units, 0, n, chunk_rng(0, 0))
            t0 = time.perf_counter()
            run(design, sample)
            growth[n] = time.perf_counter() - t0
    spice = None
    if spice_corners:
        from stresscheck.spice.circuit import circuit_at
        from stresscheck.spice.simulate import simulate
        picks = np.linspace(0, corners.size - 1, spice_corners).astype(int)
        t0 = time.perf_counter()
        for i in picks:
            simulate(circuit_at(ev, int(i)))
        spice = (time.perf_counter() - t0) / len(picks)
    return {"corners": corners.size, "per_corner": per_corner, "growth": growth,
            "spice": spice, "parts": sum(len(c.refs) for c in design.components)}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--samples", type=int, nargs="*", default=[100_000, 1_000_000])
    ap.add_argument("--spice", type=int, default=3, help="corners simulated in ngspice")
    ap.add_argument("--million", choices=("both", "demo"), default="both",
                    help="designs run at 10^6 samples (the 30-part one takes longest)")
    args = ap.parse_args()
    from stresscheck.cli import demo_design
    demo = demo_design()
    with tempfile.TemporaryDirectory() as name:
        tmp = Path(name)
        big = design_with_parts(demo, tmp, 12, 10)
        designs = {"demo": demo, "30-part": big}
        print("== engine per corner and ngspice per corner ==")
        for label, path in designs.items():
            f = engine_figures(path, args.spice)
            per_sample = f["growth"][8192] / 8192
            print(f"{label} ({f['parts']} parts): {f['corners']} corners, engine "
                  f"{f['per_corner'] * 1e6:.0f} µs per corner; {per_sample * 1e6:.1f} µs "
                  "per sample at 8192 samples")
            if f["spice"] is not None:
                for what, t in (("corners", f["per_corner"]), ("8192 samples", per_sample)):
                    ratio = f["spice"] / t
                    print(f"  ngspice {f['spice']:.2f} s per corner; ratio at {what} "
                          f"{ratio:,.0f}× — {verdict(ratio, 2e4, True, '×')}")
            print("  growth with samples: " + ", ".join(
                f"N={n}: {t:.3f} s ({t / n * 1e6:.0f} µs each)"
                for n, t in f["growth"].items()))
        print("== growth with parts (demo family, engine at its corners) ==")
        for n_in, n_out in ((2, 2), (6, 4), (12, 10)):
            path = design_with_parts(demo, tmp, n_in, n_out)
            f = engine_figures(path, 0)
            print(f"  {f['parts']} parts: {f['per_corner'] * 1e6:.0f} µs per corner, "
                  f"{f['growth'][8192] / 8192 * 1e6:.1f} µs per sample")
        print("== check wall time (fresh process, imports included) ==")
        plain = {}
        for label, path in designs.items():
            r = cli_run(["check", str(path), "--out", str(tmp / f"out-{label}")], tmp)
            plain[label] = r["wall"]
            line = f"{label}: check {r['wall']:.2f} s wall, {r['peak_mib']:.0f} MiB peak"
            if label == "demo":
                line += " — " + verdict(r["wall"], 0.4, False, "s")
            print(line)
        print("== Monte Carlo (check --samples N, fresh process) ==")
        for n in args.samples:
            for label, path in designs.items():
                if n >= 1_000_000 and args.million == "demo" and label != "demo":
                    continue
                r = cli_run(["check", str(path), "--out", str(tmp / f"mc-{label}"),
                             "--samples", str(n)], tmp)
                line = (f"{label}: {n} samples {r['wall']:.1f} s wall "
                        f"({r['wall'] / plain[label]:.1f}× a plain check), "
                        f"{r['peak_mib']:.0f} MiB peak")
                if n == 100_000 and label == "demo":
                    line += " — " + verdict(r["wall"] / plain[label], 3, False, "× check")
                if n == 100_000 and label == "30-part":
                    line += " — " + verdict(r["wall"], 2, False, "s")
                if n == 1_000_000:
                    line += " — " + verdict(r["peak_mib"] * 1.048576, 500, False, "MB")
                print(line)


if __name__ == "__main__":
    main()
