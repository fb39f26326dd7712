"""The demo's report set carries every check with the same numbers in all four files, the
spreadsheet's sheets, filters, frozen panes, conditional formats and print setup, the
sign-off block from the design's [review] table, and pictures drawn only from values the
results carry.

Source: the reports issue (items 1–3 and 5). Numbers compared at the precision each file
stores: results.json and checks.csv in full (the CSV is written with repr, exact), the
spreadsheet to the four significant figures it stores, the HTML to the three significant
figures (0.1 K for temperatures, 0.1 % for ratios) it prints.
"""

from __future__ import annotations

import csv
import html as html_mod
import json
import re

import openpyxl
import pandas as pd
import pytest
import tomli_w

from stresscheck import cli
from stresscheck.report import charts
from stresscheck.report.html import render_html
from stresscheck.report.table import columns
from stresscheck.report.view import format_ratio, format_value
from stresscheck.texts import CAUTIONS
from test_input_errors import run_cli
from test_reports import CONTEXT, make_results

REVIEW = {"revision": "C", "prepared_by": "A. Example", "prepared_date": "2026-11-30",
          "reviewed_by": "B. Sample"}


@pytest.fixture(scope="module")
def demo_set(tmp_path_factory):
    """The shipped demo design with a [review] table, checked into a fresh folder."""
    import tomllib
    folder = tmp_path_factory.mktemp("demo")
    src = cli.demo_design()
    doc = tomllib.loads(src.read_text(encoding="utf-8"))
    doc["review"] = dict(REVIEW)
    design = folder / "design.toml"
    design.write_text(tomli_w.dumps(doc), encoding="utf-8")
    out = folder / "out"
    status, _, err = run_cli(["check", design, "--out", out])
    assert status in (0, 1), err
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    return out, results


def _shown(value, unit, quantity):
    """results value -> the unit the tables show (capacitor life in hours)."""
    if value is None:
        return None
    return value / 3600.0 if quantity == "life" and unit == "s" else value


YEAR = 365.25 * 24 * 3600.0  # [s] Julian year


def _capped_text(check):
    """A life beyond the model's credible range is shown as "> 15 years", never as a
    figure (the 15-year cap: common practice, from memory)."""
    assert check["stress"] == pytest.approx(15 * YEAR)
    return "> 15 years"


def test_csv_has_every_check_with_the_same_numbers(demo_set):
    out, results = demo_set
    with open(out / "checks.csv", encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    frame = pd.read_csv(out / "checks.csv")
    assert len(rows) == len(frame) == len(results["checks"])
    assert list(frame.columns) == [h for _, h in columns(results)]
    for check, row in zip(results["checks"], rows):
        assert (row["ref"], row["quantity"], row["status"]) == (
            check["ref"], check["quantity"], check["status"])
        for key, header in (("stress", "stress [unit]"), ("allowed", "allowed [unit]"),
                            ("rating", "rating [unit]")):
            want = _shown(check[key], check["unit"], check["quantity"])
            if key == "stress" and check.get("capped"):
                assert row[header] == _capped_text(check)
                continue
            assert (row[header] == "" if want is None else float(row[header]) == want)
        assert (row["ratio [stress/allowed]"] == "" if check["ratio"] is None
                else float(row["ratio [stress/allowed]"]) == check["ratio"])
        assert row["run id"] == results["run_id"]


def test_spreadsheet_has_every_check_with_the_same_numbers(demo_set):
    out, results = demo_set
    frame = pd.read_excel(out / "report.xlsx", sheet_name="Checks")
    assert len(frame) == len(results["checks"])
    for check, (_, row) in zip(results["checks"], frame.iterrows()):
        assert (row["ref"], row["quantity"], row["status"]) == (
            check["ref"], check["quantity"], check["status"])
        for key in ("stress", "allowed", "rating"):
            want = _shown(check[key], check["unit"], check["quantity"])
            got = row[f"{key} [unit]"]
            if key == "stress" and check.get("capped"):
                assert got == _capped_text(check)
            elif want is None:
                assert pd.isna(got)
            else:  # stored rounded to four significant figures
                assert got == pytest.approx(want, rel=5e-4, abs=1e-12)
        if check["ratio"] is not None:
            assert row["ratio [stress/allowed]"] == pytest.approx(check["ratio"], abs=5e-5)


def test_html_has_every_check_with_the_same_numbers(demo_set):
    out, results = demo_set
    text = (out / "report.html").read_text(encoding="utf-8")
    table = text[text.index('id="all-checks"'):text.index("</table>", text.index(
        'id="all-checks"'))]
    rows = re.findall(r"<tr data-ref=.*?</tr>", table, re.S)
    assert len(rows) == len(results["checks"])
    for check, row in zip(results["checks"], rows):
        cells = [html_mod.unescape(re.sub(r"<[^>]+>", "", c)).strip()
                 for c in re.findall(r"<t[dh][^>]*>(.*?)</t[dh]>", row, re.S)]
        assert cells[0] == check["ref"]
        assert cells[4] == (_capped_text(check) if check.get("capped") else
                            format_value(check["stress"], check["unit"], check["quantity"]))
        assert cells[5] == format_value(check["allowed"], check["unit"], check["quantity"])
        assert cells[6] == format_ratio(check["ratio"])
        assert cells[7] == check["status"]


def test_spreadsheet_layout_and_print_setup(demo_set):
    out, results = demo_set
    wb = openpyxl.load_workbook(out / "report.xlsx")
    assert wb.sheetnames == ["Summary", "Findings", "Checks", "Matrix", "Corners", "Parts",
                             "Policy", "Inputs", "Assumptions"]
    for ws in wb.worksheets:
        assert ws.page_setup.orientation == "landscape"
        assert ws.page_setup.fitToWidth == 1 and ws.sheet_properties.pageSetUpPr.fitToPage
        assert results["design"][:40] in ws.oddHeader.left.text.replace("&&", "&")
        assert ws.oddHeader.right.text == "revision C"
        assert "&P" in ws.oddFooter.right.text and "&N" in ws.oddFooter.right.text
    for name in ("Findings", "Checks", "Matrix", "Corners", "Parts", "Policy", "Inputs"):
        ws = wb[name]
        assert ws.freeze_panes == "A2" and ws.auto_filter.ref.startswith("A1:")
        assert ws.print_title_rows == "$1:$1"
    checks = wb["Checks"]
    header = [c.value for c in checks[1]]
    assert "margin [unit] (allowed − stress)" in header
    ranges = [str(cf.sqref) for cf in checks.conditional_formatting]
    ratio = openpyxl.utils.get_column_letter(header.index("ratio [stress/allowed]") + 1)
    assert any(r.startswith(f"{ratio}2:") for r in ranges)
    # no raw floats behind a number format: numbers stored at four significant figures
    for row in checks.iter_rows(min_row=2, max_col=header.index("rating [unit]") + 1):
        for cell in row:
            if isinstance(cell.value, float) and cell.value:
                assert float(f"{cell.value:.4g}") == cell.value
    corners = [c.value for c in wb["Corners"][1]]
    assert "C10.capacitance [µF]" in corners and "switching_frequency [kHz]" in corners
    summary = [c.value for row in wb["Summary"].iter_rows() for c in row if c.value]
    assert "A. Example" in summary and "2026-11-30" in summary and CAUTIONS[0] in summary
    assert results["run_id"] in summary
    parts = pd.read_excel(out / "report.xlsx", sheet_name="Parts")
    assert {"nfet-150v-16m-si", "schottky-100v-40a"} <= set(parts["part"])
    inputs = pd.read_excel(out / "report.xlsx", sheet_name="Inputs")
    assert list(inputs["sha256"]) == [i["sha256"] for i in results["inputs"]]


def test_html_header_sign_off_and_sources(demo_set):
    out, results = demo_set
    text = (out / "report.html").read_text(encoding="utf-8")
    signoff = text[text.index('id="signoff"'):text.index("</section>", text.index(
        'id="signoff"'))]
    assert "A. Example" in signoff and "2026-11-30" in signoff and "B. Sample" in signoff
    assert signoff.count('class="blank"') == 3 + 1 + 2  # signatures, reviewed date, approved
    assert "Design revision</dt><dd>C<" in text
    for item in results["inputs"]:
        assert item["sha256"] in text
    # rule sources readable inside: every cited section's text is in the report
    assert "docs/derating-sources.md" not in text.split('id="sources"')[0].split(
        'id="scope"')[1]
    assert 'id="src-derating-sources-2"' in text and "Power MOSFET – silicon" in text
    assert 'href="#src-derating-sources-2"' in text
    # losses left out named in the header
    head = text[:text.index('id="signoff"')]
    for item in results["losses_not_included"]:
        assert item in _visible(head)


def test_sweeps_select_only_corners_differing_in_input_voltage(demo_set):
    """A sweep is a selection: its corners share every corner column except the input
    voltage with the governing corner, and the governing corner's value is the check's
    stress."""
    _, results = demo_set
    corners = {c["id"]: c for c in results["corners"]}
    checks = {(c["ref"], c["quantity"]): c for c in results["checks"]}
    assert results["sweeps"]
    for sweep in results["sweeps"]:
        gov = corners[sweep["corner"]]
        check = checks[(sweep["ref"], sweep["quantity"])]
        assert sweep["input_voltage"] == sorted(sweep["input_voltage"])
        for cid, vin in zip(sweep["corners"], sweep["input_voltage"]):
            corner = corners[cid]
            assert corner["input_voltage"] == vin
            for key in results["corner_keys"]:
                if key != "input_voltage":
                    assert corner[key] == gov[key]
        assert sweep["stress"][sweep["corners"].index(sweep["corner"])] == check["stress"]


def test_pictures_are_deterministic_svg(demo_set):
    _, results = demo_set
    first, second = charts.ratio_bars(results), charts.ratio_bars(json.loads(
        json.dumps(results)))
    assert first == second and first.startswith("<svg")
    group = charts.sweep_groups(results)[0]
    # switches with identical stresses share a picture: with switching losses the
    # diagonal pair Q1/Q4 differs from Q2/Q3 (their commutations differ), so a group holds
    # at least two of the four
    assert len(group["refs"]) >= 2 and set(group["refs"]) <= {"Q1", "Q2", "Q3", "Q4"}
    assert charts.sweep_chart(group, results) == charts.sweep_chart(group, results)


def _visible(text: str) -> str:
    text = re.sub(r"<(style|script)\b.*?</\1>", " ", text, flags=re.S)
    return " ".join(html_mod.unescape(re.sub(r"<[^>]+>", " ", text)).split())


def test_fields_added_elsewhere_are_rendered_when_present():
    """Waivers, measured and simulated values, Monte Carlo, rating needed, policy
    details, losses per ref and regimes appear beside their rows or in their section;
    absent, nothing is said."""
    bare = _visible(render_html(make_results(), CONTEXT))
    for phrase in ("approved by", "Monte Carlo", "a part would need", "measured ",
                   "Conduction regimes", "Losses at each device", "from memory"):
        assert phrase not in bare, phrase
    results = make_results()
    q1, q2 = results["checks"][0], results["checks"][1]
    q1.update(status="waived", waiver={"reason": "surge only at test", "approved_by":
                                       "C. Person", "date": "2026-11-01",
                                       "expires": "2027-11-01"},
              rating_needed=84.0,
              monte_carlo={"samples": 10000, "p50": 70.0, "p95": 74.0, "p99": 75.0,
                           "max": 76.0, "p_exceed": 0.0}, method="monte-carlo")
    q2.update(basis="measured", measured={"value": 41.0, "instrument": "probe 1",
                                          "probe_point": "drain", "date": "2026-10-02",
                                          "mode": "replace"},
              simulated={"value": 40.5, "difference": -0.0123, "tolerance": 0.02})
    results["summary"]["waived"] = 1
    results["policy_details"] = {"name": "commercial", "title": "Commercial baseline",
                                 "version": "2", "source": "shipped pack",
                                 "from_memory": True, "uncovered_kinds": ["resistor"]}
    results["losses"] = {"Q1": {"conduction": 1.25, "switching": 0.5}}
    results["regimes"] = {"CCM": ["c0007"], "DCM": ["c0008"]}
    text = _visible(render_html(results, CONTEXT))
    for phrase in ("surge only at test", "approved by C. Person", "expires 2027-11-01",
                   "a part would need a rating of 84 V", "Monte Carlo (10000 samples)",
                   "measured 41 V", "probe point drain", "simulated 40.5 V",
                   "computed -1.2 % against it (tolerance ±2.0 %)",
                   "Commercial baseline, version 2", "from memory", "resistor",
                   "Conduction regimes", "conduction 1.25 W", "1 waived",
                   "Monte Carlo distributions"):
        assert phrase in text, phrase


def test_part_sheet_paths_and_shadowed_sheets_are_shown():
    """Where results name the sheet used and the sheets it shadowed (the part-sheet
    shadowing item of the robustness issue), both reports show them."""
    import io
    results = make_results()
    results["inputs"].insert(1, {"role": "part", "name": "nfet-100v-12m", "sha256": "ef" * 32,
                                 "path": "parts/nfet-100v-12m.toml",
                                 "shadowed": ["(shipped library)/nfet-100v-12m.toml"]})
    text = _visible(render_html(results, CONTEXT))
    assert "parts/nfet-100v-12m.toml" in text
    assert "shadows (shipped library)/nfet-100v-12m.toml" in text
    from stresscheck.report.xlsx import render_xlsx
    frame = pd.read_excel(io.BytesIO(render_xlsx(results, CONTEXT)), sheet_name="Inputs")
    assert "(shipped library)/nfet-100v-12m.toml" in set(frame["shadowed"].dropna())
