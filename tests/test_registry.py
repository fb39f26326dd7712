"""The topology registry: one table from topology name to model, the closed set of
topology names derived from it, every model meeting the ``Topology`` protocol, and the
envelope and duty-limit rules applied through it.

Sources: buck D = V_o/V_in < 1 and boost D = 1 − V_in/V_o > 0 (Erickson & Maksimović,
Fundamentals of Power Electronics, 2nd ed., §2.2–2.3 — from memory); each switch of a
bridge-family converter conducts at most half a period (same book, §6.3.1 — from memory).
"""

from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from stresscheck import schema
from stresscheck.errors import InputError
from stresscheck.topologies import (TOPOLOGIES, Topology, check_envelope, duty_limit_reason,
                                    topology_duty_limit)
from stresscheck.units import Spread


def design(topology, *, vin=(36.0, 75.0), vo=(12.0, 12.0), max_duty=None, **kw):
    fields = dict(path=Path("d.toml"), topology=topology, max_duty=max_duty,
                  input_voltage=Spread(vin[0], sum(vin) / 2, vin[1]),
                  output_voltage=Spread(vo[0], sum(vo) / 2, vo[1]),
                  modulation="pwm", dead_time=0.0, rectifier="center-tap")
    fields.update(kw)
    return SimpleNamespace(**fields)


def test_schema_names_are_the_registry():
    assert schema.TOPOLOGIES == tuple(TOPOLOGIES)
    assert len(set(schema.TOPOLOGIES)) == len(schema.TOPOLOGIES)


@pytest.mark.parametrize("name", list(TOPOLOGIES))
def test_every_model_meets_the_protocol(name):
    assert isinstance(TOPOLOGIES[name], Topology)


@pytest.mark.parametrize("max_duty,ok", [(None, True), (0.45, True), (0.5, True),
                                         (0.55, False)])
@pytest.mark.parametrize("topology", ["full-bridge", "half-bridge", "push-pull"])
def test_bridge_max_duty_above_half_refused(topology, max_duty, ok):
    d = design(topology, max_duty=max_duty)
    if ok:
        check_envelope(d)
    else:
        with pytest.raises(InputError) as info:
            check_envelope(d)
        assert info.value.key == "converter.max_duty"


@pytest.mark.parametrize("topology", ["forward", "two-switch-forward", "flyback"])
def test_isolated_converters_step_up_or_down(topology):
    check_envelope(design(topology, vin=(10.0, 20.0), vo=(48.0, 48.0)))
    check_envelope(design(topology, vin=(300.0, 400.0), vo=(5.0, 5.0)))


def test_controller_max_duty_caps_the_topology_limit():
    """Bridge: each switch at most 1/2 less the dead time; max_duty lowers it further
    and is named in the reason."""
    fs = np.array([100e3, 200e3])
    d = design("full-bridge", dead_time=100e-9)
    np.testing.assert_allclose(topology_duty_limit(d, fs), [0.49, 0.48])
    d.max_duty = 0.485
    np.testing.assert_allclose(topology_duty_limit(d, fs), [0.485, 0.48])
    assert "max_duty is 0.485" in duty_limit_reason(d)


@pytest.mark.parametrize("topology,vin,vo,ok", [
    ("buck", (20, 30), (12, 12), True), ("buck", (20, 30), (12, 20), False),
    ("buck", (20, 30), (25, 25), False), ("boost", (12, 24), (48, 48), True),
    ("boost", (12, 24), (24, 30), False), ("boost", (12, 24), (20, 20), False),
    ("full-bridge", (36, 75), (48, 48), True),
])
def test_check_envelope_by_topology(topology, vin, vo, ok):
    """check_envelope passes a buck whose output stays below its lowest input and a
    boost whose output stays above its highest input, and refuses the others naming
    operating.output_voltage; an isolated converter may step up or down.

    Source: converter basics (buck D = Vo/Vin < 1, boost D = 1 - Vin/Vo > 0).
    """
    design = SimpleNamespace(path=Path("d.toml"), topology=topology, max_duty=None,
                             input_voltage=Spread(vin[0], sum(vin) / 2, vin[1]),
                             output_voltage=Spread(vo[0], sum(vo) / 2, vo[1]))
    if ok:
        check_envelope(design)
    else:
        with pytest.raises(InputError) as info:
            check_envelope(design)
        assert info.value.key == "operating.output_voltage"
        assert topology in str(info.value)
