"""`stresscheck diff`, `stresscheck alternates` and the part library tools.

Reference: the tool's own check of the edited design (a comparison or a ranking must report
exactly the numbers of the runs it compares); the demo's deliberate rectifier failure
(100 V Schottky at a 100 V surge, CONTRACT.md demo) is the known "worse" case.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from stresscheck.cli import demo_design, main


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    base = tmp_path_factory.mktemp("runs")
    design = base / "design.toml"
    shutil.copy(demo_design(), design)
    main(["check", str(design), "--out", str(base / "old")])
    main(["check", str(design), "--swap", "D1=schottky-150v-20a", "--swap",
          "D2=schottky-150v-20a", "--out", str(base / "new")])
    return base, design


def test_diff_better_then_worse(runs, capsys, tmp_path):
    base, _ = runs
    old, new = base / "old" / "results.json", base / "new" / "results.json"
    assert main(["diff", str(old), str(new)]) == 0  # fixed: nothing got worse
    out = capsys.readouterr().out
    assert "better D1" in out and "fail -> pass" in out
    assert "schottky-100v-40a -> schottky-150v-20a" in out
    assert main(["diff", str(new), str(old), "--out", str(tmp_path / "d")]) == 1
    out = capsys.readouterr().out
    assert "WORSE  D1" in out
    html = (tmp_path / "d" / "diff.html").read_text(encoding="utf-8")
    assert "D1" in html and "(worse)" in html and "hazardous voltages" in html
    from openpyxl import load_workbook
    ws = load_workbook(tmp_path / "d" / "diff.xlsx")["Changes"]
    rows = list(ws.iter_rows(values_only=True))
    assert rows[0][0] == "change" and rows[1][:5] == ("status", "D1", "v_reverse_peak",
                                                      "pass", "fail")
    ratios = {c["ref"] + c["quantity"]: c["ratio"] for c in
              json.loads(old.read_text())["checks"]}
    assert rows[1][6] == pytest.approx(100 * ratios["D1v_reverse_peak"], abs=1e-3)


def test_diff_threshold_and_status_order(runs, capsys):
    base, _ = runs
    old, new = base / "old" / "results.json", base / "new" / "results.json"
    main(["diff", str(old), str(new), "--threshold", "1000"])
    out = capsys.readouterr().out
    assert "0 ratio change(s)" in out and "2 status change(s)" in out


def test_diff_refs_that_appear_or_vanish(runs, tmp_path, capsys):
    base, _ = runs
    doc = json.loads((base / "old" / "results.json").read_text())
    doc["checks"] = [c for c in doc["checks"] if c["ref"] != "L1"]
    doc["design"] = "another design"
    edited = tmp_path / "edited.json"
    edited.write_text(json.dumps(doc))
    assert main(["diff", str(base / "old" / "results.json"), str(edited)]) == 0
    out = capsys.readouterr().out
    assert "refs only in old: L1" in out and "different designs" in out


@pytest.mark.parametrize("text, message", [
    ("not json", "not a JSON document"),
    ('{"schema": "other/1", "checks": []}', "not a stresscheck results.json"),
    ('{"schema": "stresscheck.results/1", "checks": {}}', "expected a list"),
    ('{"schema": "stresscheck.results/1", "checks": [{"ref": 1}]}', "'ref' and 'quantity'"),
])
def test_diff_unusable_input(runs, tmp_path, capsys, text, message):
    base, _ = runs
    bad = tmp_path / "bad.json"
    bad.write_text(text)
    assert main(["diff", str(base / "old" / "results.json"), str(bad)]) == 2
    err = capsys.readouterr().err
    assert "bad.json" in err and message in err
    assert main(["diff", str(tmp_path / "none.json"), str(bad)]) == 2


def test_alternates_rank_demo_rectifier(runs, tmp_path, capsys):
    _, design = runs
    assert main(["alternates", str(design), "D1", "--out", str(tmp_path / "a")]) == 0
    ranked = json.loads((tmp_path / "a" / "alternates.json").read_text())
    assert set(ranked[0]) >= {"part", "worst_ratio", "status", "rejected_by"}
    parts = [a["part"] for a in ranked]
    ratios = [a["worst_ratio"] for a in ranked if a["worst_ratio"] is not None]
    assert ratios == sorted(ratios)  # best worst-ratio first
    current = ranked[parts.index("schottky-100v-40a")]
    assert current["status"] == "fail" and current["rejected_by"] == ["v_reverse_peak"]
    # the worst ratio of the current part equals the plain check of the design
    doc = json.loads((runs[0] / "old" / "results.json").read_text())
    worst = max(c["ratio"] for c in doc["checks"] if c["ref"] == "D1" and c["ratio"])
    assert current["worst_ratio"] == pytest.approx(worst, rel=1e-12)
    assert ranked[parts.index("schottky-150v-20a")]["status"] == "pass"
    html = (tmp_path / "a" / "alternates.html").read_text(encoding="utf-8")
    assert "schottky-150v-20a" in html and "hazardous voltages" in html


@pytest.mark.parametrize("ref", ["Q1", "T1", "L1", "C10", "C1"])
def test_alternates_cover_every_demo_position(runs, capsys, ref):
    _, design = runs
    assert main(["alternates", str(design), ref]) == 0
    out = capsys.readouterr().out
    assert f"alternates for {ref}" in out and " * " not in out.split("\n")[0]


def test_alternates_unknown_ref(runs, capsys):
    _, design = runs
    assert main(["alternates", str(design), "Q42"]) == 2
    assert "ref 'Q42' is not in the design" in capsys.readouterr().err


def test_parts_check_reports_every_problem(tmp_path, capsys):
    lib = tmp_path / "lib"
    lib.mkdir()
    shipped = Path(demo_design()).parent.parent.parent / "parts"
    src = next(iter(sorted(shipped.glob("nfet-*.toml"))))
    shutil.copy(src, lib / src.name)
    (lib / "bad-one.toml").write_text('schema = "stresscheck.part/1"\nid = "bad-one"\n')
    (lib / "bad-two.toml").write_text("not toml =")
    assert main(["parts", "check", str(lib)]) == 2
    out = capsys.readouterr().out
    assert "bad-one.toml" in out and "bad-two.toml" in out and "2 with problems" in out
    (lib / "bad-one.toml").unlink()
    (lib / "bad-two.toml").unlink()
    assert main(["parts", "check", str(lib)]) == 0


def test_parts_import_writes_valid_sheets(tmp_path, capsys):
    table = tmp_path / "parts.csv"
    table.write_text("id,kind,technology,description,v_ds [V],i_d,r_ds_on [mohm],"
                     "t_j_max,r_th_jc\n"
                     "nfet-x-1,mosfet,si,test part,100,20 A,10,150 degC,1 K/W\n")
    out = tmp_path / "lib"
    assert main(["parts", "import", str(table), "--out", str(out)]) == 0
    from stresscheck.parts import load_part
    part = load_part(out / "nfet-x-1.toml")
    assert part.ratings["v_ds"] == 100.0 and part.electrical["r_ds_on"] == pytest.approx(0.010)
    # never replaces a file; a bad row writes nothing and names row and column
    assert main(["parts", "import", str(table), "--out", str(out)]) == 2
    assert "refusing to replace" in capsys.readouterr().out
    table.write_text("id,kind,technology,v_ds\nnfet-x-2,mosfet,si,100 V\n"
                     "nfet-x-3,mosfet,si,lots\n")
    assert main(["parts", "import", str(table), "--out", str(tmp_path / "l2")]) == 2
    out_text = capsys.readouterr().out
    assert "row 3" in out_text and "v_ds" in out_text
    assert not (tmp_path / "l2").exists()
