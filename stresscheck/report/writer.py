"""Write report.html, report.xlsx and results.json into an output folder.

All three are rendered before any is written, and each is written atomically. A file that
is in the way and is not an earlier stresscheck report is never overwritten.
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

from ..errors import InputError
from ..fsio import write_atomic
from .html import MARKER, render_html
from .xlsx import render_xlsx

RESULTS_SCHEMA = "stresscheck.results/1"
FILES = {"html": "report.html", "xlsx": "report.xlsx", "json": "results.json"}
_HTML_SNIFF = 64 * 1024  # the marker sits in the first lines of our reports


def results_json(results: dict) -> str:
    """results.json text: indented UTF-8 JSON, NaN and infinity refused.

    Raises
    ------
    ValueError
        If ``results`` holds NaN or infinity (the engine uses None for "not computed").
    """
    return json.dumps(results, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _is_results_json(path: Path) -> bool:
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    schema = doc.get("schema") if isinstance(doc, dict) else None
    # Same family, any version: a newer stresscheck's file is still ours to replace.
    return isinstance(schema, str) and (schema == RESULTS_SCHEMA
                                        or schema.startswith("stresscheck.results/"))


def _is_report_html(path: Path) -> bool:
    try:
        with open(path, "rb") as fh:
            head = fh.read(_HTML_SNIFF)
    except OSError:
        return False
    return MARKER.encode("ascii") in head


def _is_report_xlsx(path: Path) -> bool:
    if not zipfile.is_zipfile(path):
        return False
    try:
        from openpyxl import load_workbook
        wb = load_workbook(path, read_only=True)
        try:
            return "Checks" in wb.sheetnames
        finally:
            wb.close()
    except Exception:  # anything openpyxl cannot open is not one of ours
        return False


_RECOGNISERS = {"html": _is_report_html, "xlsx": _is_report_xlsx, "json": _is_results_json}


def check_output(out_dir) -> dict[str, Path]:
    """Refuse an output folder whose report files may not be replaced (see
    `write_reports`), before any work is done; returns the target paths."""
    return _check_targets(Path(out_dir))


def _check_targets(out_dir: Path) -> dict[str, Path]:
    if out_dir.exists() and not out_dir.is_dir():
        raise InputError(out_dir, None, "the output path is a file, not a folder; "
                         "choose another --out")
    targets = {key: out_dir / name for key, name in FILES.items()}
    for key, path in targets.items():
        if path.is_dir():
            raise InputError(out_dir, None, f"'{path.name}' is a folder; refusing to "
                             "replace it with a report")
        if path.exists() and not path.is_file():
            raise InputError(out_dir, None, f"'{path.name}' exists and is not a regular "
                             "file; refusing to replace it with a report")
        if path.exists() and not _RECOGNISERS[key](path):
            raise InputError(out_dir, None, f"'{path.name}' exists and is not a "
                             "stresscheck report; refusing to overwrite it (move it away "
                             "or choose another --out)")
    return targets


def write_reports(results: dict, context: dict, out_dir: Path) -> dict[str, Path]:
    """Write the HTML, spreadsheet and JSON reports.

    Parameters
    ----------
    results
        The results dict from the engine (schema "stresscheck.results/1"); must hold no
        NaN (None stands for not computed).
    context
        Run information passed to the renderers (``date``, ``tool_version``, optional
        ``revision``).
    out_dir
        Output folder; created (with parents) if missing.

    Returns
    -------
    dict of str to Path
        ``{"html": .../report.html, "xlsx": .../report.xlsx, "json": .../results.json}``.

    Raises
    ------
    InputError
        If ``out_dir`` is a file or cannot be created, or one of the target files exists
        and is not an earlier stresscheck report, or a file cannot be written.
    """
    out_dir = Path(out_dir)
    targets = _check_targets(out_dir)
    # Render everything first: a rendering error must leave the folder as it was.
    payload = {
        "json": results_json(results).encode("utf-8"),
        "html": render_html(results, context).encode("utf-8"),
        "xlsx": render_xlsx(results, context),
    }
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(out_dir, None, f"cannot create the output folder: "
                         f"{exc.strerror or exc}") from None
    for key in ("json", "xlsx", "html"):
        try:
            write_atomic(targets[key], payload[key])
        except OSError as exc:
            raise InputError(targets[key], None, f"cannot write the report: "
                             f"{exc.strerror or exc}") from None
    return targets
