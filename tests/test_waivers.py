"""Waivers in the design (CONTRACT.md, "Extensions": [[waivers]]) and --fail-on marginal.

The flyback example's output diode D1 runs at a junction temperature of about 89 degC at
its hottest corner: above the SD-18 quality level 2, normal environment limit of 85 degC
(Table 1A, power rectifier) and within, but close to, the RAC severe limit of 95 degC.
"""

import datetime as dt
import json
import shutil
from pathlib import Path

import openpyxl
import pytest

from stresscheck import cli
from test_input_errors import run_cli

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "examples" / "flyback-48v-12v"
WAIVER = '''
[[waivers]]
ref = "D1"
quantity = "t_j"
reason = "junction measured 78 degC on the prototype at full load and 60 degC ambient"
approved_by = "R. Reviewer"
date = 2026-11-02
{extra}
'''


def design(tmp_path, waivers=""):
    text = (EXAMPLE / "design.toml").read_text(encoding="utf-8") + waivers
    path = tmp_path / "design.toml"
    path.write_text(text, encoding="utf-8")
    return path


def args(path, out, policy, *extra):
    return ["check", path, "--parts", EXAMPLE / "parts", "--policy", policy, "--out", out,
            *extra]


@pytest.fixture(autouse=True)
def run_date(monkeypatch):
    """The run date waivers expire against, injected (CLI uses cli._today)."""
    monkeypatch.setattr(cli, "_today", lambda: dt.date(2026, 12, 4))


def load(out):
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


def d1_tj(results):
    return next(c for c in results["checks"] if c["ref"] == "D1" and c["quantity"] == "t_j")


def test_waived_check_keeps_its_numbers_and_no_longer_fails(tmp_path):
    plain = tmp_path / "plain"
    status, _, _ = run_cli(args(design(tmp_path), plain, "sd-18-ql2-normal"))
    before = d1_tj(load(plain))
    assert status == 1 and before["status"] == "fail"

    waived = tmp_path / "waived"
    path = design(tmp_path, WAIVER.format(extra='expires = "2027-06-30"'))
    status, out, _ = run_cli(args(path, waived, "sd-18-ql2-normal"))
    results = load(waived)
    after = d1_tj(results)
    assert status == 0
    assert after["status"] == "waived" and after["waived_status"] == "fail"
    for key in ("stress", "allowed", "ratio", "corner", "rating_needed"):
        assert after[key] == before[key]
    assert after["waiver"] == {"reason": "junction measured 78 degC on the prototype at "
                               "full load and 60 degC ambient", "approved_by": "R. Reviewer",
                               "date": "2026-11-02", "expires": "2027-06-30"}
    assert results["summary"]["waived"] == 1 and results["summary"]["fail"] == 0
    # every output shows the waiver beside the row
    assert "WAIVED" in out and "R. Reviewer" in out and "2027-06-30" in out
    html = (waived / "report.html").read_text(encoding="utf-8")
    assert "junction measured 78" in html and "R. Reviewer" in html
    book = openpyxl.load_workbook(waived / "report.xlsx")
    cells = [str(c.value) for s in book.worksheets for r in s.iter_rows() for c in r
             if c.value is not None]
    assert any("junction measured 78" in c and "R. Reviewer" in c for c in cells)


@pytest.mark.parametrize("extra,key,fragment", [
    ('expires = 2026-12-01', "waivers[0].expires", "expired on 2026-12-01"),
    ('expires = 2026-10-01', "waivers[0].expires", "before it was approved"),
])
def test_expired_waiver_is_an_error(tmp_path, extra, key, fragment):
    path = design(tmp_path, WAIVER.format(extra=extra))
    status, _, err = run_cli(args(path, tmp_path / "o", "sd-18-ql2-normal"))
    assert status == 2 and f"key '{key}'" in err and fragment in err
    assert "waivers[0]" in err


def test_waiver_expiring_on_the_run_date_still_holds(tmp_path):
    path = design(tmp_path, WAIVER.format(extra="expires = 2026-12-04"))
    status, _, _ = run_cli(args(path, tmp_path / "o", "sd-18-ql2-normal"))
    assert status == 0


def test_run_date_is_injectable_in_run_check(tmp_path):
    path = design(tmp_path, WAIVER.format(extra="expires = 2026-12-31"))
    cli.run_check(path, [EXAMPLE / "parts"], "sd-18-ql2-normal", tmp_path / "a",
                  date="2026-12-31")
    with pytest.raises(Exception) as exc:
        cli.run_check(path, [EXAMPLE / "parts"], "sd-18-ql2-normal", tmp_path / "b",
                      date="2027-01-01")
    assert "waivers[0]" in str(exc.value) and "expired" in str(exc.value)


@pytest.mark.parametrize("replace,key,fragment", [
    (('ref = "D1"', 'ref = "D9"'), "waivers[0].ref", "not in the design"),
    (('quantity = "t_j"', 'quantity = "b_peak"'), "waivers[0].quantity", "does not have"),
    (('ref = "D1"\nquantity = "t_j"', 'ref = "C2"\nquantity = "life"'),
     "waivers[0].quantity", "no life row"),
    (('approved_by = "R. Reviewer"\n', ''), "waivers[0].approved_by", "who approved"),
    (('date = 2026-11-02', 'date = "yesterday"'), "waivers[0].date", "expected a date"),
])
def test_waiver_naming_what_does_not_exist_is_an_error(tmp_path, replace, key, fragment):
    text = WAIVER.format(extra="").replace(*replace)
    status, _, err = run_cli(args(design(tmp_path, text), tmp_path / "o",
                                  "sd-18-ql2-normal"))
    assert status == 2 and f"key '{key}'" in err and fragment in err, err


def test_duplicate_waiver_is_an_error(tmp_path):
    text = WAIVER.format(extra="") * 2
    status, _, err = run_cli(args(design(tmp_path, text), tmp_path / "o", "commercial"))
    assert status == 2 and "waivers[1]" in err and "repeats waivers[0]" in err


def test_waiver_on_a_passing_row_changes_nothing(tmp_path):
    path = design(tmp_path, WAIVER.format(extra=""))
    status, _, _ = run_cli(args(path, tmp_path / "o", "commercial"))
    row = d1_tj(load(tmp_path / "o"))
    assert status == 0 and row["status"] == "pass" and row["waiver"]["approved_by"]
    assert "waiver not needed" in row["note"]


def test_fail_on_marginal(tmp_path):
    """RAC severe: D1's junction is marginal (ratio above 0.9, below 1)."""
    path = design(tmp_path)
    status, _, _ = run_cli(args(path, tmp_path / "a", "rac-severe"))
    assert status == 0 and d1_tj(load(tmp_path / "a"))["status"] == "marginal"
    status, _, _ = run_cli(args(path, tmp_path / "b", "rac-severe", "--fail-on", "marginal"))
    assert status == 1
    waived = design(tmp_path, WAIVER.format(extra=""))
    status, _, _ = run_cli(args(waived, tmp_path / "c", "rac-severe", "--fail-on",
                                "marginal"))
    assert status == 0 and d1_tj(load(tmp_path / "c"))["status"] == "waived"
    status, _, err = run_cli(args(path, tmp_path / "d", "rac-severe", "--fail-on", "x"))
    assert status == 2 and "invalid choice" in err
