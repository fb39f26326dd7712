"""`stresscheck verify DESIGN --into DIR` adds the simulated values to an existing report
set: the rows compared are marked ``basis = "simulated"`` with ``simulated = {value,
difference, tolerance}`` beside the computed stress, in all four files, under a new run
id.

Source: the reports issue (item 4); the comparison itself is `stresscheck.verify` (its
tolerances: 2 % on voltages, averages and rms values, 4 % on peaks and ripple).
"""

from __future__ import annotations

import csv
import json

import openpyxl
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from spice_support import ngspice  # noqa: F401  (autouse: skips without ngspice)
from stresscheck.report.writer import check_set
from test_input_errors import run_cli


@pytest.fixture(scope="module")
def report_set(tmp_path_factory):
    folder = tmp_path_factory.mktemp("into")
    design = write_case(folder / "case", cell_design(
        "buck", vin={"min": "16 V", "max": "36 V"}, io={"min": "3 A", "max": "3 A"},
        ambient={"min": "25 degC", "max": "25 degC"}), cell_parts())
    out = folder / "out"
    status, _, err = run_cli(["check", design, "--out", out])
    assert status in (0, 1), err
    before = json.loads((out / "results.json").read_text(encoding="utf-8"))
    status, printed, err = run_cli(["verify", design, "--into", out])
    assert status == 0, printed + err
    return design, out, before


def test_simulated_values_reach_every_report(report_set):
    _, out, before = report_set
    after = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert after["run_id"] != before["run_id"] and check_set(out) == after["run_id"]
    simulated = [c for c in after["checks"] if c.get("simulated")]
    assert simulated, "no row was simulated"
    for old, new in zip(before["checks"], after["checks"]):
        assert new["stress"] == old["stress"]  # the computed value stays
        if new.get("simulated"):
            sim = new["simulated"]
            assert new["basis"] == "simulated"
            assert abs(sim["difference"]) <= sim["tolerance"]
            assert sim["difference"] == pytest.approx(
                (new["stress"] - sim["value"]) / abs(sim["value"]), rel=1e-9)
        else:
            assert new["basis"] == old["basis"]
    html = (out / "report.html").read_text(encoding="utf-8")
    assert html.count('class="word">simulated<') >= len(simulated)
    with open(out / "checks.csv", encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    sim_rows = [r for r in rows if r["simulated [unit]"]]
    assert len(sim_rows) == len(simulated)
    wb = openpyxl.load_workbook(out / "report.xlsx")
    header = [c.value for c in wb["Checks"][1]]
    assert "simulated [unit]" in header


def test_into_refuses_another_design(report_set, tmp_path):
    design, out, _ = report_set
    other = write_case(tmp_path / "other", cell_design("buck", name="another"), cell_parts())
    status, _, err = run_cli(["verify", other, "--into", out])
    assert status == 2 and "another design file" in err
