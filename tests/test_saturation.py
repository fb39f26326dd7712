"""Saturation roll-off of an inductor (``inductance_vs_current``): the ripple at the
inductance the core keeps at its peak current (``stresscheck.topologies.saturation``).

References:
- the buck's inductor ripple ΔI = (V_in − V_o)·D·T_s/L (Erickson & Maksimovic,
  Fundamentals of Power Electronics, 2nd ed., §2.3, eq. 2.19 written for the peak to
  peak swing), evaluated at L(I_pk) with I_pk = I_o + ΔI/2; the fixed point is solved
  here by bisection, independently of the tool's iteration;
- ngspice: the same buck with an inductor whose differential inductance follows the
  table (v = L_0·f(|i|)·di/dt, the behavioural series source of
  ``stresscheck.spice.elements.NetlistWriter.inductor``), regulated to steady state,
  compared with the tolerances of ``stresscheck verify`` (2 % averages and rms, 4 %
  peaks and ripple; tests/spice_support.py).
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from stresscheck.corners import CornerSet, build_corners
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.parts import Curve

L0 = 10e-6  # [H]
FS = 200e3  # [Hz]
# invented table: flat to 4 A, then straight down to half at 12 A (flat beyond)
TABLE = {"0 A": 1.0, "4 A": 1.0, "12 A": 0.5}
CURVE = Curve((0.0, 4.0, 12.0), (1.0, 1.0, 0.5))
IDEAL = {"lossless": True, "c_in": "1 F", "c_out": "1000 uF"}  # stiff rails, no drops


def rolled_parts(table=TABLE, **kw):
    parts = cell_parts(**kw)
    parts["t-ind"]["electrical"]["inductance_vs_current"] = table
    return parts


def textbook_ripple(v_in, v_o, i_o, curve=CURVE, l0=L0):
    """ΔI [A] of a lossless buck in CCM with L = l0·f(I_o + ΔI/2): the largest-L root
    of ΔI·l0·f(I_o + ΔI/2) = (V_in − V_o)·D·T_s, by bisection (the left side rises
    with ΔI at first, so the root nearest ΔI = 0 is the one bracketed below)."""
    vt = (v_in - v_o) * (v_o / v_in) / FS  # [V·s]
    g = lambda x: x * l0 * curve(i_o + x / 2) - vt  # noqa: E731
    lo, hi = 0.0, vt / (l0 * min(curve.y))
    assert g(hi) >= 0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if g(mid) < 0 else (lo, mid)
    return 0.5 * (lo + hi)


def swing(ev, key=("inductor", 0)):
    i = ev.result.currents[key]
    return i.max() - i.min()


@pytest.mark.parametrize("io", ["2 A", "5 A", "8 A"])
def test_buck_ripple_at_the_inductance_of_the_peak_current(tmp_path, io):
    design = cell_design("buck", vin={"min": "16 V", "max": "36 V"},
                         io={"min": io, "max": io})
    ev = run(load_design(write_case(tmp_path, design, rolled_parts(**IDEAL))))
    i_o = float(io.split()[0])
    for k in range(ev.corners.size):
        v_in = ev.corners["input_voltage"][k]
        expected = textbook_ripple(v_in, 12.0, i_o)
        # 2e-4: the output capacitor's voltage ripple (1000 uF, lossless parts) moves
        # the inductor voltage from V_in − V_o by about 1e-4
        assert swing(ev)[k] == pytest.approx(expected, rel=2e-4)
        l_pk = L0 * CURVE(i_o + expected / 2)
        assert ev.result.inductance[("inductor", 0)][k] == pytest.approx(l_pk, rel=2e-4)
    peak = next(s for s in ev.stresses if s.ref == "L1" and s.quantity == "i_peak")
    assert peak.values == pytest.approx(ev.result.currents[("inductor", 0)].max(), rel=1e-12)
    assert peak.values == pytest.approx(i_o + swing(ev) / 2, rel=2e-4)
    if i_o == 2.0:  # the swing stays on the flat part at 16 V and grows into the slope at 36 V
        assert swing(ev)[0] == pytest.approx(4.0 * 0.75 / FS / L0, rel=2e-4)
    assert any("inductance_vs_current" in n["text"] for n in ev.notes)


def test_roll_off_raises_the_ripple_against_the_plain_inductor(tmp_path):
    """Same design without the table: the ripple ratio is L_0/L(I_pk), the inductance
    ratio of ΔI = V·D·T_s/L (Erickson & Maksimovic, §2.3)."""
    design = cell_design("buck", vin={"min": "16 V", "max": "36 V"},
                         io={"min": "8 A", "max": "8 A"})
    plain = run(load_design(write_case(tmp_path / "a", design, cell_parts())))
    rolled = run(load_design(write_case(tmp_path / "b", design, rolled_parts())))
    ratio = L0 / rolled.result.inductance[("inductor", 0)]
    # with losses the duty moves a little with the ripple (drops at the mean current of
    # each piece): the ratio of the swings follows the inductance ratio to 1 %
    assert swing(rolled) / swing(plain) == pytest.approx(ratio, rel=1e-2)
    assert (swing(rolled) > swing(plain) * 1.3).all()


def test_boost_ripple_at_the_inductance_of_the_peak_current(tmp_path):
    """Boost ΔI = V_in·D·T_s/L, D = 1 − V_in/V_o lossless (Erickson & Maksimovic, §2.3
    applied to the boost's on-time), at L(I_in + ΔI/2) with I_in = I_o·V_o/V_in."""
    design = cell_design("boost", vin={"min": "12 V", "max": "18 V"}, vo="48 V",
                         io={"min": "1.5 A", "max": "1.5 A"})
    ev = run(load_design(write_case(tmp_path, design, rolled_parts(**IDEAL))))
    assert (ev.result.regime == "CCM").all()
    for k in range(ev.corners.size):
        v_in = ev.corners["input_voltage"][k]
        vt = v_in * (1 - v_in / 48.0) / FS
        i_in = 1.5 * 48.0 / v_in
        g = lambda x: x * L0 * CURVE(i_in + x / 2) - vt  # noqa: E731
        lo, hi = 0.0, vt / (L0 * 0.5)
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if g(mid) < 0 else (lo, mid)
        assert swing(ev)[k] == pytest.approx(lo, rel=2e-4)  # as in the buck test


def test_plain_inductor_unchanged(tmp_path):
    """No table: the ripple is the constant-inductance one, no solved inductance."""
    design = cell_design("buck", io={"min": "5 A", "max": "5 A"})
    ev = run(load_design(write_case(tmp_path, design, cell_parts(**IDEAL))))
    assert ev.result.inductance == {}
    v_in = ev.corners["input_voltage"]
    assert swing(ev) == pytest.approx((v_in - 12.0) * (12.0 / v_in) / FS / L0, rel=2e-4)


@pytest.mark.parametrize("table, words", [
    ({"0 A": 1.0, "5 A": 1.1}, "at most 1"),
    ({"0 A": 0.9, "5 A": 0.5, "8 A": 0.6}, "must not rise"),
    ({"-1 A": 1.0, "5 A": 0.5}, "negative"),
])
def test_bad_table_refused(tmp_path, table, words):
    design = cell_design("buck")
    with pytest.raises(InputError) as err:
        load_design(write_case(tmp_path, design, rolled_parts(table)))
    assert "inductance_vs_current" in str(err.value) and words in str(err.value)


ROOT = Path(__file__).parent.parent
INDUCTOR_EXAMPLES = sorted(p.parent.name for p in ROOT.glob("examples/*/design.toml")
                           if "ind-" in p.read_text())
STEEP = {"0 A": 1.0, "3 A": 0.9, "30 A": 0.5}  # invented, steep enough to move every example


def with_table(tmp_path, example, table):
    """A copy of ``example`` whose inductor sheet (copied beside it) carries ``table``."""
    folder = tmp_path / example
    shutil.copytree(ROOT / "examples" / example, folder)
    (folder / "parts").mkdir(exist_ok=True)
    design = (folder / "design.toml").read_text()
    (part_id,) = set(re.findall(r'"(ind-[a-z0-9-]+)"', design))
    sheet = folder / "parts" / f"{part_id}.toml"
    if not sheet.exists():
        shutil.copy(ROOT / "parts" / f"{part_id}.toml", sheet)
    text = re.sub(r"(?m)^inductance_vs_current.*\n", "", sheet.read_text())
    if table:
        row = ", ".join(f'"{k}" = {v}' for k, v in table.items())
        text = re.sub(r"(?m)^(inductance\s*=.*\n)", rf"\1inductance_vs_current = {{ {row} }}\n",
                      text, count=1)
    sheet.write_text(text)
    return load_design(folder / "design.toml")


def some_corners(corners: CornerSet, count: int = 12) -> CornerSet:
    """``count`` corners spread over the set (the first and the last included)."""
    sel = np.unique(np.linspace(0, corners.size - 1, count).round().astype(int))
    return CornerSet([corners.ids[k] for k in sel], corners.kind[sel],
                     {k: v[sel] for k, v in corners.columns.items()}, corners.units)


@pytest.mark.parametrize("example", INDUCTOR_EXAMPLES)
def test_every_topology_solves_at_the_inductance_of_its_peak(tmp_path, example):
    """The fixed point holds in every topology with an output or boost inductor:
    L = L_corner·f(I_pk/devices) at every corner and for every inductor position
    (current doubler: both), and the swing is at least the one without the table
    (ΔI = V·t/L grows as L falls: Erickson & Maksimovic, §2.3)."""
    design = with_table(tmp_path / "a", example, STEEP)
    corners = some_corners(build_corners(design))
    rolled = run(design, corners)
    plain = run(with_table(tmp_path / "b", example, None), corners)
    curve = Curve((0.0, 3.0, 30.0), (1.0, 0.9, 0.5))
    keys = [k for k in rolled.result.inductance]
    assert keys and all(role == "inductor" for role, _ in keys)
    for key in keys:
        comp = next(c for c in rolled.design.components if c.role == "inductor")
        spread = comp.part.spread("inductance")
        l_corner = rolled.corners.columns.get(f"{comp.refs[0]}.inductance",
                                              np.full(rolled.corners.size, spread.nom))
        devices = comp.parallel
        i_pk = rolled.result.currents[key].peak() / devices
        # to the fixed point's settling tolerance (saturation.REL_TOL)
        np.testing.assert_allclose(rolled.result.inductance[key], l_corner * curve(i_pk),
                                   rtol=2e-6)
        i_r, i_p = rolled.result.currents[key], plain.result.currents[key]
        steady = rolled.corners.steady_mask()
        assert ((i_r.max() - i_r.min())[steady]
                >= (i_p.max() - i_p.min())[steady] * (1 - 1e-6)).all()
        assert ((i_r.max() - i_r.min())[steady] > (i_p.max() - i_p.min())[steady]).any()
