"""Tests of the report layer: HTML, spreadsheet, atomic writes and the report writer."""

from __future__ import annotations

import copy
import io
import json
import re
import zipfile
from pathlib import Path

import markupsafe
import openpyxl
import pytest

from stresscheck import fsio
from stresscheck.errors import InputError
from stresscheck.report import writer as writer_mod
from stresscheck.report.html import MARKER, render_html
from stresscheck.runid import stamp_run_id
from stresscheck.report.view import format_ratio, format_value, sort_findings
from stresscheck.texts import CAUTIONS
from stresscheck.report.writer import write_reports
from stresscheck.report.table import BASE_COLUMNS
from stresscheck.report.xlsx import render_xlsx

CONTEXT = {"date": "2026-12-01", "tool_version": "0.1.0"}


def _check(ref, quantity, status, ratio, *, kind="mosfet", role="switch", part="nfet-100v-12m",
           unit="V", corner="c0007", **extra):
    stress = None if ratio is None else 80.0 * ratio
    check = {"ref": ref, "role": role, "part": part, "kind": kind, "quantity": quantity,
             "unit": unit, "stress": stress, "corner": corner, "rating": 100.0,
             "rating_key": "v_ds", "allowed": 80.0 if ratio is not None else None,
             "ratio": ratio, "status": status, "rule": f"{kind}-{quantity}",
             "rule_source": "common practice", "stress_kind": "steady", "basis": "computed",
             "note": ""}
    check.update(extra)
    return check


def make_results() -> dict:
    """A hand-made results dict in the shape the engine produces."""
    checks = [
        _check("Q1", "v_peak", "marginal", 0.9375),
        _check("Q2", "v_peak", "pass", 0.5),
        _check("Q3", "v_peak", "fail", 1.05),
        _check("Q4", "v_peak", "fail", 1.30),
        _check("D1", "t_j", "not-computed", None, kind="diode", role="rectifier",
               part="sch-45v", unit="degC", corner=None, note="no r_th_jc"),
        _check("C1", "i_ripple_rms", "unrated", None, kind="capacitor",
               role="input-capacitor", part="cer-100v", unit="A", rating=None,
               rating_key="i_ripple", rule=None),
        _check("Q5", "v_peak", "marginal", 0.98),
        _check("Q6", "p_loss", "info", None, unit="W", stress=1.5, rule=None),
        _check("L1", "i_peak", "marginal", 0.91, kind="inductor", role="inductor",
               part="ind-8u", unit="A"),
    ]
    summary: dict[str, int] = {}
    for c in checks:
        summary[c["status"]] = summary.get(c["status"], 0) + 1
    return {
        "schema": "stresscheck.results/1",
        "design": "Example 48 V to 12 V stage",
        "policy": "commercial",
        "summary": summary,
        "tool": {"name": "stresscheck", "version": "0.1.0"},
        "converter": {"topology": "full-bridge", "rectifier": "center-tap",
                      "modulation": "pwm"},
        "inputs": [{"role": "design", "name": "design.toml", "sha256": "ab12" * 16},
                   {"role": "policy", "name": "commercial", "sha256": "cd34" * 16}],
        "losses_included": ["MOSFET conduction (R_DS(on) at T_j)"],
        "conventions": ["ratio = stress / allowed"],
        "notes": [{"level": "warning", "text": "Q1: no R_DS(on) temperature coefficient"}],
        "uncovered_quantities": ["mosfet.p_loss"],
        "policy_rules": [{"id": "mosfet-v_peak", "kind": "mosfet", "quantity": "v_peak",
                          "rating": "v_ds", "factor": 0.8, "margin": None, "limit": None,
                          "stress_kinds": None, "technology": None,
                          "source": "common practice"}],
        "corner_keys": ["input_voltage", "output_current", "ambient_temperature"],
        "corner_units": {"input_voltage": "V", "output_current": "A",
                         "ambient_temperature": "degC", "duty": "1"},
        "corners": [{"id": "c0007", "kind": "steady", "input_voltage": 75.0,
                     "output_current": 20.0, "ambient_temperature": 70.0, "duty": 0.21},
                    {"id": "c0008", "kind": "steady", "input_voltage": 36.0,
                     "output_current": 1.0, "ambient_temperature": -40.0, "duty": 0.4}],
        "checks": checks,
    }


def _section(html_text: str, start_id: str, end_id: str) -> str:
    start = html_text.index(f'id="{start_id}"')
    return html_text[start:html_text.index(f'id="{end_id}"', start)]


# ------------------------------------------------------------------------------- HTML

def test_html_escapes_user_text():
    """User text (design name, refs) is escaped, so a design file cannot inject markup.

    Why: the report is opened in a browser by reviewers; autoescaping all template output
    is common practice for HTML built from untrusted text.
    """
    results = make_results()
    results["design"] = "<script>alert(1)</script>"
    results["checks"][2]["ref"] = "<script>alert(1)</script>"
    text = render_html(results, CONTEXT)
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    # the template's own sort-and-filter script is the only one
    assert text.lower().count("<script") == 1
    assert "<script>alert" not in text.lower()
    assert text.lstrip().startswith("<!DOCTYPE html>")
    assert MARKER in text


def test_findings_order():
    """Findings list fail, not-computed, unrated, marginal, each by ratio descending.

    Why: reviewers read non-compliances first, worst margin first (ranked-findings
    practice); pass and info rows are not findings.
    """
    results = make_results()
    expected = ["Q4", "Q3", "D1", "C1", "Q5", "Q1", "L1"]
    assert [c["ref"] for c in sort_findings(results["checks"])] == expected
    findings = _section(render_html(results, CONTEXT), "findings", "checks")
    assert re.findall(r'<th scope="row">(.*?)</th>', findings) == expected
    assert "Q2" not in findings and "Q6" not in findings


def test_html_status_words_units_and_dashes():
    """Status is printed in words, values carry units, None prints as a dash.

    Why: status must not rely on colour alone (prints in greyscale, colour-blind readers);
    None means "not computed" and must never print as 0.
    """
    text = render_html(make_results(), CONTEXT)
    findings = _section(text, "findings", "matrix")
    for word in ("fail", "not-computed", "unrated", "marginal"):
        assert f'<span class="status">{word}</span>' in findings
    assert "93.8 %" in findings and "75 V" in findings and "80 V" in findings
    assert "\u2014" in findings
    assert "70.0 \u00b0C" in text  # corner temperature
    assert 'id="gc-c0007"' in text  # governing corner table, linked from findings


def test_cautions_present_at_top_and_bottom():
    """Every caution appears twice: before the results and again at the end.

    Why: the safety and scope statements must be seen whether a reader starts at the top
    or jumps to the end (common practice for signed engineering reports).
    """
    assert len(CAUTIONS) >= 4
    text = render_html(make_results(), CONTEXT)
    for caution in CAUTIONS:
        assert text.count(str(markupsafe.escape(caution))) == 2
    assert text.index(str(markupsafe.escape(CAUTIONS[0]))) < text.index('id="findings"')


def test_renderers_accept_empty_results():
    """A results dict with no checks, corners or lists renders without error.

    Why: an engine that stops early (or a design with no components yet) still needs a
    report that says so rather than a traceback.
    """
    empty = {"schema": "stresscheck.results/1", "design": None, "checks": [], "corners": []}
    text = render_html(empty, {})
    assert "No findings" in text
    wb = openpyxl.load_workbook(io.BytesIO(render_xlsx(empty, {})))
    assert wb["Checks"].max_row == 1


def test_value_formatting():
    """Engineering notation with units, temperatures in °C, life in hours, ratio in %.

    Why: one reading convention across the report ("percent of allowed").
    """
    assert format_value(73.2, "V") == "73.2 V"
    assert format_value(1.25, "A") == "1.25 A"
    assert format_value(0.0047, "T") == "4.7 mT"
    assert format_value(8e-06, "H") == "8 \u00b5H"
    assert format_value(100000.0, "Hz") == "100 kHz"
    assert format_value(112.43, "degC") == "112.4 \u00b0C"
    assert format_value(3600.0 * 45200, "s", "life") == "45\u202f200 h"
    assert format_value(None, "V") == "\u2014"
    assert format_ratio(0.915) == "91.5 %"
    assert format_ratio(None) == "\u2014"


# ------------------------------------------------------------------------------- xlsx

def _load(data: bytes):
    return openpyxl.load_workbook(io.BytesIO(data))


def test_xlsx_layout():
    """Sheets, frozen bold header, autofilter over the table, ratio as percent, status
    colours as conditional formats on the status text.

    Why: reviewers filter and sort the spreadsheet; the header must stay visible.
    """
    results = make_results()
    wb = _load(render_xlsx(results, CONTEXT))
    assert wb.sheetnames == ["Summary", "Findings", "Checks", "Matrix", "Corners", "Parts",
                             "Policy", "Inputs", "Assumptions"]
    checks = wb["Checks"]
    headers = [c.value for c in checks[1]]
    assert headers == [h for _, h in BASE_COLUMNS] + ["run id"]
    assert checks["A1"].font.bold
    for name in ("Checks", "Findings", "Corners", "Matrix", "Parts", "Policy", "Inputs"):
        assert wb[name].freeze_panes == "A2"
        assert wb[name].auto_filter.ref
    n = len(results["checks"]) + 1
    assert checks.auto_filter.ref == f"A1:T{n}"
    ratio_col = headers.index("ratio [stress/allowed]") + 1
    assert checks.cell(2, ratio_col).number_format == "0.00%"
    assert checks.cell(2, ratio_col).value == pytest.approx(0.9375)
    rules = [r for cf in checks.conditional_formatting for r in cf.rules]
    fills = {r.formula[0].split('"')[1]: r.dxf.fill.fgColor.rgb for r in rules}
    assert fills["marginal"].endswith("FFE0A3") and fills["fail"].endswith("F4B4AE")
    findings = wb["Findings"]
    assert [findings.cell(r, 1).value for r in range(2, findings.max_row + 1)] == \
        ["Q4", "Q3", "D1", "C1", "Q5", "Q1", "L1"]
    corners = wb["Corners"]
    assert corners["A1"].value == "id" and corners.max_row == 3
    inputs = [c.value for row in wb["Inputs"].iter_rows() for c in row if c.value]
    assert "ab12" * 16 in inputs
    summary = [c.value for row in wb["Summary"].iter_rows() for c in row if c.value]
    assert CAUTIONS[0] in summary


def test_xlsx_formula_like_text_is_stored_as_text():
    """Text starting with =, +, -, @ is stored as a string cell, never as a formula.

    Why: CSV/spreadsheet formula injection (OWASP CSV-injection guidance, from memory): a
    part description such as =HYPERLINK(...) must not run when the file is opened.
    """
    results = make_results()
    nasty = ['=HYPERLINK("x")', "+1", "-2", "@SUM(A1:A2)", "\t=1", "=1+1"]
    row = results["checks"][0]
    row["ref"], row["part"], row["note"], row["rule"] = nasty[0], nasty[1], nasty[2], nasty[3]
    results["checks"][1]["rule_source"] = nasty[4]
    results["design"] = nasty[5]
    data = render_xlsx(results, CONTEXT)
    wb = _load(data)
    cells = {c.value: c for ws in wb for r in ws.iter_rows() for c in r
             if isinstance(c.value, str)}
    for text in nasty:
        assert text in cells, text
        assert cells[text].data_type == "s"
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/"):
                assert b"<f>" not in z.read(name) and b"<f " not in z.read(name)


def test_xlsx_is_deterministic():
    """Same input and date give the same bytes; the workbook dates come from the context.

    Why: reports are reproduced from their inputs and compared; a clock-dependent file
    would differ on every run.
    """
    results = make_results()
    first = render_xlsx(results, CONTEXT)
    assert render_xlsx(copy.deepcopy(results), dict(CONTEXT)) == first
    props = _load(first).properties
    assert props.created.date().isoformat() == "2026-12-01"
    assert props.modified.date().isoformat() == "2026-12-01"


# ------------------------------------------------------------------------------- writing

def _tmp_leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


def test_write_atomic_replaces_and_cleans_up(tmp_path, monkeypatch):
    """An interrupted replace leaves the old file intact and no temporary file behind.

    Why: common practice for files others read: write a temp file, fsync, rename.
    """
    target = tmp_path / "results.json"
    fsio.write_text_atomic(target, "old\n")
    assert target.read_text() == "old\n"

    def boom(*args, **kwargs):
        raise OSError("disk full")

    monkeypatch.setattr(fsio.os, "replace", boom)
    with pytest.raises(OSError):
        fsio.write_atomic(target, b"new")
    monkeypatch.undo()
    assert target.read_text() == "old\n"
    assert _tmp_leftovers(tmp_path) == []

    def interrupted(fd):
        raise KeyboardInterrupt

    monkeypatch.setattr(fsio.os, "fsync", interrupted)
    with pytest.raises(KeyboardInterrupt):
        fsio.write_atomic(target, b"new")
    monkeypatch.undo()
    assert target.read_text() == "old\n"
    assert _tmp_leftovers(tmp_path) == []


def test_write_reports_interrupted_keeps_previous_report(tmp_path, monkeypatch):
    """A failure while rendering or replacing leaves the previous report untouched.

    Why: a reviewer may hold the previous report open; a failed run must not leave a
    half-written or mixed set of files.
    """
    out = tmp_path / "out"
    paths = write_reports(make_results(), CONTEXT, out)
    before = {k: p.read_bytes() for k, p in paths.items()}

    def bad_render(results, context):
        raise RuntimeError("renderer failed")

    monkeypatch.setattr(writer_mod, "render_html", bad_render)
    changed = make_results()
    changed["design"] = "changed"
    with pytest.raises(RuntimeError):
        write_reports(changed, CONTEXT, out)
    monkeypatch.undo()
    assert {k: p.read_bytes() for k, p in paths.items()} == before

    def boom(*args, **kwargs):
        raise OSError("disk full")

    monkeypatch.setattr(fsio.os, "replace", boom)
    with pytest.raises(InputError):
        write_reports(changed, CONTEXT, out)
    monkeypatch.undo()
    assert {k: p.read_bytes() for k, p in paths.items()} == before
    assert _tmp_leftovers(out) == []


def test_write_reports_writes_the_set(tmp_path):
    """results.json round-trips (given a run id), the folder is created, and a second run
    may overwrite.

    Why: the contract names the files (checks.csv added by the reports issue); rerunning
    into the same --out is normal.
    """
    out = tmp_path / "a" / "b"
    results = make_results()
    paths = write_reports(results, CONTEXT, out)
    assert {p.name for p in paths.values()} == {"report.html", "report.xlsx", "results.json",
                                                 "checks.csv"}
    text = paths["json"].read_text(encoding="utf-8")
    assert json.loads(text) == stamp_run_id(results) and text.endswith("\n")
    results["design"] = "second run"
    write_reports(results, CONTEXT, out)
    assert json.loads(paths["json"].read_text())["design"] == "second run"
    assert "second run" in paths["html"].read_text(encoding="utf-8")


def test_write_reports_refuses_nan(tmp_path):
    """NaN in results is refused before anything is written.

    Why: NaN is not valid JSON; the engine must use None for "not computed".
    """
    results = make_results()
    results["checks"][0]["stress"] = float("nan")
    with pytest.raises(ValueError):
        write_reports(results, CONTEXT, tmp_path / "out")
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("name, content", [
    ("report.html", b"<html><body>my own notes</body></html>"),
    ("results.json", b'{"schema": "something-else/1"}'),
    ("results.json", b"not json"),
    ("report.xlsx", b"not a zip"),
])
def test_write_reports_refuses_foreign_files(tmp_path, name, content):
    """An existing file that is not a stresscheck report is never overwritten.

    Why: --out may point at a folder holding the user's own files (common practice:
    tools do not clobber files they did not create).
    """
    (tmp_path / name).write_bytes(content)
    with pytest.raises(InputError, match="not a stresscheck report"):
        write_reports(make_results(), CONTEXT, tmp_path)
    assert (tmp_path / name).read_bytes() == content
    others = {"report.html", "report.xlsx", "results.json"} - {name}
    assert not any((tmp_path / n).exists() for n in others)


def test_write_reports_refuses_foreign_xlsx(tmp_path):
    """A real workbook without a "Checks" sheet is not taken for a report.

    Why: the user's own spreadsheet named report.xlsx must survive.
    """
    wb = openpyxl.Workbook()
    wb.active.title = "Budget"
    wb.save(tmp_path / "report.xlsx")
    before = (tmp_path / "report.xlsx").read_bytes()
    with pytest.raises(InputError):
        write_reports(make_results(), CONTEXT, tmp_path)
    assert (tmp_path / "report.xlsx").read_bytes() == before


def test_write_reports_refuses_file_as_out_dir(tmp_path):
    """An output path that is a file is an input error, not a traceback.

    Why: the CLI maps InputError to exit status 2 with a message naming the path.
    """
    target = tmp_path / "out"
    target.write_text("a file")
    with pytest.raises(InputError) as info:
        write_reports(make_results(), CONTEXT, target)
    assert info.value.path == str(target)
    assert target.read_text() == "a file"
