"""Command line: ``stresscheck check | demo | verify``.

Exit status: 0 nothing fails, 1 a check fails (or is unrated / not computed), 2 the input
is unusable (message names file and key; never a traceback).
"""

from __future__ import annotations

import argparse
import datetime as _dt
import sys
from importlib import resources
from pathlib import Path

from . import __version__
from .errors import InputError, SimulationError

DEFAULT_OUT = "stresscheck-report"


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="stresscheck", description="Worst-case component "
                                "stress and derating checks for switch-mode supplies.")
    p.add_argument("--version", action="version", version=f"stresscheck {__version__}")
    sub = p.add_subparsers(dest="command", required=True)
    c = sub.add_parser("check", help="compute stresses at every corner and check them")
    c.add_argument("design", type=Path)
    c.add_argument("--parts", action="append", type=Path, default=[], metavar="DIR",
                   help="parts library folder (repeatable; searched first)")
    c.add_argument("--policy", default="commercial", metavar="NAME_OR_FILE")
    c.add_argument("--out", type=Path, default=Path(DEFAULT_OUT), metavar="DIR")
    d = sub.add_parser("demo", help="run the shipped demo design")
    d.add_argument("--out", type=Path, default=Path(DEFAULT_OUT), metavar="DIR")
    v = sub.add_parser("verify", help="compare computed stresses with ngspice at the "
                       "governing corners")
    v.add_argument("design", type=Path)
    v.add_argument("--parts", action="append", type=Path, default=[], metavar="DIR")
    v.add_argument("--policy", default="commercial", metavar="NAME_OR_FILE")
    v.add_argument("--keep", type=Path, default=None, metavar="DIR",
                   help="keep the netlists and simulated results in DIR")
    return p


def demo_design() -> Path:
    return Path(str(resources.files("stresscheck.demo") / "design.toml"))


def run_check(design_path: Path, parts, policy_name, out_dir: Path, *, date=None):
    """Load, evaluate, check and write the reports. Returns (results, paths, checks)."""
    from .checks import run_checks
    from .design import load_design
    from .engine import run
    from .policy import load_policy
    from .report.writer import write_reports
    from .results import build_results

    design = load_design(design_path, parts)
    policy = load_policy(policy_name)
    _refuse_inputs_as_output(out_dir, design, policy)
    evaluation = run(design)
    checks = run_checks(evaluation, policy)
    results = build_results(evaluation, checks, policy)
    context = {"date": date or _dt.date.today().isoformat(), "tool_version": __version__}
    paths = write_reports(results, context, out_dir)
    return results, paths, checks


def _refuse_inputs_as_output(out_dir: Path, design, policy):
    inputs = {design.path.resolve(), policy.path.resolve()}
    inputs |= {c.part.path.resolve() for c in design.components}
    for name in ("report.html", "report.xlsx", "results.json"):
        target = (out_dir / name).resolve()
        if target in inputs:
            raise InputError(out_dir, None, f"output {name} would overwrite an input file")
    if out_dir.resolve() in inputs:
        raise InputError(out_dir, None, "the output folder is an input file")


def _summary_line(results) -> str:
    s = results["summary"]
    return ("  " + ", ".join(f"{s.get(k, 0)} {k}" for k in
                            ("pass", "marginal", "fail", "unrated", "not-computed", "info")))


def _print_findings(results, limit=12):
    order = {"fail": 0, "not-computed": 1, "unrated": 2, "marginal": 3}
    rows = [c for c in results["checks"] if c["status"] in order]
    rows.sort(key=lambda c: (order[c["status"]], -(c["ratio"] or 0)))
    for c in rows[:limit]:
        ratio = f"{100 * c['ratio']:.1f} % of allowed" if c["ratio"] is not None else c["note"]
        print(f"  {c['status'].upper():12s} {c['ref']:6s} {c['quantity']:15s} {ratio}"
              f"  (corner {c['corner']})")
    if len(rows) > limit:
        print(f"  ... and {len(rows) - limit} more findings in the report")


def cmd_check(args) -> int:
    from .checks import exit_status
    results, paths, checks = run_check(args.design, args.parts, args.policy, args.out)
    print(f"{results['design']}: {len(results['checks'])} checks over "
          f"{len(results['corners'])} corners, policy '{results['policy']}'")
    print(_summary_line(results))
    _print_findings(results)
    print(f"reports: {paths['html']}, {paths['xlsx']}, {paths['json']}")
    return exit_status(checks)


def cmd_demo(args) -> int:
    from .checks import exit_status
    results, paths, checks = run_check(demo_design(), [], "commercial", args.out)
    print(f"demo design: {results['design']}")
    print(_summary_line(results))
    _print_findings(results)
    print(f"open {paths['html']} in a browser; the spreadsheet is {paths['xlsx']}")
    print("the demo shows findings on purpose: see the Findings section first")
    status = exit_status(checks)
    return 0 if status == 1 else status  # findings are the point of the demo


def cmd_verify(args) -> int:
    from .verify import verify_design
    return verify_design(args.design, args.parts, args.policy, keep=args.keep)


def main(argv=None) -> int:
    args = _parser().parse_args(argv)
    handlers = {"check": cmd_check, "demo": cmd_demo, "verify": cmd_verify}
    try:
        return handlers[args.command](args)
    except InputError as exc:
        print(f"stresscheck: error: {exc}", file=sys.stderr)
        return 2
    except SimulationError as exc:
        print(f"stresscheck: simulation error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130


if __name__ == "__main__":
    sys.exit(main())
