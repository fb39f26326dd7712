"""Command handlers of the BOM workflows: substitutions for ``check`` (``--bom``,
``--swap``), ``diff``, ``alternates`` and ``parts check | import`` (CONTRACT.md, "BOM
workflows"). ``cli.py`` parses the options and dispatches here."""

from __future__ import annotations

import math
from pathlib import Path

from .errors import InputError


def substitute(design, parts, bom, swaps):
    """Apply the BOM's parts, then the --swap options; None when neither is given."""
    if bom is None and not swaps:
        return design, None
    from .bom import bom_columns, read_bom
    from .substitution import Substitution, apply, library_for

    subs, record = [], {}
    refs = [r for c in design.components for r in c.refs]
    if bom is not None:
        sheet = read_bom(bom, bom_columns(design.path))
        subs += sheet.substitutions
        from .results import file_sha256
        record["bom"] = {
            "name": Path(bom).name, "sha256": file_sha256(Path(bom)),
            "not_in_design": [r for r in sheet.refs if r not in refs],
            "not_in_bom": [r for r in refs if r not in sheet.refs]}
        subs = [s for s in subs if s.ref in refs]  # listed above, not an error
    for i, text in enumerate(swaps):
        ref, sep, part = str(text).partition("=")
        if not sep or not ref.strip() or not part.strip():
            raise InputError(None, "--swap", f"expected REF=PART, got {text!r}")
        subs.append(Substitution(ref.strip(), part.strip(), "--swap", f"--swap {text}"))
    design, changes = apply(design, subs, library_for(design, parts))
    record["substitutions"] = changes
    return design, record


def print_substitutions(results) -> None:
    bom = results.get("bom")
    if bom:
        print(f"  BOM {bom['name']}: {len(results.get('substitutions') or ())} part(s) "
              "changed")
        if bom["not_in_design"]:
            print("  in the BOM but not in the design: " + ", ".join(bom["not_in_design"]))
        if bom["not_in_bom"]:
            print("  in the design but not in the BOM (design's part kept): "
                  + ", ".join(bom["not_in_bom"]))
    for change in results.get("substitutions") or ():
        print(f"  {change['ref']}: {change['before']} -> {change['after']} "
              f"({change['source']})")


def cmd_diff(args) -> int:
    from .diff import DEFAULT_THRESHOLD, compare, format_text
    threshold = DEFAULT_THRESHOLD if args.threshold is None else args.threshold / 100
    if not math.isfinite(threshold) or threshold < 0:
        raise InputError(None, "--threshold", "must be a percentage of 0 or more")
    cmp = compare(args.old, args.new, threshold)
    for line in format_text(cmp):
        print(line)
    if args.out is not None:
        from .report.pages import render_diff_html, render_diff_xlsx, write_pages
        paths = write_pages(args.out, {"diff.html": render_diff_html(cmp).encode("utf-8"),
                                       "diff.xlsx": render_diff_xlsx(cmp)})
        print("written: " + ", ".join(str(p) for p in paths.values()))
    return 1 if cmp.got_worse else 0


def cmd_alternates(args) -> int:
    import json

    from .alternates import alternates_json, rank_alternates
    from .design import load_design
    from .policy import load_policy
    from .substitution import library_for

    design = load_design(args.design, args.parts)
    policy = load_policy(args.policy)
    report = rank_alternates(design, args.ref, library_for(design, args.parts), policy)
    print(f"{report['design']}: alternates for {report['ref']} ({report['role']}), "
          f"current part {report['current']}, policy '{report['policy']}'")
    print(f"  {'#':>3}  {'part':32s} {'worst ratio':>11s}  {'status':12s} rejected by")
    for i, a in enumerate(report["alternates"], 1):
        ratio = "—" if a["worst_ratio"] is None else f"{100 * a['worst_ratio']:.1f} %"
        why = ", ".join(a["rejected_by"]) or (a["reason"][:60] if a["reason"] else "")
        mark = " *" if a["part"] == report["current"] else ""
        print(f"  {i:>3}  {a['part'] + mark:32s} {ratio:>11s}  {a['status']:12s} {why}")
    if args.out is not None:
        from .report.pages import render_alternates_html, write_pages
        text = json.dumps(alternates_json(report), indent=2, ensure_ascii=False) + "\n"
        paths = write_pages(args.out, {
            "alternates.json": text.encode("utf-8"),
            "alternates.html": render_alternates_html(report).encode("utf-8")})
        print("written: " + ", ".join(str(p) for p in paths.values()))
    return 0


def cmd_parts(args) -> int:
    from . import library_tools
    if args.parts_command == "check":
        return library_tools.check_folder(args.folder)
    return library_tools.import_table(args.table, args.out)
