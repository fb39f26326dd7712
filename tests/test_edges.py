"""Trust at the edges: no silent substitution of part sheets, units pasted from
datasheets, messages that blame the right key, no row from an unconverged electro-thermal
loop, and a demo that says it fails on purpose.

Each test fails on the code before the change and names the behaviour it pins.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

import pytest

from test_input_errors import assert_input_error, rich_design, run_cli, write_inputs


# --------------------------------------------------------------------------- demo

def test_demo_says_it_fails_on_purpose_and_what_check_returns(tmp_path):
    """`stresscheck demo` exits 0 although its report has fails (its job is to show
    them), and says so: the demo design fails on purpose, and `check` would exit 1.

    Source: the project contract (exit status of `check`: 1 when a check fails); the
    demo design's own header (D1/D2 at their full rating during the surge).
    """
    status, out, err = run_cli(["demo", "--out", tmp_path / "demo"])
    assert status == 0, err
    results = json.loads((tmp_path / "demo" / "results.json").read_text(encoding="utf-8"))
    assert results["summary"]["fail"] > 0
    assert "fails on purpose" in out
    assert "would exit with status 1" in out
