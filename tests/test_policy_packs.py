"""Every built-in policy pack equals its reference table, row by row.

The expected rows below are transcribed from the reference notes
docs/derating-sources.md (a copy of the project's shared derating reference), section by
section, independently of the pack files; each table names its document and table. A row
is (kind, technologies or None for all, quantity, stress kinds or None for all, rating,
factor, margin [K or SI], limit [SI], factor-vs-temperature points or None,
from_memory). The pack's rule must carry the same values and the same from_memory flag.
"""

import pytest

from stresscheck import schema
from stresscheck.policy import builtin_names, load_policy

ALL = None
SI = ("si",)
CER = ("ceramic-class1", "ceramic-class2")


def row(kind, tech, quantity, rating=None, factor=None, margin=None, limit=None,
        curve=None, kinds=None, memory=False, minimum=None):
    out = (kind, frozenset(tech) if tech else None, quantity,
           frozenset(kinds) if kinds else None, rating, factor, margin, limit, curve, memory)
    return out if minimum is None else out + (minimum,)


def pack_rows(name):
    p = load_policy(name)
    return sorted((row(r.kind, r.technology, r.quantity, r.rating, r.factor, r.margin,
                       r.limit, r.curve, r.stress_kinds, r.from_memory,
                       r.minimum_from or r.minimum)
                   for r in p.rules), key=repr)


# NASA EEE-INST-002 (NASA/TP-2003-212242). Capacitors: derating requirements extract
# (3/05) Table 4, read in a published copy (derating-sources §9, §11, §12, S6): solid
# tantalum 0.50 to 70 degC ambient, 0.30 at 110 degC, linear between (note 3); ceramic
# 0.60 with 110 degC maximum ambient; plastic film 0.60 with 85 degC maximum ambient.
# Transistors (§2), diodes (§6) and magnetics (§13): from memory (tables not readable):
# V_DS 75 %, I_D 75 %, P_D 50 %, T_j <= min(125 degC, T_j,max - 40 K); PIV 70 %,
# I_F 50 %, T_j as transistors; magnetics hot spot 20 K below the class maximum.
# The reference records no split by level: levels 1-3 hold the same rows.
EEE = [
    row("mosfet", SI, "v_peak", "v_ds", factor=0.75, memory=True),
    row("mosfet", SI, "i_rms", "i_d", factor=0.75, memory=True),
    row("mosfet", SI, "p_loss", "p_d", factor=0.5, memory=True),
    row("mosfet", SI, "t_j", "t_j_max", margin=40.0, limit=125.0, memory=True),
    row("mosfet", SI, "v_gs_peak", "v_gs", factor=0.6, memory=True),  # §2 VGS 60 %
    row("diode", ALL, "v_reverse_peak", "v_rrm", factor=0.7, memory=True),
    row("diode", ALL, "i_avg", "i_f_avg", factor=0.5, memory=True),
    row("diode", ALL, "t_j", "t_j_max", margin=40.0, limit=125.0, memory=True),
    row("capacitor", ("tantalum",), "v_peak", "v_rated", curve=((70.0, 0.5), (110.0, 0.3))),
    row("capacitor", CER, "v_peak", "v_rated", factor=0.6),
    row("capacitor", CER, "t_hotspot", limit=110.0),
    row("capacitor", ("film",), "v_peak", "v_rated", factor=0.6),
    row("capacitor", ("film",), "t_hotspot", limit=85.0),
    row("inductor", ALL, "t_hotspot", "t_max", margin=20.0, memory=True),
    row("transformer", ALL, "t_hotspot", "t_max", margin=20.0, memory=True),
]


def rac(v_al_ta, v_cer_film, i_f, v_r, t_j):
    """RAC "Electronic Derating for Optimum Performance", Severe / Benign columns, read
    in two published copies that agree (derating-sources §6, §7, §9, §11, §12, S10):
    capacitors (aluminium electrolytic and solid tantalum: voltage, T_max - 20 degC;
    ceramic and film: voltage, T_max - 10 degC) and the power-rectifier diode row
    (I_F, V_R, T_j limit)."""
    return [
        row("capacitor", ("al-electrolytic",), "v_peak", "v_rated", factor=v_al_ta),
        row("capacitor", ("al-electrolytic",), "t_hotspot", "t_max", margin=20.0),
        row("capacitor", ("tantalum",), "v_peak", "v_rated", factor=v_al_ta),
        row("capacitor", ("tantalum",), "t_hotspot", "t_max", margin=20.0),
        row("capacitor", CER, "v_peak", "v_rated", factor=v_cer_film),
        row("capacitor", CER, "t_hotspot", "t_max", margin=10.0),
        row("capacitor", ("film",), "v_peak", "v_rated", factor=v_cer_film),
        row("capacitor", ("film",), "t_hotspot", "t_max", margin=10.0),
        row("diode", ALL, "i_avg", "i_f_avg", factor=i_f),
        row("diode", ALL, "v_reverse_peak", "v_rrm", factor=v_r),
        row("diode", ALL, "t_j", limit=t_j),
    ]


# SD-18 Table 1A (silicon diodes), power rectifier row, I_F % / V_R % / T_j max degC per
# quality level and environment, read in the published web edition (derating-sources
# §6, S1); quality level 3 has no Severe column.
SD18 = {
    "sd-18-ql1-protected": (100, 95, 150), "sd-18-ql2-protected": (90, 80, 100),
    "sd-18-ql3-protected": (60, 50, 70), "sd-18-ql1-normal": (100, 90, 125),
    "sd-18-ql2-normal": (85, 75, 85), "sd-18-ql3-normal": (50, 30, 35),
    "sd-18-ql1-severe": (90, 85, 125), "sd-18-ql2-severe": (60, 30, 70),
}

# MIL-DTL-917 Table XIX (continued), FET rows, read in a published copy (derating-sources
# §2, S5): drain-gate voltage repetitive peak 0.7, non-repetitive 0.8; average drain
# current nominal 0.6, maximum 0.8.
MIL917 = [
    row("mosfet", ALL, "v_peak", "v_ds", factor=0.7, kinds=("steady", "overload")),
    row("mosfet", ALL, "v_peak", "v_ds", factor=0.8, kinds=("transient",)),
    row("mosfet", ALL, "i_rms", "i_d", factor=0.6, kinds=("steady",)),
    row("mosfet", ALL, "i_rms", "i_d", factor=0.8, kinds=("overload",)),
    row("mosfet", ALL, "v_gs_peak", "v_gs", factor=0.7),  # gate-source voltage row
]

# commercial: common practice (derating-sources §16) and the rows named in each rule's
# source; values not read in a published copy are flagged from memory.
COMMERCIAL = [
    row("mosfet", ALL, "v_peak", "v_ds", factor=0.8),  # §2 S22, §16
    row("mosfet", ALL, "i_rms", "i_d", factor=0.8),  # §2 S5 maximum drain current
    row("mosfet", ALL, "i_peak", "i_dm", factor=0.8, memory=True),  # common practice
    row("mosfet", ALL, "v_gs_peak", "v_gs", factor=0.85, memory=True),  # common practice
    row("mosfet", ALL, "e_avalanche", "e_as", factor=1.0, memory=True),  # §2 S23
    row("mosfet", ALL, "i_transition", "soa", factor=1.0, memory=True),  # §2 S24
    row("mosfet", ALL, "t_j", "t_j_max", margin=25.0, limit=125.0),  # §16
    row("diode", ALL, "v_reverse_peak", "v_rrm", factor=0.8),  # §16
    row("diode", ALL, "i_avg", "i_f_avg", factor=0.8, memory=True),  # between §6 values
    row("diode", ALL, "t_j", "t_j_max", margin=25.0, limit=125.0),  # §16
    row("capacitor", ("al-electrolytic",), "v_peak", "v_rated", factor=0.8),  # §7 RAC benign
    row("capacitor", ("al-polymer",), "v_peak", "v_rated", factor=0.9, memory=True),  # §17
    row("capacitor", ("tantalum",), "v_peak", "v_rated", factor=0.5),  # §9 S14, S6
    row("capacitor", ("tantalum-polymer",), "v_peak", "v_rated", factor=0.8),  # §10 S15
    row("capacitor", ("ceramic-class2",), "v_peak", "v_rated", factor=0.6),  # §11 S6
    row("capacitor", ("ceramic-class1",), "v_peak", "v_rated", factor=0.7),  # §11 RAC benign
    row("capacitor", ("film",), "v_peak", "v_rated", factor=0.7),  # §12 RAC benign
    row("capacitor", ALL, "i_ripple_rms", "i_ripple", factor=1.0),  # §7 S21
    # hold-up: needed at most 80 % of the lowest-tolerance capacitance (end of life at
    # -20 %, aluminium electrolytic makers' life definitions: common practice, memory)
    row("capacitor", ALL, "hold_up", None, limit=0.8, memory=True),
    row("capacitor", ("al-electrolytic", "al-polymer", "tantalum", "tantalum-polymer"),
        "t_hotspot", "t_max", margin=20.0),  # §7, §9 RAC
    row("capacitor", ("ceramic-class1", "ceramic-class2", "film"), "t_hotspot", "t_max",
        margin=10.0),  # §11, §12 RAC
    # ceramic self-heating at most 20 K: TDK FAQ, allowable ripple = 20 degC
    # self-heating (§11, S18; common practice)
    row("capacitor", CER, "t_rise", limit=20.0),
    # electrolytic life at least the design's required_life (§7 S20 life rule; the
    # minimum is the design's own, so the rule adds no value of its own)
    # (flagged from memory: the polymer x10-per-20 K rule, §8 MEMORY, and the 15-year cap)
    row("capacitor", ("al-electrolytic", "al-polymer"), "life", memory=True,
        minimum="required_life"),
    row("inductor", ALL, "i_peak", "i_sat", factor=0.8, memory=True),  # §16 magnetics
    row("inductor", ALL, "i_rms", "i_rms", factor=1.0),  # the rating itself
    row("inductor", ALL, "t_hotspot", "t_max", margin=20.0, memory=True),  # §13 memory
    row("transformer", ALL, "b_peak", "b_sat", factor=0.8, memory=True),  # §13, §16
    row("transformer", ALL, "t_hotspot", "t_max", margin=20.0, memory=True),  # §13 memory
]

REFERENCE = {
    "commercial": COMMERCIAL,
    "eee-inst-002-level1": EEE, "eee-inst-002-level2": EEE, "eee-inst-002-level3": EEE,
    "rac-severe": rac(0.7, 0.6, 0.9, 0.7, 95.0),
    "rac-benign": rac(0.8, 0.7, 1.0, 0.8, 115.0),
    "mil-dtl-917": MIL917,
}
for _name, (_i, _v, _t) in SD18.items():
    REFERENCE[_name] = [row("diode", ALL, "i_avg", "i_f_avg", factor=_i / 100),
                        row("diode", ALL, "v_reverse_peak", "v_rrm", factor=_v / 100),
                        row("diode", ALL, "t_j", limit=float(_t))]


def test_every_builtin_pack_has_a_reference_table():
    assert sorted(REFERENCE) == builtin_names()


@pytest.mark.parametrize("name", sorted(REFERENCE))
def test_pack_equals_reference_table(name):
    expected = sorted(REFERENCE[name], key=repr)
    got = pack_rows(name)
    for e, g in zip(expected, got):
        assert g == e, (name, e, g)
    assert len(got) == len(expected), name


@pytest.mark.parametrize("name", sorted(REFERENCE))
def test_pack_metadata_and_every_rule_sourced(name):
    """Each pack has a title, version and source; each rule a source, a document and a
    table (or, for a value from memory, at least a note or document saying where it
    would come from)."""
    p = load_policy(name)
    assert p.title and p.version and p.source
    for r in p.rules:
        assert r.source.strip(), r.id
        if not r.from_memory:
            assert r.document and r.table, (name, r.id)
        assert r.factor is None or 0 < r.factor <= 1
        assert r.curve is None or all(0 < f <= 1 for _, f in r.curve)
    details = p.details()
    assert details["from_memory"] == any(r.from_memory for r in p.rules)


def test_uncovered_kinds_are_named():
    """Where no published row exists, the pack says what it leaves uncovered: RAC rows
    for transistors and magnetics were cut off in the copies read (derating-sources S10),
    SD-18 packs cover diodes only (Table 1A)."""
    rac_sev = load_policy("rac-severe").details()["uncovered_kinds"]
    for q in schema.KIND_QUANTITIES["mosfet"]:
        assert f"mosfet.{q}" in rac_sev
    assert "transformer.b_peak" in rac_sev
    assert "capacitor.v_peak[al-polymer,tantalum-polymer]" in rac_sev
    sd = load_policy("sd-18-ql2-normal").details()["uncovered_kinds"]
    assert "inductor.t_hotspot" in sd and not any(u.startswith("diode.i_avg") for u in sd)
    eee = load_policy("eee-inst-002-level1").details()["uncovered_kinds"]
    assert "mosfet.v_peak[sic,gan]" in eee
    assert "capacitor.v_peak[al-electrolytic,al-polymer,tantalum-polymer]" in eee


def test_eee_tantalum_curve_values():
    """EEE-INST-002 Table 4 and note 3: 0.50 up to 70 degC, 0.30 at 110 degC, linear
    between (0.40 at 90 degC); above 110 degC the part may not be used."""
    rule = next(r for r in load_policy("eee-inst-002-level2").rules
                if r.id == "capacitor-v_peak-tantalum")
    f = rule.factor_at([25.0, 70.0, 90.0, 110.0, 110.5])
    assert f.tolist() == pytest.approx([0.5, 0.5, 0.4, 0.3, 0.0], abs=1e-12)
