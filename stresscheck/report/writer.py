"""Write the report set (results.json, report.html, report.xlsx, checks.csv) into an
output folder.

The set is replaced as one: every file is rendered, then every file is written to a
temporary file beside its target and flushed to disk, and only then are the temporary
files renamed into place, one after another. Each file carries the same run id
(`stresscheck.runid`), so a set mixed by a kill between two renames is recognised
(`read_run_ids`, `check_set`). Temporary files a killed run left behind are removed at
the start of the next write. A file that is in the way and is not an earlier stresscheck
report is never overwritten.
"""

from __future__ import annotations

import json
import re
import zipfile
from pathlib import Path

from ..errors import InputError
from ..fsio import commit_atomic, discard, stage_atomic
from ..runid import run_id_of, stamp_run_id
from .html import MARKER, render_html
from .table import render_csv
from .xlsx import RUN_ID_PROPERTY, render_xlsx

RESULTS_SCHEMA = "stresscheck.results/1"
FILES = {"html": "report.html", "xlsx": "report.xlsx", "json": "results.json",
         "csv": "checks.csv"}
# json last: a reader that finds a results.json finds the other files of its run too,
# unless the run was killed during the renames (then the run ids differ).
COMMIT_ORDER = ("csv", "xlsx", "html", "json")
CSV_HEADER_START = "ref,role,part,kind,quantity,"
_RUN_ID_META = re.compile(rb'<meta name="stresscheck-run-id" content="([0-9a-f]*)">')
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


def _is_checks_csv(path: Path) -> bool:
    try:
        with open(path, "rb") as fh:
            head = fh.read(len(CSV_HEADER_START) + 3)
    except OSError:
        return False
    return head.decode("utf-8", "replace").lstrip("\ufeff").startswith(CSV_HEADER_START)


_RECOGNISERS = {"html": _is_report_html, "xlsx": _is_report_xlsx, "json": _is_results_json,
                "csv": _is_checks_csv}


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


def stale_temporaries(out_dir: Path) -> list[Path]:
    """Temporary files of the report set that a killed run left in ``out_dir``
    (``.<report name>.<random>.tmp``, regular files only)."""
    out_dir = Path(out_dir)
    if not out_dir.is_dir():
        return []
    found = []
    for name in FILES.values():
        for path in sorted(out_dir.glob(f".{name}.*.tmp")):
            if path.is_file() and not path.is_symlink():
                found.append(path)
    return found


def write_reports(results: dict, context: dict, out_dir: Path) -> dict[str, Path]:
    """Write the report set: results.json, report.html, report.xlsx and checks.csv.

    Parameters
    ----------
    results
        The results dict from the engine (schema "stresscheck.results/1"); must hold no
        NaN (None stands for not computed). Given without ``run_id``, or with one that
        no longer matches its content, it gets its run id (`stresscheck.runid`).
    context
        Run information passed to the renderers (``date``, ``tool_version``, optional
        ``revision``).
    out_dir
        Output folder; created (with parents) if missing.

    Returns
    -------
    dict of str to Path
        ``{"html": …/report.html, "xlsx": …/report.xlsx, "json": …/results.json,
        "csv": …/checks.csv}``.

    Raises
    ------
    InputError
        If ``out_dir`` is a file or cannot be created, or one of the target files exists
        and is not an earlier stresscheck report, or a file cannot be written.
    """
    out_dir = Path(out_dir)
    targets = _check_targets(out_dir)
    if results.get("run_id") != run_id_of(results):  # absent, or fields added since
        results = stamp_run_id(results)
    # Render everything first: a rendering error must leave the folder as it was.
    payload = {
        "json": results_json(results).encode("utf-8"),
        "html": render_html(results, context).encode("utf-8"),
        "xlsx": render_xlsx(results, context),
        "csv": render_csv(results),
    }
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(out_dir, None, f"cannot create the output folder: "
                         f"{exc.strerror or exc}") from None
    for path in stale_temporaries(out_dir):
        discard(str(path))
    staged: dict[str, str] = {}
    try:
        for key in COMMIT_ORDER:
            staged[key] = stage_atomic(targets[key], payload[key])
    except OSError as exc:
        _discard_all(staged)
        raise InputError(targets[key], None, f"cannot write the report: "
                         f"{exc.strerror or exc}") from None
    except BaseException:
        _discard_all(staged)
        raise
    for key in COMMIT_ORDER:
        try:
            commit_atomic(staged.pop(key), targets[key])
        except OSError as exc:
            _discard_all(staged)
            raise InputError(targets[key], None, f"cannot write the report: "
                             f"{exc.strerror or exc}") from None
        except BaseException:
            _discard_all(staged)
            raise
    return targets


def _discard_all(staged: dict[str, str]) -> None:
    for name in staged.values():
        discard(name)
    staged.clear()


def read_run_ids(out_dir) -> dict[str, str | None]:
    """The run id each file of the report set in ``out_dir`` carries.

    Returns
    -------
    dict of str to str or None
        ``{"json": id, "html": id, "xlsx": id, "csv": id}``; None for a file that is
        missing or carries no run id (a report of an older version).
    """
    out_dir = Path(out_dir)
    ids: dict[str, str | None] = {}
    for key, name in FILES.items():
        path = out_dir / name
        try:
            ids[key] = _READERS[key](path) if path.is_file() else None
        except Exception:  # unreadable: no id
            ids[key] = None
    return ids


def _json_id(path: Path):
    doc = json.loads(path.read_text(encoding="utf-8"))
    return doc.get("run_id") if isinstance(doc, dict) else None


def _html_id(path: Path):
    with open(path, "rb") as fh:
        found = _RUN_ID_META.search(fh.read(_HTML_SNIFF))
    return found.group(1).decode("ascii") if found else None


def _xlsx_id(path: Path):
    from openpyxl import load_workbook
    wb = load_workbook(path, read_only=True)
    try:
        for prop in wb.custom_doc_props.props:
            if prop.name == RUN_ID_PROPERTY:
                return prop.value
    finally:
        wb.close()
    return None


def _csv_id(path: Path):
    import csv
    with open(path, encoding="utf-8", newline="") as fh:
        rows = csv.reader(fh)
        header = next(rows, [])
        first = next(rows, None)
    if "run id" not in header or first is None:
        return None
    return first[header.index("run id")] or None


_READERS = {"json": _json_id, "html": _html_id, "xlsx": _xlsx_id, "csv": _csv_id}


def check_set(out_dir) -> str:
    """The run id of a complete, consistent report set in ``out_dir``.

    Raises
    ------
    InputError
        If a file of the set is missing or the files carry different run ids (a run was
        killed while replacing the set, or a file was copied in from another run).
    """
    ids = read_run_ids(out_dir)
    missing = [FILES[k] for k, v in ids.items() if v is None]
    if missing:
        raise InputError(Path(out_dir), None, "incomplete report set: "
                         f"{', '.join(missing)} missing or without a run id; run "
                         "'stresscheck check' again")
    if len(set(ids.values())) > 1:
        listing = ", ".join(f"{FILES[k]} {v}" for k, v in ids.items())
        raise InputError(Path(out_dir), None, "the reports in this folder come from "
                         f"different runs ({listing}); run 'stresscheck check' again")
    return ids["json"]
