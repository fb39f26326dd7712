"""Device kinds (stresscheck/devices/): the registry and the relations each kind owns.

Sources beside each check; hand values computed from the relation stated in the
docstring of the function under test.
"""

import numpy as np
import pytest

from stresscheck import schema
from stresscheck.devices import KINDS, total_loss
from stresscheck.devices.capacitor import LIFE_CAP, capacitor_life
from stresscheck.devices.diode import diode_loss
from stresscheck.devices.mosfet import body_diode, r_ds_on_at
from stresscheck.devices.transformer import Transformer
from stresscheck.parts import Part

YEAR = 365.25 * 24 * 3600.0  # [s]


def mosfet(**electrical):
    return Part("m", "mosfet", "si", "", None, electrical=dict(r_ds_on=0.01, **electrical))


def test_every_kind_has_a_model():
    """One model per part kind of the contract, and each says which kind it models."""
    assert set(KINDS) == set(schema.KINDS)
    assert all(model.kind == kind for kind, model in KINDS.items())


# -- mosfet ---------------------------------------------------------------------------

def test_r_ds_on_coefficient():
    """R(T) = R25·(1 + tc·(T − 25 °C)): 0.5 %/K over 100 K is ×1.5 (common practice)."""
    np.testing.assert_allclose(r_ds_on_at(mosfet(r_ds_on_tc=0.005), [25.0, 125.0]),
                               [0.01, 0.015])


def test_r_ds_on_two_points():
    """Straight line through (25 °C, R25) and (T_hot, R_hot): halfway in temperature is
    halfway in resistance; the line extends below 25 °C (common practice)."""
    part = mosfet(r_ds_on_hot=0.018, r_ds_on_hot_temperature=125.0)
    np.testing.assert_allclose(r_ds_on_at(part, [75.0, 125.0, -25.0]),
                               [0.014, 0.018, 0.006])


def test_r_ds_on_without_temperature_data_and_floor():
    """No coefficient: the 25 °C value at every temperature; a coefficient that would
    drive R below 5 % of R25 far below 25 °C stops there."""
    np.testing.assert_allclose(r_ds_on_at(mosfet(), [-40.0, 150.0]), [0.01, 0.01])
    np.testing.assert_allclose(r_ds_on_at(mosfet(r_ds_on_tc=0.02), [-200.0]), [0.0005])


def test_body_diode_defaults():
    """v_f0 = 0.85·v_sd and r_d = r_sd; 0.9 V and 10 mΩ when the sheet is silent
    (common practice)."""
    assert body_diode(mosfet()) == pytest.approx((0.765, 0.01))
    assert body_diode(mosfet(v_sd=1.2, r_sd=0.02)) == pytest.approx((1.02, 0.02))


# -- diode ----------------------------------------------------------------------------

def test_diode_loss_of_a_square_pulse():
    """A current I for a fraction D of the period: I_avg = D·I, I_rms² = D·I², so
    P = D·(v_f0·I + r_d·I²), the conduction drop times the current while it conducts
    (Mohan, Undeland & Robbins, Power Electronics, 3rd ed., ch. 29 — from memory)."""
    d, i, v_f0, r_d = 0.3, 10.0, 0.5, 0.02
    p = diode_loss(v_f0, r_d, np.array([d * i]), np.array([np.sqrt(d) * i]))
    np.testing.assert_allclose(p, d * (v_f0 * i + r_d * i ** 2))


# -- capacitor ------------------------------------------------------------------------

def test_electrolytic_life_doubles_per_10_k():
    """Wet electrolytic: L0 at T_max, ×2 for every 10 K below (capacitor makers' life
    notes; docs/derating-sources.md §7), capped at 15 years."""
    life = capacitor_life("al-electrolytic", 5000 * 3600.0, 105.0,
                          np.array([105.0, 95.0, 75.0, 0.0]))
    np.testing.assert_allclose(life[:3], 5000 * 3600.0 * np.array([1, 2, 8]))
    assert life[3] == LIFE_CAP == pytest.approx(15 * YEAR)


def test_polymer_life_tenfold_per_20_k():
    """Aluminium polymer: ×10 for every 20 K below T_max (docs/derating-sources.md §8)."""
    life = capacitor_life("al-polymer", 2000 * 3600.0, 105.0, np.array([105.0, 85.0]))
    np.testing.assert_allclose(life, 2000 * 3600.0 * np.array([1, 10]))


# -- base -----------------------------------------------------------------------------

def test_total_loss_sums_the_terms():
    """The sum of the named terms, and zero when a device has none."""
    terms = {"a": np.array([1.0, 2.0]), "b": np.array([0.5, 0.25])}
    np.testing.assert_array_equal(total_loss(terms, 2), [1.5, 2.25])
    np.testing.assert_array_equal(total_loss({}, 2), [0.0, 0.0])


def test_transformer_is_one_device_to_the_model():
    """The model's winding loss is already the whole position's: not scaled by parallel."""
    p = np.array([1.0, 3.0])
    assert Transformer.position_loss(object.__new__(Transformer), p) is p
