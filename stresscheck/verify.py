"""Cross-check of computed stresses against an ngspice simulation of the same circuit.

For a corner, the engine's circuit (its solved R_DS(on), duty and tolerances) is
simulated in steady state and the same quantities are measured over whole periods.
Tolerances (relative):
  voltages, averages and rms values  2 %
  peaks and capacitor ripple         4 %
  switch voltage with a leakage clamp   5 % above, 2 % below the simulation
Voltages that include a non-zero overshoot allowance are not compared (the simulated
circuit has no capacitances to ring with); with a 0 % allowance they are.
The analytic model neglects second-order effects that the simulation keeps (curvature
of the currents through resistive drops, the decay of the magnetizing current in
freewheel, the exact diode curve); these tolerances bound them honestly.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

TOL_AVERAGE = 0.02
TOL_PEAK = 0.04
# A switch voltage with a modelled leakage clamp: within 5 % above the simulation and
# never more than 2 % below it (the clamp relations bound the spike from above).
TOL_CLAMP_ABOVE = 0.05
TOL_CLAMP_BELOW = 0.02
# quantity -> (tolerance, what the simulation measures it as)
COMPARED = {
    "v_peak": TOL_AVERAGE, "v_reverse_peak": TOL_AVERAGE, "i_avg": TOL_AVERAGE,
    "i_rms": TOL_AVERAGE, "i_peak": TOL_PEAK, "i_ripple_rms": TOL_PEAK, "b_peak": TOL_PEAK,
}
CAPACITOR_ROLES = ("input-capacitor", "output-capacitor", "split-capacitor")


@dataclass
class Comparison:
    ref: str
    quantity: str
    corner: str
    computed: float
    simulated: float
    tolerance: float
    tolerance_below: float | None = None  # where it differs from ``tolerance``

    @property
    def rel(self) -> float:
        scale = max(abs(self.simulated), 1e-12)
        return (self.computed - self.simulated) / scale

    @property
    def ok(self) -> bool:
        below = self.tolerance if self.tolerance_below is None else self.tolerance_below
        return -below <= self.rel <= self.tolerance


def position_of(design, ref: str) -> tuple[tuple[str, int], int]:
    """((role, position index), devices sharing that position's current) of a ref."""
    for comp in design.components:
        if ref not in comp.refs:
            continue
        role = comp.role
        if role in ("input-capacitor", "output-capacitor"):
            return (role, 0), len(comp.refs) * comp.parallel
        refs = [r for r, _ in design.positions(role)]
        return (role, refs.index(ref)), comp.parallel
    raise KeyError(ref)


def compare_at(evaluation, i: int, sim) -> list[Comparison]:
    """Compare every simulated quantity at corner ``i`` with the engine's value there."""
    design = evaluation.design
    out = []
    for s in evaluation.stresses:
        tol = COMPARED.get(s.quantity)
        spike = getattr(s, "spike", "")
        # a non-zero overshoot allowance is the designer's figure for ringing the
        # simulated circuit has no capacitances for: not comparable
        side = "switch" if s.component.role == "switch" else "rectifier"
        allowance = getattr(design, "overshoot", {}).get(side, 0.0)
        if (tol is None or not np.isfinite(s.values[i])
                or (spike == "allowance" and allowance > 0)):
            continue
        below = None
        if spike == "clamp":
            tol, below = TOL_CLAMP_ABOVE, TOL_CLAMP_BELOW
        pos, devices = position_of(design, s.ref)
        measured = sim.positions.get(pos, {}).get(s.quantity)
        if measured is None:
            continue
        if s.quantity.startswith("i_"):
            measured = measured / devices
        out.append(Comparison(s.ref, s.quantity, evaluation.corners.ids[i],
                              float(s.values[i]), float(measured), tol, below))
    return out


def governing_corners(evaluation, checks) -> list[int]:
    index = {cid: k for k, cid in enumerate(evaluation.corners.ids)}
    wanted = sorted({index[c.corner] for c in checks
                     if c.corner is not None and c.quantity in COMPARED})
    return wanted


def runaway_corners(evaluation):
    """Corners where some device's electro-thermal loop ran away, (N,) bool."""
    import numpy as np
    ran = np.zeros(evaluation.corners.size, bool)
    for mask in (getattr(evaluation, "runaway", None) or {}).values():
        ran |= np.asarray(mask, bool)
    return ran


def corners_to_simulate(evaluation, checks, policy) -> tuple[list[int], list[int]]:
    """The governing corners to simulate, and the governing corners skipped because an
    electro-thermal loop ran away there.

    At a runaway corner the engine's operating point (R_DS(on), duty, currents) comes
    from an unconverged loop: there is nothing to compare. Each compared row is then
    governed by its worst corner among the corners that converged (the checks re-run
    with the runaway corners taken out).

    Returns
    -------
    tuple of list of int
        (corner indices to simulate, governing corner indices skipped), both sorted.
    """
    from dataclasses import replace

    from .checks import run_checks

    ran = runaway_corners(evaluation)
    first = governing_corners(evaluation, checks)
    if not ran.any():
        return first, []
    kept = replace(evaluation, runaway={}, stresses=[
        replace(s, applicable=s.applicable & ~ran) for s in evaluation.stresses])
    corners = [i for i in governing_corners(kept, run_checks(kept, policy)) if not ran[i]]
    return corners, [i for i in first if ran[i]]


def verify_design(design_path, parts, policy_name, *, keep: Path | None = None,
                  into: Path | None = None) -> int:
    from .checks import run_checks
    from .design import load_design
    from .engine import run
    from .errors import SimulationError
    from .policy import load_policy
    from .spice.circuit import circuit_at
    from .spice.decks import deck_for
    from .spice.run import find_ngspice
    from .spice.simulate import simulate

    if find_ngspice() is None:
        raise SimulationError("ngspice is not on PATH (install it, e.g. "
                              "'apt-get install ngspice')")
    design = load_design(design_path, parts)
    refused = deck_for(design.topology).refused
    if refused:
        raise SimulationError(f"{design.path}: {refused}")
    policy = load_policy(policy_name)
    report_set = _open_report_set(into, design, policy) if into is not None else None
    evaluation = run(design)
    checks = run_checks(evaluation, policy)
    corners, skipped = corners_to_simulate(evaluation, checks, policy)
    if skipped:
        n_ran = int(runaway_corners(evaluation).sum())
        print(f"{design.name}: skipping {len(skipped)} governing corner(s) where the "
              f"electro-thermal loop ran away (thermal runaway at {n_ran} corner(s) in "
              f"all; nothing to compare there): "
              f"{', '.join(evaluation.corners.ids[i] for i in skipped)}; each row is "
              "simulated at its worst corner among those that converged")
    print(f"{design.name}: simulating {len(corners)} governing corner(s) in ngspice")
    failures = 0
    compared: list[Comparison] = []
    for i in corners:
        cid = evaluation.corners.ids[i]
        print(f"\ncorner {evaluation.corners.describe(i)}")
        target = keep / f"{cid}.cir" if keep else None
        if keep:
            keep.mkdir(parents=True, exist_ok=True)
        sim = simulate(circuit_at(evaluation, i), keep_netlist=target)
        print(f"  duty computed {evaluation.result.duty[i]:.4f}, simulated {sim.duty:.4f}")
        print(f"  {'ref':6s} {'quantity':15s} {'computed':>12s} {'simulated':>12s} "
              f"{'diff':>8s} {'tol':>5s}")
        for cmp in compare_at(evaluation, i, sim):
            compared.append(cmp)
            flag = "ok" if cmp.ok else "OUTSIDE"
            failures += not cmp.ok
            print(f"  {cmp.ref:6s} {cmp.quantity:15s} {cmp.computed:12.5g} "
                  f"{cmp.simulated:12.5g} {100 * cmp.rel:+7.2f}% {100 * cmp.tolerance:4.0f}%"
                  f"  {flag}")
    print(f"\n{failures} comparison(s) outside tolerance")
    if report_set is not None:
        marked = _write_simulated(into, report_set, compared)
        print(f"{marked} row(s) of the reports in {into} now carry their simulated value")
    return 1 if failures else 0


def _open_report_set(into: Path, design, policy) -> dict:
    """The results of a complete report set made from this design file and policy."""
    import json

    from .errors import InputError
    from .report.writer import check_set
    from .results import file_sha256

    into = Path(into)
    if not into.is_dir():
        raise InputError(into, None, "--into expects the folder of an existing report set "
                         "(written by 'stresscheck check')")
    check_set(into)
    results = json.loads((into / "results.json").read_text(encoding="utf-8"))
    hashes = {i.get("role"): i.get("sha256") for i in results.get("inputs") or ()}
    if hashes.get("design") != file_sha256(design.path):
        raise InputError(into, None, f"the reports here were made from another design "
                         f"file than {design.path.name} (its SHA-256 differs); run "
                         "'stresscheck check' first")
    if hashes.get("policy") != policy.sha256:
        raise InputError(into, None, f"the reports here were made under another policy "
                         f"than '{policy.name}'; give the --policy they were made with")
    return results


def _write_simulated(into: Path, results: dict, compared: list[Comparison]) -> int:
    """Add ``simulated = {value, difference, tolerance}`` to the rows whose governing
    corner was simulated, mark them ``basis = "simulated"`` (``stress`` stays the
    computed value) and write the whole set again with a new run id."""
    import datetime as _dt

    from . import __version__
    from .report.writer import write_reports
    from .runid import stamp_run_id

    found = {(c.ref, c.quantity, c.corner): c for c in compared}
    marked = 0
    for check in results.get("checks") or ():
        cmp = found.get((check.get("ref"), check.get("quantity"), check.get("corner")))
        if cmp is None:
            continue
        check["simulated"] = {"value": cmp.simulated, "difference": cmp.rel,
                              "tolerance": cmp.tolerance}
        check["basis"] = "simulated"
        marked += 1
    results.pop("run_id", None)
    context = {"date": _dt.date.today().isoformat(), "tool_version": __version__}
    write_reports(stamp_run_id(results), context, Path(into))
    return marked
