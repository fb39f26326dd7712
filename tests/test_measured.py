"""Measured values ([[measured]] in the design): replace the computed stress or bound it
from below; the rows carry basis = "measured" and the provenance in results.json."""

from __future__ import annotations

import datetime
import json

import numpy as np
import pytest

from builders import write_case
from builders_flyback import flyback_design, flyback_parts
from stresscheck import cli
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.policy import load_policy

PROBE = {"instrument": "scope 500 MHz, 100:1 probe", "probe_point": "Q1 drain to source",
         "date": datetime.date(2026, 11, 3)}


def evaluate(tmp_path, measured, l_leak=None):
    design = flyback_design()
    design["measured"] = measured
    path = write_case(tmp_path, design, flyback_parts(l_leak=l_leak))
    ev = run(load_design(path))
    return ev, {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}, path


def test_measured_spike_replaces_a_not_computed_voltage(tmp_path):
    """With leakage and no clamp the switch voltage is not computed; a measured peak
    (the usual evidence for a spike) stands for it."""
    ev, checks, path = evaluate(tmp_path, [{"ref": "Q1", "quantity": "v_peak",
                                            "value": "131 V", "mode": "replace", **PROBE}],
                                l_leak="1 uH")
    c = checks[("Q1", "v_peak")]
    assert c.status in ("pass", "marginal", "fail") and c.stress == pytest.approx(131.0)
    assert c.basis == "measured" and c.measured["mode"] == "replace"
    assert checks[("D1", "v_reverse_peak")].status == "not-computed"  # not measured
    cli.main(["check", str(path), "--out", str(tmp_path / "out")])
    doc = json.loads((tmp_path / "out" / "results.json").read_text())
    (row,) = [r for r in doc["checks"] if r["ref"] == "Q1" and r["quantity"] == "v_peak"]
    assert row["basis"] == "measured"
    assert row["measured"] == {"value": 131.0, "instrument": PROBE["instrument"],
                               "probe_point": PROBE["probe_point"], "date": "2026-11-03",
                               "mode": "replace"}


def test_bound_keeps_the_larger_value(tmp_path):
    _, plain, _ = evaluate(tmp_path / "a", [])
    computed = plain[("Q1", "i_rms")].stress
    _, low, _ = evaluate(tmp_path / "b", [{"ref": "Q1", "quantity": "i_rms",
                                           "value": f"{computed / 2} A", "mode": "bound"}])
    _, high, _ = evaluate(tmp_path / "c", [{"ref": "Q1", "quantity": "i_rms",
                                            "value": f"{computed * 2} A", "mode": "bound"}])
    assert low[("Q1", "i_rms")].stress == pytest.approx(computed, rel=1e-12)
    assert high[("Q1", "i_rms")].stress == pytest.approx(2 * computed, rel=1e-12)
    assert low[("Q1", "i_rms")].basis == "measured"


@pytest.mark.parametrize("entry,key,match", [
    ({"ref": "Q9", "quantity": "v_peak", "value": "1 V"}, "measured[0].ref", "no component"),
    ({"ref": "Q1", "quantity": "v_reverse_peak", "value": "1 V"}, "measured[0].quantity",
     "unknown value"),
    ({"ref": "Q1", "quantity": "v_peak", "value": "1 A"}, "measured[0].value", "voltage"),
    ({"ref": "Q1", "quantity": "v_peak", "value": "1 V", "mode": "lower"},
     "measured[0].mode", "unknown value"),
])
def test_bad_measurements_name_the_key(tmp_path, entry, key, match):
    with pytest.raises(InputError, match=match) as err:
        evaluate(tmp_path, [entry])
    assert err.value.key == key
