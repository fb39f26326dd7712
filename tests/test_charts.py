"""The sweep charts' input-voltage axis says what the input voltage is: an rms line voltage
for a design with ``[operating] input = "ac"`` ("V rms"), a DC voltage otherwise ("V").

Source: CONTRACT.md, "Extensions in this version" (``input = "ac"``: input_voltage is an
rms line voltage); an AC magnitude is labelled rms, peak or average (common practice).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from stresscheck import cli
from stresscheck.report import charts
from test_input_errors import run_cli

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


@pytest.mark.parametrize("design, label, other", [
    (EXAMPLES / "pfc-boost-300w" / "design.toml", "input voltage [V rms]",
     "input voltage [V]"),
    (None, "input voltage [V]", "input voltage [V rms]"),
])
def test_sweep_axis_says_rms_for_an_ac_input(tmp_path, design, label, other):
    design = design or cli.demo_design()
    status, _, err = run_cli(["check", design, "--out", tmp_path / "out"])
    assert status in (0, 1), err
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    groups = charts.sweep_groups(results)
    assert groups, "no sweep to draw"
    svg = charts.sweep_chart(groups[0], results)
    assert f">{label}</text>" in svg
    assert f">{other}</text>" not in svg
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert html.count(f">{label}</text>") >= len(groups)
    assert f">{other}</text>" not in html


def test_axis_label_follows_the_line_frequency_key():
    """``line_frequency`` is a corner key exactly when the input is "ac" (the design
    refuses it for a DC input and requires it for an AC one)."""
    assert charts.input_axis_label({"corner_keys": ["input_voltage", "line_frequency"]}) \
        == "input voltage [V rms]"
    assert charts.input_axis_label({"corner_keys": ["input_voltage"]}) == "input voltage [V]"
    assert charts.input_axis_label({}) == "input voltage [V]"
