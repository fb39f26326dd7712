"""Nothing is lost and reports are safe to open.

- Inputs are never written; an output that is an input file, or a foreign file in the
  way, is refused (exit 2) before anything is written.
- Reports are written to a temporary file and renamed: an interrupted run leaves each
  report either complete-old or complete-new, and no temporary files.
- The HTML report escapes all user text; the spreadsheet stores formula-like text as
  text; a part reference can never leave its library folder.
- An unexpected exception is a one-line "internal error" with exit 3, never a traceback.
"""

from __future__ import annotations

import datetime as _dt
import errno
import hashlib
import html.parser
import json
import os
import zipfile
from pathlib import Path

import openpyxl
import pytest
import tomli_w
from hypothesis import given, settings
from hypothesis import strategies as st

from stresscheck import cli, fsio
from stresscheck.parts import valid_part_id
from test_input_errors import (assert_input_error, commercial_policy, rich_design,
                               rich_parts, run_cli, write_inputs)

DATE = "2026-03-14"
REPORTS = ("report.html", "report.xlsx", "results.json", "checks.csv")


def digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def snapshot(folder: Path) -> dict:
    """{relative path: sha256} of every file under ``folder``."""
    return {str(p.relative_to(folder)): digest(p)
            for p in sorted(folder.rglob("*")) if p.is_file()}


# --------------------------------------------------------------------------- inputs

@pytest.mark.parametrize("scenario", ["ok", "bad-input", "refused-output"])
def test_inputs_are_never_modified(tmp_path, scenario):
    """The design, every part sheet and the policy have the same bytes after a run, be it
    successful, refused for a bad input or refused for its output folder.

    Source: the robustness issue (item 3: "inputs are never written").
    """
    design = rich_design()
    if scenario == "bad-input":
        design["operating"]["output_voltage"] = "12 uF"
    inputs = write_inputs(tmp_path, design)
    if scenario == "refused-output":
        inputs.out.mkdir()
        (inputs.out / "results.json").write_text("my own data\n")
    before = {p: digest(p) for p in inputs.all_files()}
    status, _, err = run_cli(inputs.args())
    assert status == (2 if scenario != "ok" else status), err
    assert {p: digest(p) for p in inputs.all_files()} == before


@pytest.mark.parametrize("which", ["design", "policy", "part"])
def test_output_folder_that_is_an_input_is_refused(tmp_path, which):
    """--out naming an input file (design, policy or a part sheet) exits 2 and leaves the
    file as it was.

    Source: the robustness issue (item 3: "an output path that is an input ... is
    refused").
    """
    inputs = write_inputs(tmp_path)
    target = {"design": inputs.design, "policy": inputs.policy,
              "part": inputs.parts["t-xfmr"]}[which]
    before = snapshot(tmp_path)
    args = inputs.args()
    args[args.index("--out") + 1] = str(target)
    status, _, err = run_cli(args)
    assert_input_error(status, err, target, None)
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize("link", ["symlink", "hardlink"])
@pytest.mark.parametrize("name", REPORTS)
def test_report_name_linked_to_an_input_is_refused(tmp_path, link, name):
    """A report file name in the output folder that is a (symbolic or hard) link to an
    input file is refused with exit 2; the input keeps its bytes.

    Source: the robustness issue (item 3); common practice (writing through a link
    would overwrite the linked file).
    """
    inputs = write_inputs(tmp_path)
    inputs.out.mkdir()
    victim = inputs.parts["t-fet"]
    if link == "symlink":
        (inputs.out / name).symlink_to(victim)
    else:
        os.link(victim, inputs.out / name)
    before = snapshot(tmp_path)
    status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, inputs.out, None, "input file")
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize("name", REPORTS)
def test_foreign_file_in_the_output_folder_is_left_alone(tmp_path, name):
    """A report.html, report.xlsx or results.json that stresscheck did not write is not
    overwritten: exit 2 and the folder is exactly as it was (no other report written,
    no temporary files).

    Source: the robustness issue (item 3: "an existing non-report file is refused").
    """
    inputs = write_inputs(tmp_path)
    inputs.out.mkdir()
    (inputs.out / name).write_bytes(b"someone else's file\n")
    (inputs.out / "notes.txt").write_text("keep me\n")
    before = snapshot(inputs.out)
    status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, inputs.out, None, name, "not a stresscheck report")
    assert snapshot(inputs.out) == before


def test_output_path_that_is_a_file_is_refused(tmp_path):
    """--out naming an existing file that is not a folder exits 2; the file is kept.

    Source: the robustness issue (item 3).
    """
    inputs = write_inputs(tmp_path)
    target = tmp_path / "summary.txt"
    target.write_text("important\n")
    args = inputs.args()
    args[args.index("--out") + 1] = str(target)
    status, _, err = run_cli(args)
    assert_input_error(status, err, target, None, "not a folder")
    assert target.read_text() == "important\n"


def test_earlier_reports_are_replaced_cleanly(tmp_path):
    """A second run into the same folder replaces the earlier reports and leaves no
    temporary files behind.

    Source: the robustness issue (item 3: "written to a temporary file and renamed").
    """
    inputs = write_inputs(tmp_path)
    first, _, _ = run_cli(inputs.args())
    second, _, err = run_cli(inputs.args())
    assert first in (0, 1) and second == first, err
    assert sorted(p.name for p in inputs.out.iterdir()) == sorted(REPORTS)


def _reports(folder: Path) -> dict:
    return {name: (folder / name).read_bytes() for name in REPORTS}


def _assert_complete(folder: Path) -> None:
    json.loads((folder / "results.json").read_text(encoding="utf-8"))
    assert (folder / "report.html").read_text(encoding="utf-8").rstrip().endswith("</html>")
    openpyxl.load_workbook(folder / "report.xlsx").close()


class _FixedDate:
    """Stands in for the datetime module in cli: today is DATE."""

    class date:
        @staticmethod
        def today():
            return _dt.date.fromisoformat(DATE)


@pytest.mark.parametrize("fail_at", [1, 2, 3, 4])
@pytest.mark.parametrize("error", ["interrupt", "disk-full"])
def test_interrupted_write_loses_nothing(tmp_path, monkeypatch, fail_at, error):
    """A run interrupted while its reports are written (Ctrl-C at the n-th rename, or a
    full disk at the n-th file written) leaves every report complete, each either the
    earlier or the new version, no temporary files, and the inputs unchanged. Every file
    is written to disk before the first rename, so a full disk leaves the earlier set
    whole. Ctrl-C exits 130, a full disk 2 with a message naming the file.

    Source: the robustness issue (items 3 and 6); an atomic rename within one file
    system (common practice for safe file replacement).
    """
    monkeypatch.setattr(cli, "_dt", _FixedDate)
    inputs = write_inputs(tmp_path)
    assert run_cli(inputs.args())[0] in (0, 1)
    old = _reports(inputs.out)

    changed = rich_design()
    changed["converter"]["name"] = "second revision"
    inputs.design.write_text(tomli_w.dumps(changed), encoding="utf-8")
    expected = write_inputs(tmp_path / "expected", changed)
    assert run_cli(expected.args())[0] in (0, 1)
    new = _reports(expected.out)
    assert all(old[name] != new[name] for name in REPORTS)
    before = {p: digest(p) for p in inputs.all_files()}

    calls = {"n": 0}
    real_replace, real_fsync = os.replace, os.fsync

    def failing_replace(src, dst):
        if Path(dst).parent == inputs.out:
            calls["n"] += 1
            if calls["n"] == fail_at:
                raise KeyboardInterrupt
        return real_replace(src, dst)

    def failing_fsync(fd):
        calls["n"] += 1
        if calls["n"] == fail_at:
            raise OSError(errno.ENOSPC, "No space left on device")
        return real_fsync(fd)

    with monkeypatch.context() as patch:
        if error == "interrupt":
            patch.setattr(fsio.os, "replace", failing_replace)
        else:
            patch.setattr(fsio.os, "fsync", failing_fsync)
            patch.setattr(fsio, "_fsync_dir", lambda folder: None)
        status, _, err = run_cli(inputs.args())

    if error == "interrupt":
        assert status == 130
    else:
        assert_input_error(status, err, inputs.out, None, "No space left")
    assert sorted(p.name for p in inputs.out.iterdir()) == sorted(REPORTS), \
        "temporary files left behind"
    _assert_complete(inputs.out)
    now = _reports(inputs.out)
    written = [name for name in REPORTS if now[name] == new[name]]
    kept = [name for name in REPORTS if now[name] == old[name]]
    assert sorted(written + kept) == sorted(REPORTS)
    if error == "interrupt":
        assert len(written) == fail_at - 1  # the files renamed before the failing one
    else:
        assert written == []  # nothing is renamed before every file is on disk
    assert {p: digest(p) for p in inputs.all_files()} == before


# --------------------------------------------------------------------------- reports

HOSTILE_NAME = "<script>alert('name')</script>"
HOSTILE_REF = "<b>Q1</b>"
HOSTILE_POLICY = "<img src=x onerror=alert(1)>"
HOSTILE_SOURCE = "<iframe src=javascript:alert(2)></iframe> & \"quoted\""


class _Tags(html.parser.HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.event_attributes, self.text = set(), [], []

    def handle_starttag(self, tag, attrs):
        self.tags.add(tag)
        self.event_attributes += [a for a, _ in attrs if a.lower().startswith("on")]

    def handle_data(self, data):
        self.text.append(data)


def test_html_report_escapes_text_from_inputs(tmp_path):
    """Markup in a design name, a designator, a policy name and a rule source appears in
    report.html as text: no script, img or iframe element and no event attribute.

    Source: OWASP XSS prevention guidance (encode untrusted data for the HTML context)
    — from memory; jinja2 autoescaping.
    """
    design = rich_design()
    design["converter"]["name"] = HOSTILE_NAME
    design["components"][0]["refs"] = [HOSTILE_REF, "Q2", "Q3", "Q4"]
    policy = commercial_policy()
    policy["name"] = HOSTILE_POLICY
    policy["rules"][0]["source"] = HOSTILE_SOURCE
    inputs = write_inputs(tmp_path, design, policy=policy)
    status, _, err = run_cli(inputs.args())
    assert status in (0, 1), err
    text = (inputs.out / "report.html").read_text(encoding="utf-8")
    parser = _Tags()
    parser.feed(text)
    assert not parser.tags & {"img", "iframe", "b"}
    # one script: the report's own sort-and-filter script, none from the inputs
    assert text.count("<script") == 1 and "<script>\n/* Sort and filter" in text
    assert parser.event_attributes == []
    shown = "".join(parser.text)
    for hostile in (HOSTILE_NAME, HOSTILE_REF, HOSTILE_POLICY, HOSTILE_SOURCE):
        assert hostile in shown, hostile  # shown as text, not dropped


FORMULA_TEXT = {
    "name": "=HYPERLINK(\"http://example.invalid\",\"open\")",
    "refs": ["=1+1", "+Q2", "-Q3", "@Q4"],
    "policy": "=cmd|'/C calc'!A0",
    "source": "@SUM(A1:A9)",
}


def test_xlsx_report_stores_formula_like_text_as_text(tmp_path):
    """User text starting with =, +, - or @ is stored in report.xlsx as a text cell with
    the quote prefix, never as a formula: the workbook holds no formula at all.

    Source: OWASP "CSV injection" (formula injection) guidance — from memory; the
    issue's item 4.
    """
    design = rich_design()
    design["converter"]["name"] = FORMULA_TEXT["name"]
    design["components"][0]["refs"] = list(FORMULA_TEXT["refs"])
    policy = commercial_policy()
    policy["name"] = FORMULA_TEXT["policy"]
    policy["rules"][0]["source"] = FORMULA_TEXT["source"]
    inputs = write_inputs(tmp_path, design, policy=policy)
    status, _, err = run_cli(inputs.args())
    assert status in (0, 1), err
    path = inputs.out / "report.xlsx"
    with zipfile.ZipFile(path) as archive:
        for name in archive.namelist():
            if name.startswith("xl/worksheets/"):
                assert b"<f>" not in archive.read(name) and b"<f " not in archive.read(name)
    wb = openpyxl.load_workbook(path)
    seen = set()
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if isinstance(cell.value, str) and cell.value[:1] in "=+-@":
                    assert cell.data_type == "s", (ws.title, cell.coordinate, cell.value)
                    assert cell.quotePrefix, (ws.title, cell.coordinate, cell.value)
                    seen.add(cell.value)
    expected = {FORMULA_TEXT["name"], FORMULA_TEXT["policy"], FORMULA_TEXT["source"],
                *FORMULA_TEXT["refs"]}
    assert expected <= seen


@pytest.mark.parametrize("ref", ["../outside/t-evil", "/abs/t-evil", "..\\outside\\t-evil",
                                 "outside/t-evil", "..", "C:t-evil", "~t-evil"])
def test_part_reference_cannot_leave_the_library(tmp_path, ref):
    """A part reference with a path in it is refused (exit 2, naming the design and the
    key) even where the file it points at exists and is a valid part sheet.

    Source: the robustness issue (item 4: part ids restricted to a safe pattern);
    OWASP path traversal guidance — from memory.
    """
    evil = rich_parts()["t-fet"]
    (tmp_path / "outside").mkdir()
    (tmp_path / "outside" / "t-evil.toml").write_text(
        tomli_w.dumps(dict(evil, id="t-evil")), encoding="utf-8")
    design = rich_design()
    design["components"][0]["part"] = ref
    inputs = write_inputs(tmp_path / "case", design)
    status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, inputs.design, "components[0].part", "invalid part id")


@settings(max_examples=300, deadline=None)
@given(part_id=st.one_of(st.text(max_size=90),
                         st.from_regex(r"[A-Za-z0-9._/\\-]{1,20}", fullmatch=True)))
def test_accepted_part_ids_stay_inside_the_folder(part_id):
    """Every string accepted as a part id names a file directly inside the library
    folder: no separator, no '..', no absolute path, no hidden file.

    Source: the robustness issue (item 4).
    """
    if not valid_part_id(part_id):
        return
    folder = Path("/library/parts")
    candidate = folder / f"{part_id}.toml"
    assert candidate.parent == folder
    assert os.path.normpath(candidate) == str(candidate)
    assert not part_id.startswith(".") and "/" not in part_id and "\\" not in part_id


# --------------------------------------------------------------------------- last resort

def test_unexpected_exception_is_one_line_exit_3(tmp_path, monkeypatch):
    """A bug (any exception that is not an input error) prints one line
    "stresscheck: internal error: <type>: <message> (please report)" and exits 3,
    without a traceback.

    Source: the issue (last-resort handler); common practice for command-line tools.
    """
    import stresscheck.engine

    def broken(design):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(stresscheck.engine, "run", broken)
    inputs = write_inputs(tmp_path)
    status, _, err = run_cli(inputs.args())
    assert status == 3
    assert err == ("stresscheck: internal error: ZeroDivisionError: float division by "
                   "zero (please report)\n")
    assert not inputs.out.exists()


def test_non_finite_result_is_an_input_error(tmp_path, monkeypatch):
    """Should a computed stress overflow to infinity or NaN, the run exits 2 naming the
    design (not an internal error from the JSON writer) and writes no report.

    Source: the robustness issue (item 1: never a traceback); results.json refuses NaN.
    """
    import stresscheck.results
    real = stresscheck.results.build_results

    def overflowing(evaluation, checks, policy):
        results = real(evaluation, checks, policy)
        results["checks"][0]["stress"] = float("inf")
        return results

    monkeypatch.setattr(stresscheck.results, "build_results", overflowing)
    inputs = write_inputs(tmp_path)
    status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, inputs.design, None, "extreme magnitude")
    assert not inputs.out.exists()
