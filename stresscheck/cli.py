"""Command line: ``stresscheck check | demo | verify | policies | policy show``.

Exit status: 0 nothing fails, 1 a check fails (or is unrated / not computed), 2 the input
is unusable (message names file and key; never a traceback), 3 an internal error (a bug:
a one-line message asks for a report, still no traceback).
"""

from __future__ import annotations

import argparse
import datetime as _dt
import math
import os
import sys
from importlib import resources
from pathlib import Path

from . import __version__
from .cli_workflows import (cmd_alternates, cmd_diff, cmd_parts, print_substitutions,
                            substitute)
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
    c.add_argument("--bom", type=Path, default=None, metavar="FILE",
                   help="BOM (CSV or XLSX): its parts replace the design's for its refs")
    c.add_argument("--swap", action="append", default=[], metavar="REF=PART",
                   help="put PART at REF (repeatable; after --bom)")
    c.add_argument("--fail-on", dest="fail_on", choices=("fail", "marginal"),
                   default="fail", help="'marginal': marginal rows also fail the exit "
                   "status (default: fail, unrated and not-computed rows only)")
    sub.add_parser("policies", help="list the built-in derating policies")
    ps = sub.add_parser("policy", help="policy commands")
    psub = ps.add_subparsers(dest="policy_command", required=True)
    show = psub.add_parser("show", help="print a policy rule by rule")
    show.add_argument("name", metavar="NAME_OR_FILE")
    c.add_argument("--samples", type=int, default=None, metavar="N",
                   help="also draw N Monte Carlo samples from the tolerances and ranges")
    c.add_argument("--seed", type=int, default=0, metavar="S",
                   help="seed of the Monte Carlo samples (default 0)")
    d = sub.add_parser("demo", help="run the shipped demo design")
    d.add_argument("--out", type=Path, default=Path(DEFAULT_OUT), metavar="DIR")
    v = sub.add_parser("verify", help="compare computed stresses with ngspice at the "
                       "governing corners")
    v.add_argument("design", type=Path)
    v.add_argument("--parts", action="append", type=Path, default=[], metavar="DIR")
    v.add_argument("--policy", default="commercial", metavar="NAME_OR_FILE")
    v.add_argument("--keep", type=Path, default=None, metavar="DIR",
                   help="keep the netlists and simulated results in DIR")
    v.add_argument("--into", type=Path, default=None, metavar="DIR",
                   help="add the simulated values to the report set in DIR (written by "
                        "'check' from the same design and policy)")
    f = sub.add_parser("diff", help="compare two results.json files check by check")
    f.add_argument("old", type=Path)
    f.add_argument("new", type=Path)
    f.add_argument("--threshold", type=float, default=None, metavar="PERCENT",
                   help="smallest ratio change reported, in %% of allowed (default 1)")
    f.add_argument("--out", type=Path, default=None, metavar="DIR",
                   help="also write diff.html and diff.xlsx into DIR")
    a = sub.add_parser("alternates", help="rank the library parts that fit one designator")
    a.add_argument("design", type=Path)
    a.add_argument("ref")
    a.add_argument("--parts", action="append", type=Path, default=[], metavar="DIR")
    a.add_argument("--policy", default="commercial", metavar="NAME_OR_FILE")
    a.add_argument("--out", type=Path, default=None, metavar="DIR",
                   help="also write alternates.json and alternates.html into DIR")
    pl = sub.add_parser("parts", help="part library tools")
    psub = pl.add_subparsers(dest="parts_command", required=True)
    pc = psub.add_parser("check", help="validate every part sheet of a folder")
    pc.add_argument("folder", type=Path)
    pi = psub.add_parser("import", help="turn a CSV/XLSX parts table into part sheets")
    pi.add_argument("table", type=Path)
    pi.add_argument("--out", type=Path, default=Path("parts-imported"), metavar="DIR")
    return p


def demo_design() -> Path:
    return Path(str(resources.files("stresscheck.demo") / "design.toml"))


def run_check(design_path: Path, parts, policy_name, out_dir: Path, *, date=None,
              bom=None, swaps=(), samples=None, seed=0, progress=None):
    """Load, evaluate, check and write the reports. Returns (results, paths, checks).

    ``bom`` (a BOM file) and ``swaps`` ("REF=PART" texts) replace parts of the design
    before it is evaluated; what they changed is recorded in results["substitutions"].
    ``samples`` (with ``seed``) adds a Monte Carlo run (``sampling.run_monte_carlo``);
    ``progress(done, total)`` is called after each chunk of samples."""
    import numpy as np

    from .checks import run_checks
    from .design import load_design
    from .waivers import apply_waivers
    from .engine import run
    from .policy import load_policy
    from .report.writer import check_output, write_reports
    from .results import build_results
    from .runid import stamp_run_id
    from .sensitivity import annotate

    if samples is not None and samples < 1:
        raise InputError(None, "--samples", f"must be 1 or more, got {samples}")
    if seed is not None and seed < 0:
        raise InputError(None, "--seed", f"must be 0 or more, got {seed}")

    out_dir = Path(out_dir)
    design = load_design(design_path, parts)
    design, bom_record = substitute(design, parts, bom, swaps)
    policy = load_policy(policy_name).bind(design)  # minimum = "required_life" rules
    _refuse_inputs_as_output(out_dir, design, policy)
    check_out_path(out_dir)
    check_output(out_dir)  # a foreign file in the way: refuse before any work is done
    # Overflow in the models surfaces as a non-finite result, refused below with a
    # message; numpy's warnings (source lines) are no help to a user.
    with np.errstate(all="ignore"):
        evaluation = run(design)
        checks = run_checks(evaluation, policy)
        rss_note = annotate(design, checks, policy)
        sampling = None
        if samples is not None:
            from .sampling import run_monte_carlo
            sampling = run_monte_carlo(design, checks, policy, samples, seed, progress)
    # waivers last: a waiver covers the row's final status (corners or Monte Carlo)
    today = _dt.date.fromisoformat(date) if date else _today()
    apply_waivers(checks, design.waivers, today, design.path)
    with np.errstate(all="ignore"):
        results = build_results(evaluation, checks, policy)
    if rss_note is not None:
        results["notes"].append({"level": "warning", "text": rss_note})
    if sampling is not None:
        results["sampling"] = sampling.as_dict()
    if bom_record is not None:
        results.update(bom_record)
    _refuse_non_finite(results, design)  # before the id: it hashes strict JSON
    results = stamp_run_id(results)  # the run id covers every field added above
    context = {"date": today.isoformat(), "tool_version": __version__}
    paths = write_reports(results, context, out_dir)
    return results, paths, checks


def _today() -> _dt.date:
    """The run date (waiver expiry and report date); tests replace it."""
    return _dt.date.today()


def _input_paths(design, policy) -> list[Path]:
    paths = [design.path, policy.path]
    paths += [c.part.path for c in design.components]
    return [Path(p) for p in paths]


def _same_file(a: Path, b: Path) -> bool:
    """True if ``a`` and ``b`` are one file (symbolic and hard links included)."""
    try:
        if a.resolve() == b.resolve():
            return True
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def _refuse_inputs_as_output(out_dir: Path, design, policy):
    """Refuse an output folder or report file that is one of the run's input files (the
    design, the policy, any part sheet the design uses): inputs are never written."""
    out_dir = Path(out_dir)
    inputs = _input_paths(design, policy)
    for path in inputs:
        if _same_file(out_dir, path):
            raise InputError(out_dir, None, f"the output folder is an input file "
                             f"({path}); choose another --out")
    from .report.writer import FILES
    for name in FILES.values():
        target = out_dir / name
        for path in inputs:
            if _same_file(target, path):
                raise InputError(out_dir, None, f"output {name} would overwrite the input "
                                 f"file {path}; choose another --out")


def check_out_path(out_dir: Path) -> None:
    """Refuse an --out path that cannot become a folder, saying why: the path itself or
    one of its parent folders is a dangling symbolic link, or a parent is a file (the
    operating system's own word for both is a bare "File exists")."""
    out_dir = Path(out_dir)
    for path in (out_dir, *out_dir.parents):
        if path.is_symlink() and not path.exists():
            try:
                target = os.readlink(path)
            except OSError:
                target = "?"
            which = "the output folder" if path == out_dir else f"'{path}' (a parent of it)"
            raise InputError(out_dir, None, f"--out: {which} is a symbolic link to "
                             f"'{target}', which does not exist; create the link's target "
                             "or choose another --out")
        if path != out_dir and path.exists():
            if not path.is_dir():
                raise InputError(out_dir, None, f"--out: '{path}' is a file, not a folder, "
                                 "so the output folder cannot be created in it; choose "
                                 "another --out")
            return


def _non_finite(value, where=""):
    """Path of the first NaN or infinity in a JSON-like value, or None."""
    if isinstance(value, float):
        return None if math.isfinite(value) else where
    if isinstance(value, dict):
        items = value.items()
    elif isinstance(value, (list, tuple)):
        items = enumerate(value)
    else:
        return None
    for key, item in items:
        found = _non_finite(item, f"{where}[{key!r}]" if where else repr(key))
        if found is not None:
            return found
    return None


def _refuse_non_finite(results: dict, design) -> None:
    """A value that overflowed (inputs of extreme magnitude) is an input problem."""
    for check in results.get("checks") or ():
        for key in ("stress", "allowed", "ratio", "rating"):
            value = check.get(key)
            if isinstance(value, float) and not math.isfinite(value):
                raise InputError(design.path, None, f"the {check.get('quantity')} of "
                                 f"{check.get('ref')} ({check.get('part')}) came out as "
                                 f"{value} at corner {check.get('corner')}: the design or "
                                 "its part sheets hold values of extreme magnitude")
    where = _non_finite(results)
    if where is not None:
        raise InputError(design.path, None, f"the computation gave a non-finite value "
                         f"({where}): the design or its part sheets hold values of extreme "
                         "magnitude")


def _summary_line(results) -> str:
    s = results["summary"]
    keys = ["pass", "marginal", "fail", "unrated", "not-computed", "info"]
    if s.get("waived"):
        keys.append("waived")
    return "  " + ", ".join(f"{s.get(k, 0)} {k}" for k in keys)


def _policy_lines(results) -> list[str]:
    """What the policy leaves open: rules from memory, quantities with no rule."""
    lines = []
    details = results.get("policy_details") or {}
    if details.get("from_memory"):
        lines.append(f"  policy '{results['policy']}' has rules whose values are from "
                     "memory, not read in a published copy (see 'stresscheck policy show')")
    uncovered = results.get("uncovered_quantities") or []
    if uncovered:
        lines.append(f"  policy '{results['policy']}' leaves uncovered (info rows, no "
                     f"limit): {', '.join(uncovered)}")
    return lines


def _print_waived(results, limit=12):
    rows = [c for c in results["checks"] if c.get("waiver")]
    for c in rows[:limit]:
        w = c["waiver"]
        ratio = f"{100 * c['ratio']:.1f} % of allowed" if c["ratio"] is not None else ""
        until = f", expires {w['expires']}" if w.get("expires") else ""
        print(f"  {c['status'].upper():12s} {c['ref']:6s} {c['quantity']:15s} {ratio}"
              f"  (was {c.get('waived_status') or c['status']}; approved by "
              f"{w['approved_by']} on {w['date']}{until}: {w['reason']})")
    if len(rows) > limit:
        print(f"  ... and {len(rows) - limit} more waived checks in the report")


def _print_findings(results, limit=12):
    from .report.view import format_stress
    order = {"fail": 0, "not-computed": 1, "unrated": 2, "marginal": 3}
    rows = [c for c in results["checks"] if c["status"] in order]
    rows.sort(key=lambda c: (order[c["status"]], -(c["ratio"] or 0)))
    for c in rows[:limit]:
        ratio = f"{100 * c['ratio']:.1f} % of allowed" if c["ratio"] is not None else c["note"]
        if c["quantity"] == "life" and c.get("stress") is not None:
            ratio += f" (life {format_stress(c)})"  # "> 15 years" where capped
        print(f"  {c['status'].upper():12s} {c['ref']:6s} {c['quantity']:15s} {ratio}"
              f"  (corner {c['corner']})")
    if len(rows) > limit:
        print(f"  ... and {len(rows) - limit} more findings in the report")


def _print_shadowed(results):
    """One line per part id found in more than one folder: which sheet is used and which
    are shadowed (paths from the design's folder, as in results.json)."""
    for item in results.get("inputs") or ():
        if item.get("shadowed"):
            print(f"  part '{item['name']}': using {item['path']}, shadowing "
                  f"{', '.join(item['shadowed'])} (paths from the design's folder)")


def cmd_check(args) -> int:
    from .checks import exit_status
    from .progress import progress_for
    bar = progress_for("samples") if args.samples is not None else None
    try:
        results, paths, checks = run_check(args.design, args.parts, args.policy, args.out,
                                           bom=args.bom, swaps=args.swap,
                                           samples=args.samples, seed=args.seed,
                                           progress=bar)
    finally:
        if bar is not None:
            bar.close()
    print(f"{results['design']}: {len(results['checks'])} checks over "
          f"{len(results['corners'])} corners, policy '{results['policy']}'")
    if "sampling" in results:
        raised = sum(1 for c in results["checks"] if c.get("method") == "monte-carlo")
        print(f"  Monte Carlo: {results['sampling']['samples']} samples, seed "
              f"{results['sampling']['seed']}; {raised} stress(es) raised beyond the "
              "corner worst case")
    print_substitutions(results)
    print(_summary_line(results))
    for line in _policy_lines(results):
        print(line)
    _print_shadowed(results)
    _print_findings(results)
    _print_waived(results)
    print(f"reports (run {results.get('run_id')}): {paths['html']}, {paths['xlsx']}, "
          f"{paths['json']}, {paths['csv']}")
    return exit_status(checks, args.fail_on)


def cmd_policies(args) -> int:
    from .policy import builtin_names, load_policy
    for name in builtin_names():
        p = load_policy(name)
        memory = " [some rules from memory]" if p.from_memory else ""
        print(f"{name}\t{p.title}\t{p.source}{memory}")
    return 0


def cmd_policy(args) -> int:
    from .policy import load_policy
    from .policy_show import show_policy
    print(show_policy(load_policy(args.name)))
    return 0


def cmd_demo(args) -> int:
    from .checks import exit_status
    results, paths, checks = run_check(demo_design(), [], "commercial", args.out)
    print(f"demo design: {results['design']}")
    print(_summary_line(results))
    for line in _policy_lines(results):
        print(line)
    _print_findings(results)
    print(f"open {paths['html']} in a browser; the spreadsheet is {paths['xlsx']}")
    status = exit_status(checks)
    if status == 1:
        print("the demo design fails on purpose (its findings are what the demo shows: "
              "see the Findings section first); `stresscheck check` on this design would "
              "exit with status 1, the demo exits 0")
    else:
        print("`stresscheck check` on this design would exit with status 0")
    return 0 if status == 1 else status  # findings are the point of the demo


def cmd_verify(args) -> int:
    from .verify import verify_design
    return verify_design(args.design, args.parts, args.policy, keep=args.keep,
                         into=args.into)


def describe(exc: InputError) -> str:
    """The message of an InputError, with the line of its key added where the file is
    TOML and the key can be found in it: "<path>, line N, key 'k': message"."""
    line = exc.line
    if line is None and exc.key and exc.path:
        from .tomlio import locate
        try:
            line = locate(exc.path, exc.key)
        except Exception:  # a message helper must never fail
            line = None
    if line is None or line == exc.line:
        return str(exc)
    return str(InputError(exc.path, exc.key, exc.detail, line=line))


def _one_line(text: str) -> str:
    """``text`` with every non-printable character escaped ("\\n", "\\x1b"): a message
    is one line and cannot carry terminal control sequences from an input file."""
    return "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in text)


def main(argv=None) -> int:
    args = _parser().parse_args(argv)
    handlers = {"check": cmd_check, "demo": cmd_demo, "verify": cmd_verify,
                "diff": cmd_diff, "alternates": cmd_alternates, "parts": cmd_parts,
                "policies": cmd_policies, "policy": cmd_policy}
    try:
        return handlers[args.command](args)
    except InputError as exc:
        print(f"stresscheck: error: {_one_line(describe(exc))}", file=sys.stderr)
        return 2
    except SimulationError as exc:
        print(f"stresscheck: simulation error: {_one_line(str(exc))}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("stresscheck: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # output piped into a pager or head that closed early
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return 0
    except Exception as exc:  # last resort: a bug, but never a traceback for a user
        text = _one_line(" ".join(str(exc).split()))[:500]
        print(f"stresscheck: internal error: {type(exc).__name__}: {text} (please report)",
              file=sys.stderr)
        return 3


if __name__ == "__main__":
    sys.exit(main())
