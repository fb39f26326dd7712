"""Quantity parsing and corner construction (the contract's 'Values and units')."""

import numpy as np
import pytest

from builders import bridge_design, bridge_parts, write_case
from stresscheck.corners import build_corners
from stresscheck.design import load_design
from stresscheck.errors import InputError
from stresscheck.units import parse_quantity, parse_spread


@pytest.mark.parametrize("text,dimension,expected", [
    ("100 kHz", "frequency", 1e5), ("4.7 uF", "capacitance", 4.7e-6),
    ("4.7 µF", "capacitance", 4.7e-6), ("12 mohm", "resistance", 0.012),
    ("12 mΩ", "resistance", 0.012), ("75 degC", "temperature", 75.0),
    ("75 °C", "temperature", 75.0), ("-40 degC", "temperature", -40.0),
    ("3 K/W", "thermal_resistance", 3.0), ("20 %", "fraction", 0.2),
    ("0.5 %/K", "per_kelvin", 0.005), ("80 mm^2", "area", 80e-6), ("250 mT", "flux_density", 0.25),
    ("5000 h", "time", 5000 * 3600.0), (2.5, "voltage", 2.5),
])
def test_contract_examples_parse_to_si(text, dimension, expected):
    """Every example of the contract's 'Values and units' reads as its SI value."""
    assert parse_quantity(text, dimension, "f.toml", "k") == pytest.approx(expected, rel=1e-12)


def test_wrong_dimension_names_file_and_key():
    with pytest.raises(InputError) as err:
        parse_quantity("10 uF", "resistance", "q.toml", "electrical.r_ds_on")
    assert "q.toml" in str(err.value) and "electrical.r_ds_on" in str(err.value)


def test_tolerance_and_range():
    s = parse_spread({"nom": "10 uH", "tolerance": "20 %"}, "inductance", "f", "k")
    assert (s.min, s.nom, s.max) == pytest.approx((8e-6, 10e-6, 12e-6))
    r = parse_spread({"min": "36 V", "max": "75 V"}, "voltage", "f", "k")
    assert (r.min, r.nom, r.max) == (36.0, 55.5, 75.0)


def test_corners_are_the_full_factorial(tmp_path):
    """Every combination of the extremes is a corner; surge and current limit add levels
    with their own kind (transient, overload)."""
    design = load_design(write_case(tmp_path, bridge_design(surge="70 V", ilim="12 A"),
                                    bridge_parts(l_m={"nom": "200 uH", "tolerance": "20 %"})))
    c = build_corners(design)
    # input 40/48/60/70, current 8/10/12, ambient 2 levels, L_m 2 levels
    assert c.size == 4 * 3 * 2 * 2
    assert len(set(c.ids)) == c.size
    assert set(np.unique(c.kind)) == {"steady", "overload", "transient"}
    assert np.all(c.kind[c["input_voltage"] == 70.0] == "transient")
    combos = {tuple(c.columns[k][i] for k in c.columns) for i in range(c.size)}
    assert len(combos) == c.size
