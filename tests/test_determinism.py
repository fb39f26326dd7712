"""The same inputs give a byte-identical results.json: no timestamps, no absolute paths,
no dependence on hash seeds or on where the files live. With the date fixed, report.html
and report.xlsx are byte-identical too; the date appears only in the report headers.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from builders import bridge_design, bridge_parts, write_case
from stresscheck import cli
from test_input_errors import run_cli, write_inputs

TOPOLOGIES = [("full-bridge", "center-tap"), ("full-bridge", "full-bridge"),
              ("half-bridge", "center-tap"), ("push-pull", "center-tap")]


def _case(folder: Path, topology: str, rectifier: str) -> Path:
    parts = bridge_parts(n_p=2, n_s=2) if topology == "half-bridge" else bridge_parts()
    return write_case(folder, bridge_design(topology, rectifier), parts)


@pytest.mark.parametrize("topology,rectifier", TOPOLOGIES)
def test_results_json_is_byte_identical_across_runs(tmp_path, topology, rectifier):
    """Two runs of `stresscheck check` on the same design into two folders write the
    same results.json bytes.

    Source: the robustness issue (item 5); reproducible-builds practice (same input,
    same bytes).
    """
    design = _case(tmp_path / "case", topology, rectifier)
    outputs = []
    for name in ("a", "b"):
        status, _, err = run_cli(["check", design, "--out", tmp_path / name])
        assert status in (0, 1), err
        outputs.append((tmp_path / name / "results.json").read_bytes())
    assert outputs[0] == outputs[1]


def test_results_json_does_not_depend_on_the_folder(tmp_path):
    """The same inputs copied to another folder give the same results.json: no absolute
    path of an input ends up in it.

    Source: the robustness issue (item 5); results.py (inputs named by file name and
    sha256).
    """
    first = _case(tmp_path / "one", "full-bridge", "center-tap")
    shutil.copytree(tmp_path / "one", tmp_path / "elsewhere" / "deeper")
    second = tmp_path / "elsewhere" / "deeper" / "design.toml"
    texts = []
    for design, out in ((first, tmp_path / "o1"), (second, tmp_path / "o2")):
        assert run_cli(["check", design, "--out", out])[0] in (0, 1)
        texts.append((out / "results.json").read_text(encoding="utf-8"))
    assert texts[0] == texts[1]
    assert str(tmp_path) not in texts[0]


def test_results_json_holds_no_date(tmp_path):
    """results.json is the same whatever the run date; the date is shown only in the
    HTML and spreadsheet headers, which differ between the two dates.

    Source: the robustness issue (item 5: "no timestamps there; dates only in report
    headers").
    """
    inputs = write_inputs(tmp_path)
    out = {}
    for date in ("2026-01-02", "2031-07-30"):
        cli.run_check(inputs.design, [], str(inputs.policy), tmp_path / date, date=date)
        out[date] = {n: (tmp_path / date / n).read_bytes()
                     for n in ("results.json", "report.html", "report.xlsx")}
    assert out["2026-01-02"]["results.json"] == out["2031-07-30"]["results.json"]
    text = out["2026-01-02"]["results.json"].decode("utf-8")
    assert not re.search(r"\b(19|20)\d\d-\d\d-\d\d\b", text)
    assert not re.search(r"\b\d\d:\d\d:\d\d\b", text)
    assert b"2026-01-02" in out["2026-01-02"]["report.html"]
    assert out["2026-01-02"]["report.html"] != out["2031-07-30"]["report.html"]
    assert out["2026-01-02"]["report.xlsx"] != out["2031-07-30"]["report.xlsx"]


@pytest.mark.parametrize("which", ["test design", "demo"])
def test_reports_are_byte_identical_with_a_fixed_date(tmp_path, which):
    """With the date fixed, report.xlsx and report.html are byte-identical between two
    runs (the workbook's created/modified times and zip entry times follow the date).

    Source: the robustness issue (item 5); reproducible-builds practice.
    """
    if which == "demo":
        design, policy = cli.demo_design(), "commercial"
    else:
        inputs = write_inputs(tmp_path / "case")
        design, policy = inputs.design, str(inputs.policy)
    files = []
    for name in ("a", "b"):
        cli.run_check(design, [], policy, tmp_path / name, date="2026-05-04")
        files.append({n: (tmp_path / name / n).read_bytes()
                      for n in ("results.json", "report.html", "report.xlsx")})
    assert files[0] == files[1]


def test_results_json_does_not_depend_on_the_hash_seed(tmp_path):
    """Two separate processes with different PYTHONHASHSEED values write the same
    results.json (no set or dict ordering that depends on string hashing).

    Source: the robustness issue (item 5); Python's hash randomisation of str.
    """
    design = _case(tmp_path / "case", "push-pull", "center-tap")
    texts = []
    for seed in ("0", "4242"):
        env = dict(os.environ, PYTHONHASHSEED=seed)
        out = tmp_path / f"seed-{seed}"
        proc = subprocess.run([sys.executable, "-m", "stresscheck.cli", "check",
                               str(design), "--out", str(out)], env=env,
                              capture_output=True, text=True, timeout=120)
        assert proc.returncode in (0, 1), proc.stderr
        assert "Traceback" not in proc.stderr
        texts.append((out / "results.json").read_bytes())
    assert texts[0] == texts[1]
