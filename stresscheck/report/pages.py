"""Pages of the BOM workflows: the comparison of two runs and the ranking of alternates.

Rendering only: the numbers come from ``stresscheck.diff`` and ``stresscheck.alternates``.
Every page carries the cautions, like the main report.
"""

from __future__ import annotations

import io
from pathlib import Path

from ..errors import InputError
from ..fsio import write_atomic
from ..texts import CAUTIONS
from .html import MARKER, _environment


def _pct(value) -> str:
    return "—" if value is None else f"{100 * value:.1f} %"


def render_diff_html(cmp) -> str:
    template = _environment().get_template("diff.html.j2")
    return template.render(cmp=cmp, cautions=CAUTIONS, pct=_pct)


def render_diff_xlsx(cmp) -> bytes:
    """The comparison as a workbook: one sheet of changes, one of cautions."""
    from openpyxl import Workbook

    from .xlsx import put

    wb = Workbook()
    ws = wb.active
    ws.title = "Changes"
    header = ["change", "ref", "quantity", "status before", "status after",
              "ratio before [%]", "ratio after [%]", "ratio change [%]", "part before",
              "part after", "worse"]
    for col, name in enumerate(header, 1):
        put(ws, 1, col, name)
    row = 2
    for label, changes in (("status", cmp.status_changes), ("ratio", cmp.ratio_changes)):
        for c in changes:
            values = [label, c.ref, c.quantity, c.status_before, c.status_after,
                      _hundred(c.ratio_before), _hundred(c.ratio_after), _hundred(c.delta),
                      c.part_before, c.part_after, "yes" if c.worse else "no"]
            for col, value in enumerate(values, 1):
                put(ws, row, col, value)
            row += 1
    ws.freeze_panes = "A2"
    ws.auto_filter.ref = f"A1:K{max(row - 1, 1)}"
    about = wb.create_sheet("About")
    lines = [f"old: {cmp.old} ({cmp.design_old})", f"new: {cmp.new} ({cmp.design_new})",
             f"threshold: {100 * cmp.threshold:g} % of allowed",
             "refs only in new: " + (", ".join(cmp.refs_added) or "none"),
             "refs only in old: " + (", ".join(cmp.refs_removed) or "none"), "",
             "Cautions:", *CAUTIONS]
    for i, text in enumerate(lines, 1):
        put(about, i, 1, text)
    raw = io.BytesIO()
    wb.save(raw)
    return raw.getvalue()


def _hundred(x):
    return None if x is None else round(100 * x, 3)


def render_alternates_html(report: dict) -> str:
    template = _environment().get_template("alternates.html.j2")
    for a in report["alternates"]:
        a.setdefault("needed_text", "; ".join(
            f"{n['quantity']} ≥ {n['rating_needed']:.4g} {n['unit'] or ''}".strip()
            for n in a.get("needed", ())) or "—")
    return template.render(**report, cautions=CAUTIONS, pct=_pct)


def write_pages(out_dir, files: dict[str, bytes]) -> dict[str, Path]:
    """Write ``files`` (name -> bytes) into ``out_dir``, each atomically.

    A file in the way that is not one of ours (our HTML marker, or our own JSON/XLSX names
    in a folder that already holds our HTML) is never replaced.
    """
    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise InputError(out_dir, None, "the output path is a file, not a folder; choose "
                         "another --out")
    paths = {name: out_dir / name for name in files}
    for name, path in paths.items():
        if path.is_symlink() or (path.exists() and not path.is_file()):
            raise InputError(out_dir, None, f"'{name}' exists and is not a regular file; "
                             "refusing to replace it")
        if path.exists() and name.endswith(".html"):
            head = path.read_bytes()[:65536]
            if MARKER.encode("ascii") not in head:
                raise InputError(out_dir, None, f"'{name}' exists and is not a stresscheck "
                                 "page; refusing to overwrite it")
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        for name, data in files.items():
            write_atomic(paths[name], data)
    except OSError as exc:
        raise InputError(out_dir, None, f"cannot write: {exc.strerror or exc}") from None
    return paths
