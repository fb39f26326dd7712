"""The design file's [review] table (sign-off block): names, dates and the design
revision carried to results.json ``review`` and printed; a wrong key or value is an input
error naming the key. Source: the reports issue (item 1: "names and dates entered in the
design's [review] table or left as blank lines to sign")."""

from __future__ import annotations

import datetime as _dt
import json

import tomli_w

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from test_input_errors import assert_input_error, run_cli


def _case(tmp_path, review):
    doc = cell_design("buck")
    if review is not None:
        doc["review"] = review
    return write_case(tmp_path / "case", doc, cell_parts())


def test_review_reaches_results_and_reports(tmp_path):
    design = _case(tmp_path, {"revision": "B2", "prepared_by": "A. Example",
                              "prepared_date": _dt.date(2026, 11, 30)})
    status, _, err = run_cli(["check", design, "--out", tmp_path / "out"])
    assert status in (0, 1), err
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    assert results["review"] == {"revision": "B2", "prepared_by": "A. Example",
                                 "prepared_date": "2026-11-30"}
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "Design revision</dt><dd>B2<" in html and "A. Example" in html


def test_without_review_the_sign_off_is_blank_lines(tmp_path):
    design = _case(tmp_path, None)
    assert run_cli(["check", design, "--out", tmp_path / "out"])[0] in (0, 1)
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    assert "review" not in results
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    block = html[html.index('id="signoff"'):]
    block = block[:block.index("</section>")]
    assert block.count('class="blank"') == 9  # name, date and signature of three roles


def test_unknown_review_key_is_refused(tmp_path):
    design = _case(tmp_path, {"reviwed_by": "X"})
    status, _, err = run_cli(["check", design, "--out", tmp_path / "out"])
    assert_input_error(status, err, design, "review.reviwed_by")


def test_review_value_of_the_wrong_type_is_refused(tmp_path):
    design = _case(tmp_path, {"approved_by": 3})
    status, _, err = run_cli(["check", design, "--out", tmp_path / "out"])
    assert_input_error(status, err, design, "review.approved_by", "string")
    design.write_text(tomli_w.dumps({**cell_design("buck"), "review": "yes"}))
    status, _, err = run_cli(["check", design, "--out", tmp_path / "out"])
    assert_input_error(status, err, design, "review")
