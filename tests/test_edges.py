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


# --------------------------------------------------------------------------- units

@pytest.mark.parametrize("pasted,plain,dimension", [
    ("12 m\u2126", "12 mohm", "resistance"),         # OHM SIGN
    ("500 \u00b5\u2126", "500 uohm", "resistance"),  # MICRO SIGN + OHM SIGN
    ("12 m\u03a9", "12 mohm", "resistance"),         # GREEK CAPITAL OMEGA (as before)
    ("75 \u2103", "75 degC", "temperature"),          # DEGREE CELSIUS
    ("-40 \u2103", "-40 degC", "temperature"),
    ("75 \u00b0C", "75 degC", "temperature"),         # DEGREE SIGN + C (as before)
    ("3 \u212a/W", "3 K/W", "thermal_resistance"),   # KELVIN SIGN
    ("25 \u212a", "25 K", "temperature_difference"),
    ("4.7 \u00b5F", "4.7 uF", "capacitance"),        # MICRO SIGN (as before)
    ("4.7 \u03bcF", "4.7 uF", "capacitance"),        # GREEK SMALL MU (as before)
    ("50 \u00b5s", "50 us", "time"),
    ("10 \u338c", "10 uF", "capacitance"),           # SQUARE MU F
    ("100 \u3391", "100 kHz", "frequency"),          # SQUARE KHZ
    ("\uff11\uff10\uff10 kHz", "100 kHz", "frequency"),  # full-width digits
])
def test_unicode_compatibility_forms_are_units(pasted, plain, dimension):
    """Unit symbols pasted from datasheets in their Unicode compatibility forms read as
    the plain spelling (NFKC normal form), and the micro sign and the Greek mu both
    still work.

    Source: The Unicode Standard, Annex #15 (normalization forms; NFKC folds OHM SIGN
    U+2126 to U+03A9, DEGREE CELSIUS U+2103 to U+00B0 U+0043, KELVIN SIGN U+212A to
    U+004B, MICRO SIGN U+00B5 to U+03BC); the contract lists "12 mΩ" and "75 °C".
    """
    from stresscheck.units import parse_quantity
    assert parse_quantity(pasted, dimension, "f.toml", "k") == pytest.approx(
        parse_quantity(plain, dimension, "f.toml", "k"), rel=1e-12)


def test_ohm_sign_and_degree_celsius_in_files_give_the_same_results(tmp_path):
    """A part sheet written with OHM SIGN and a design written with DEGREE CELSIUS check
    exactly as the ASCII spellings do (same checks, same numbers).

    Source: the contract's units ("12 mΩ", "75 °C"); Unicode Annex #15 (NFKC).
    """
    import tomli_w
    from builders import bridge_parts

    def run(folder, ohm, deg):
        design = rich_design()
        design["operating"]["ambient_temperature"] = {"min": f"-20 {deg}",
                                                      "max": f"55 {deg}"}
        parts = bridge_parts()
        parts["t-fet"]["electrical"]["r_ds_on"] = f"10 m{ohm}"
        parts["t-cout"]["electrical"]["esr"] = f"5 m{ohm}"
        inputs = write_inputs(folder, design, parts)
        status, _, err = run_cli(inputs.args())
        assert status in (0, 1), err
        doc = json.loads((inputs.out / "results.json").read_text(encoding="utf-8"))
        return doc["checks"], doc["corners"]

    assert run(tmp_path / "a", "\u2126", "\u2103") == run(tmp_path / "b", "ohm", "degC")
