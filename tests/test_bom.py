"""BOM import and part substitution (issue: BOM workflows).

The references here are the design's own relations: a substituted part must change the
stresses exactly as editing the design file by hand would (same engine, same numbers).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from stresscheck.bom import expand_designators, read_bom
from stresscheck.cli import demo_design, main
from stresscheck.errors import InputError


def test_designator_lists_and_ranges():
    assert expand_designators("Q1-Q4", "f", "k") == ["Q1", "Q2", "Q3", "Q4"]
    assert expand_designators("C3, C5", "f", "k") == ["C3", "C5"]
    assert expand_designators("R1-R3, R7", "f", "k") == ["R1", "R2", "R3", "R7"]
    assert expand_designators("R1 - R3; R7", "f", "k") == ["R1", "R2", "R3", "R7"]
    assert expand_designators("C08-C10", "f", "k") == ["C08", "C09", "C10"]
    assert expand_designators("T1.2", "f", "k") == ["T1.2"]
    with pytest.raises(InputError, match="does not count up"):
        expand_designators("Q4-Q1", "f", "k")


def _demo_copy(tmp_path: Path) -> Path:
    target = tmp_path / "design.toml"
    shutil.copy(demo_design(), target)
    return target


def _write(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def test_bom_drives_a_check_and_lists_unmatched_refs(tmp_path, capsys):
    design = _demo_copy(tmp_path)
    bom = _write(tmp_path / "bom.csv", "REFS,Part,qty\n\"D1, D2\",schottky-150v-20a,2\n"
                 "Q1-Q4,nfet-150v-16m-si,4\nC99,cap-alpoly-330u-25v,1\n")
    status = main(["check", str(design), "--bom", str(bom), "--out", str(tmp_path / "out")])
    out = capsys.readouterr().out
    assert "in the BOM but not in the design: C99" in out
    assert "C10" in out and "not in the BOM" in out
    doc = json.loads((tmp_path / "out" / "results.json").read_text())
    assert doc["bom"]["not_in_design"] == ["C99"]
    assert {c["ref"] for c in doc["substitutions"]} == {"D1", "D2"}
    d1 = [c for c in doc["checks"] if c["ref"] == "D1"]
    assert {c["part"] for c in d1} == {"schottky-150v-20a"}
    # the 150 V rectifier clears the demo's deliberate reverse-voltage failure
    assert status == 0 and doc["summary"]["fail"] == 0
    # the report lists the substitutions and the refs the BOM and design do not share
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "Parts substituted for this run" in html and "schottky-150v-20a" in html
    assert "In the BOM but not in the design: C99" in html


def test_bom_from_xlsx_with_named_columns(tmp_path):
    import pandas as pd
    design = _demo_copy(tmp_path)
    text = design.read_text(encoding="utf-8")
    _write(design, text + '\n[bom]\nrefs_column = "Designator"\npart_column = "Stock id"\n')
    bom = tmp_path / "bom.xlsx"
    pd.DataFrame({"Designator": ["D1-D2"], "Stock id": ["schottky-150v-20a"]}).to_excel(
        bom, index=False)
    assert main(["check", str(design), "--bom", str(bom), "--out", str(tmp_path / "o")]) == 0


def test_bom_unknown_part_names_file_row_and_column(tmp_path, capsys):
    design = _demo_copy(tmp_path)
    bom = _write(tmp_path / "bom.csv", "refs,part\nQ1-Q4,nfet-150v-16m-si\nD1,no-such-part\n")
    assert main(["check", str(design), "--bom", str(bom), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "bom.csv" in err and "row 3, column 'part'" in err and "no-such-part" in err


@pytest.mark.parametrize("text, message", [
    ("ref,part\nQ1,nfet-150v-16m-si\n", "no column 'refs'"),
    ("refs,part\nQ1,nfet-150v-16m-si\nQ1,nfet-150v-16m-si\n", "also on row 2"),
    ("refs,part\n,nfet-150v-16m-si\n", "no designator"),
    ("refs,part\nQ1,\n", "no part"),
])
def test_bad_bom_is_refused(tmp_path, text, message):
    bom = _write(tmp_path / "bom.csv", text)
    with pytest.raises(InputError, match=message):
        read_bom(bom)


def test_bom_file_kinds_refused(tmp_path, capsys):
    design = _demo_copy(tmp_path)
    _write(tmp_path / "bom.ods", "x")
    assert main(["check", str(design), "--bom", str(tmp_path / "bom.ods")]) == 2
    assert "must be a .csv or .xlsx" in capsys.readouterr().err
    assert main(["check", str(design), "--bom", str(tmp_path / "none.csv")]) == 2
    assert "does not exist" in capsys.readouterr().err


def test_swap_one_ref_of_a_multi_ref_entry_recomputes_its_stresses(tmp_path):
    design = _demo_copy(tmp_path)
    assert main(["check", str(design), "--out", str(tmp_path / "a")]) == 1
    assert main(["check", str(design), "--swap", "Q2=nfet-200v-25m-si",
                 "--out", str(tmp_path / "b")]) == 1
    a = {(c["ref"], c["quantity"]): c for c in
         json.loads((tmp_path / "a" / "results.json").read_text())["checks"]}
    b = {(c["ref"], c["quantity"]): c for c in
         json.loads((tmp_path / "b" / "results.json").read_text())["checks"]}
    assert b[("Q2", "v_peak")]["part"] == "nfet-200v-25m-si"
    assert b[("Q1", "v_peak")]["part"] == "nfet-150v-16m-si"
    # the substitute's own rating and R_DS(on) are used: 200 V rating, higher loss and T_j
    assert b[("Q2", "v_peak")]["rating"] == 200.0
    assert b[("Q2", "t_j")]["stress"] > a[("Q2", "t_j")]["stress"] + 1.0
    assert b[("Q1", "t_j")]["stress"] == pytest.approx(a[("Q1", "t_j")]["stress"], abs=0.5)


def test_swap_equals_editing_the_design_by_hand(tmp_path):
    """A swap is the same computation as the edited design file (no copied numbers)."""
    design = _demo_copy(tmp_path)
    edited = _write(tmp_path / "edited.toml", design.read_text(encoding="utf-8").replace(
        'part = "ind-pwd-6u8-35a"', 'part = "ind-pwd-10u-15a"'))
    main(["check", str(design), "--swap", "L1=ind-pwd-10u-15a", "--out", str(tmp_path / "s")])
    main(["check", str(edited), "--out", str(tmp_path / "e")])
    s = json.loads((tmp_path / "s" / "results.json").read_text())["checks"]
    e = json.loads((tmp_path / "e" / "results.json").read_text())["checks"]
    assert [(c["ref"], c["quantity"], c["stress"]) for c in s] == \
        [(c["ref"], c["quantity"], c["stress"]) for c in e]


@pytest.mark.parametrize("swap, message", [
    ("Q9=nfet-200v-25m-si", "ref 'Q9' is not in the design"),
    ("Q1=cap-alpoly-330u-25v", "role 'switch'"),
    ("Q1", "expected REF=PART"),
    ("Q1=no-such-part", "not in any parts library"),
    ("C11=cap-alel-100u-100v", "bank"),
])
def test_bad_swap_is_refused(tmp_path, capsys, swap, message):
    design = _demo_copy(tmp_path)
    assert main(["check", str(design), "--swap", swap, "--out", str(tmp_path / "o")]) == 2
    assert message in capsys.readouterr().err
