"""The spreadsheet stands alone: rule sources are worded as the HTML report shows them
(``<note> notes §N``, never a ``docs/…`` path of the source repository), and the Policy
sheet holds the text of every note section the rules cite, as the HTML appendix does.

Source: the reports issue (a report set is read without the repository: the notes ship
as package data and the cited sections are reproduced in the report).
"""

from __future__ import annotations

import html as html_mod
import json
import re

import openpyxl
import pytest

from stresscheck import cli
from stresscheck.report import sources
from test_input_errors import run_cli


@pytest.fixture(scope="module")
def demo_workbook(tmp_path_factory):
    out = tmp_path_factory.mktemp("xlsx") / "out"
    status, _, err = run_cli(["check", cli.demo_design(), "--out", out])
    assert status in (0, 1), err
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    return openpyxl.load_workbook(out / "report.xlsx"), results


def _texts(ws) -> list[str]:
    return [str(c.value) for row in ws.iter_rows() for c in row if c.value is not None]


def test_no_repository_path_in_any_sheet(demo_workbook):
    wb, results = demo_workbook
    assert any("docs/" in str(r.get("source")) for r in results["policy_rules"])
    for ws in wb.worksheets:
        leaks = [t for t in _texts(ws) if re.search(r"docs/[A-Za-z0-9_-]+\.md", t)]
        assert leaks == [], (ws.title, leaks[:3])


def test_policy_sheet_sources_worded_as_in_the_html(demo_workbook):
    wb, results = demo_workbook
    ws = wb["Policy"]
    header = [c.value for c in ws[1]]
    col = header.index("source") + 1
    rules = results["policy_rules"]
    shown = [ws.cell(row, col).value for row in range(2, len(rules) + 2)]
    assert shown == [sources.plain_citations(r["source"]) for r in rules]
    # the wording of the HTML links: "derating sources notes §2 §16"
    cited = next(r["source"] for r in rules if "§2 and §16" in r["source"])
    assert "derating sources notes §2 §16" in sources.plain_citations(cited)
    html = sources.link_citations(cited, set())
    assert html_mod.unescape(re.sub(r"<[^>]+>", "", str(html))) == \
        sources.plain_citations(cited)


def test_policy_sheet_holds_the_cited_sections(demo_workbook):
    wb, results = demo_workbook
    texts = _texts(wb["Policy"])
    appendix = sources.appendix(results["policy_rules"])
    assert len(appendix) >= 3
    for entry in appendix:
        assert entry["title"] in texts
        lines = sources.markdown_lines(entry["markdown"])
        assert lines and all(line in texts for line in lines)
    # a real section's text, as the note has it (docs/derating-sources.md §16)
    title, body = sources.sections(sources.note_text("derating-sources"))[16]
    assert f"derating sources notes §16. {title}" in texts
    assert any(len(t) > 40 and t in body.replace("**", "").replace("`", "")
               for t in texts)


def test_markdown_lines():
    text = ("Intro **bold** and `code`\nsecond line\n\n| id | what |\n|---|---|\n"
            "| S1 | a table |\n- first\n- second\n")
    assert sources.markdown_lines(text) == [
        "Intro bold and code second line", "id | what", "S1 | a table", "• first",
        "• second"]
