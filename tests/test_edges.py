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


# --------------------------------------------------------------------------- part sheets

def _sheet(inputs, pid, folder: Path, **electrical) -> Path:
    """Copy part ``pid`` of ``inputs`` into ``folder`` with ``electrical`` changed."""
    import tomllib

    import tomli_w
    doc = tomllib.loads(inputs.parts[pid].read_text(encoding="utf-8"))
    doc["electrical"].update(electrical)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{pid}.toml"
    path.write_text(tomli_w.dumps(doc), encoding="utf-8")
    return path


def test_shadowed_part_ids_are_reported(tmp_path):
    """The same part id in two --parts folders (and in parts/ beside the design): the
    first folder's sheet is used, and the CLI summary, results.json `inputs` (`path`,
    `shadowed`) and the notes shown in the reports say which sheet won and which were
    shadowed.

    Source: the contract's search order (--parts folders, parts/ beside the design, the
    shipped library); the issue (no silent substitution of part sheets).
    """
    import hashlib
    inputs = write_inputs(tmp_path / "case")
    first = _sheet(inputs, "t-fet", tmp_path / "libA", r_ds_on="20 mohm")
    _sheet(inputs, "t-fet", tmp_path / "libB", r_ds_on="5 mohm")
    status, out, err = run_cli(inputs.args("--parts", tmp_path / "libA",
                                           "--parts", tmp_path / "libB"))
    assert status in (0, 1), err
    doc = json.loads((inputs.out / "results.json").read_text(encoding="utf-8"))
    entries = {i["name"]: i for i in doc["inputs"] if i["role"] == "part"}
    fet = entries["t-fet"]
    assert fet["path"] == "../libA/t-fet.toml"
    assert fet["shadowed"] == ["../libB/t-fet.toml", "parts/t-fet.toml"]
    assert fet["sha256"] == hashlib.sha256(first.read_bytes()).hexdigest()
    assert entries["t-diode"]["path"] == "parts/t-diode.toml"
    assert "shadowed" not in entries["t-diode"]
    assert "part 't-fet': using ../libA/t-fet.toml, shadowing ../libB/t-fet.toml, " \
           "parts/t-fet.toml" in out
    assert any("t-fet" in n["text"] and "shadows" in n["text"] for n in doc["notes"])


def test_part_from_the_shipped_library_has_its_path(tmp_path):
    """A sheet read from the shipped library is named as such, never by an absolute
    path (results.json stays independent of where the tool is installed).

    Source: the issue (results.json inputs give the path of each sheet used); the
    determinism rule of results.py (no absolute paths).
    """
    from stresscheck import cli
    status, _, err = run_cli(["check", cli.demo_design(), "--out", tmp_path / "o"])
    assert status in (0, 1), err
    doc = json.loads((tmp_path / "o" / "results.json").read_text(encoding="utf-8"))
    paths = [i["path"] for i in doc["inputs"] if i["role"] == "part"]
    assert paths and all(p.startswith("(shipped library)/") for p in paths), paths


def _fifo(path: Path) -> Path:
    os.mkfifo(path)
    return path


NOT_REGULAR = {
    "fifo": (lambda p, tmp: _fifo(p), "FIFO"),
    "link-to-fifo": (lambda p, tmp: p.symlink_to(_fifo(tmp / "pipe")),
                     "symbolic link to a FIFO"),
    "link-to-device": (lambda p, tmp: p.symlink_to("/dev/null"),
                       "symbolic link to a character device"),
    "dangling-link": (lambda p, tmp: p.symlink_to(tmp / "gone.toml"), "does not exist"),
    "folder": (lambda p, tmp: p.mkdir(), "folder"),
}


@pytest.mark.skipif(sys.platform == "win32", reason="FIFOs and /dev/null are POSIX")
@pytest.mark.parametrize("what", sorted(NOT_REGULAR))
def test_part_file_that_is_not_a_regular_file_is_an_error(tmp_path, what):
    """A part file in a --parts folder that is a FIFO, a device, a link to one, a
    dangling link or a folder is an error naming it (exit 2), never skipped in favour of
    the sheet of the same id further down the search order.

    Source: the issue (silent substitution of part sheets); the contract's exit status 2
    for an unusable input.
    """
    inputs = write_inputs(tmp_path / "case")
    lib = tmp_path / "lib"
    lib.mkdir()
    make, fragment = NOT_REGULAR[what]
    make(lib / "t-fet.toml", tmp_path)
    status, _, err = run_cli(inputs.args("--parts", lib))
    assert_input_error(status, err, lib / "t-fet.toml", None, fragment, "components[0].part")


# --------------------------------------------------------------------------- messages

def _demo_with(tmp_path, old, new) -> Path:
    """The demo design with one line changed, written to ``tmp_path``."""
    from stresscheck import cli
    text = cli.demo_design().read_text(encoding="utf-8")
    assert old in text
    path = tmp_path / "design.toml"
    path.write_text(text.replace(old, new), encoding="utf-8")
    return path


@pytest.mark.parametrize("old,new,key,fragments", [
    # absurd surge: was blamed on 'operating' with a magnetizing-current message
    ('input_surge = "100 V"', 'input_surge = "1e3 kV"', "operating.input_surge",
     ("1e+06 V", "plausible bound of 100000 V")),
    # absurd frequency: was blamed on 'converter.dead_time'
    ('switching_frequency = "200 kHz"', 'switching_frequency = "1 THz"',
     "converter.switching_frequency", ("1e+12 Hz", "plausible bound of 1e+09 Hz")),
    ('switching_frequency = "200 kHz"', 'switching_frequency = "10 Hz"',
     "converter.switching_frequency", ("10 Hz", "plausible bound of 100 Hz")),
    ('output_current = { min = "3 A", max = "20 A" }',
     'output_current = { min = "3 A", max = "2e3 kA" }', "operating.output_current",
     ("2e+06 A", "plausible bound")),
    ('ambient_temperature = { min = "-40 degC", max = "70 degC" }',
     'ambient_temperature = { min = "-40 degC", max = "700 degC" }',
     "operating.ambient_temperature", ("700 degC", "plausible bound of 300 degC")),
    # (a 90 kV surge on the demo used to be refused at the surge corner because one
    # rectifier stopped in the freewheel; that regime is now modelled (bridge_light), so
    # the case no longer breaks the model and needs another vehicle)
    # dead time and frequency both plausible, together impossible: both named
    ('dead_time = "80 ns"', 'dead_time = "3 us"', "converter.dead_time",
     ("no on-time", "converter.switching_frequency", "200000 Hz")),
])
def test_message_names_the_key_whose_value_is_wrong(tmp_path, old, new, key, fragments):
    """An absurd value is refused naming its own key and the plausible bound it breaks,
    before any model runs; a model failure at the surge corner is blamed on
    operating.input_surge; a dead time too long for the frequency names both values.

    Source: the issue (messages that point at the wrong key); the bounds are this
    project's plausibility table (schema.DESIGN_BOUNDS, common practice, from memory).
    """
    design = _demo_with(tmp_path, old, new)
    status, _, err = run_cli(["check", design, "--out", tmp_path / "out"])
    assert_input_error(status, err, design, key, *fragments)
    assert not (tmp_path / "out").exists()


def test_current_limit_corner_failure_names_current_limit(tmp_path):
    """A regulation failure found only at the current-limit corner is blamed on
    operating.current_limit (its corner), not on the whole [operating] table.

    Source: the issue (each message names the key whose value is wrong); the contract
    (overload corners are the ones at current_limit).
    """
    import numpy as np

    from stresscheck.corners import CornerSet
    from stresscheck.engine import CORNER_KEYS, _first_corner
    kind = np.array(["steady", "overload", "transient", "overload"], dtype=object)
    corners = CornerSet(["c1", "c2", "c3", "c4"], kind, {}, {})
    assert _first_corner(corners, np.array([False, True, True, True])) == 1
    assert _first_corner(corners, np.array([False, True, True, True]),
                         np.array([0, 1, 5, 3.0])) == 3
    assert _first_corner(corners, np.array([True, True, False, False])) == 0
    assert CORNER_KEYS["overload"][0] == "operating.current_limit"
    assert CORNER_KEYS["transient"][0] == "operating.input_surge"


@pytest.mark.skipif(sys.platform == "win32", reason="symbolic links need privileges")
@pytest.mark.parametrize("layout,fragment", [
    ("dangling", "the output folder is a symbolic link to"),
    ("dangling-parent", "(a parent of it) is a symbolic link to"),
    ("file-parent", "is a file, not a folder"),
])
def test_out_on_a_dangling_link_says_so(tmp_path, layout, fragment):
    """--out on a dangling symbolic link (or below one, or below a file) says what is
    wrong with --out instead of the operating system's bare "File exists".

    Source: the issue (`--out` on a dangling link says "File exists").
    """
    inputs = write_inputs(tmp_path / "case")
    if layout == "dangling":
        out = tmp_path / "link"
        out.symlink_to(tmp_path / "missing")
    elif layout == "dangling-parent":
        (tmp_path / "link").symlink_to(tmp_path / "missing")
        out = tmp_path / "link" / "reports"
    else:
        (tmp_path / "plain").write_text("x", encoding="utf-8")
        out = tmp_path / "plain" / "reports"
    status, _, err = run_cli(["check", inputs.design, "--policy", inputs.policy,
                              "--out", out])
    assert_input_error(status, err, out, None, "--out", fragment)
    assert "File exists" not in err
    assert not (tmp_path / "missing").exists()


# --------------------------------------------------------------------------- runaway

def test_rows_from_an_unconverged_electro_thermal_loop_are_not_computed(tmp_path):
    """Switches whose electro-thermal loop runs away at the current-limit corners: their
    t_j is a fail, and no row that counts such a corner passes (or is info) on values
    from the unconverged loop: i_rms and p_loss of the runaway switches, and every other
    row, are not-computed with the reason, unless the corners that did converge already
    make the row fail (a fail stays a fail, with the reason added).

    Source: the project rule "a stress not computed is reported as not-computed, never as
    a pass"; runaway criterion of a resistive device, T = T_a + R_th·R(T)·I² with
    R(T) = R_25·(1 + α·(T - 25 K)) having no finite fixed point once R_th·α·R_25·I²
    approaches 1 (textbook fixed-point argument; the engine clamps at 1000 degC).
    Here R_25 = 100 mΩ, α = 1 %/K, R_th = 1 + 60 K/W: it runs away at 12 A only.
    """
    from builders import bridge_parts
    design = rich_design()
    design["components"][0]["r_th_ca"] = "60 K/W"
    parts = bridge_parts(c_in={"min": "80 uF", "max": "120 uF"},
                         c_out={"nom": "1000 uF", "tolerance": "20 %"},
                         l_m={"nom": "200 uH", "tolerance": "25 %"})
    parts["t-fet"]["electrical"].update(r_ds_on="100 mohm", r_ds_on_tc="1 %/K")
    parts["t-diode"]["ratings"]["v_rrm"] = "40 V"  # fails at every corner
    inputs = write_inputs(tmp_path, design, parts)
    status, out, err = run_cli(inputs.args())
    assert status == 1, err
    doc = json.loads((inputs.out / "results.json").read_text(encoding="utf-8"))
    kinds = {c["id"]: c["kind"] for c in doc["corners"]}
    rows = {(c["ref"], c["quantity"]): c for c in doc["checks"]}
    for ref in ("Q1", "Q2", "Q3", "Q4"):
        assert rows[(ref, "t_j")]["status"] == "fail"
        assert "thermal runaway" in rows[(ref, "t_j")]["note"]
        for q in ("p_loss", "i_peak", "v_peak"):
            row = rows[(ref, q)]
            assert row["status"] == "not-computed", row
            assert row["stress"] is None and row["ratio"] is None
            assert f"thermal runaway of Q1, Q2, Q3, Q4" in row["note"]
            assert kinds[row["corner"]] == "overload"  # the runaway is at the limit
        # i_d derated with the case temperature (linear to zero at T_j,max, common
        # practice): where the loop converged with the case above T_j,max the rating is
        # zero, so the row fails on converged corners already (a fail stays a fail)
        row = rows[(ref, "i_rms")]
        assert row["status"] == "fail" and row["allowed"] == 0.0, row
        assert "derated" in row["note"] and "thermal runaway" in row["note"]
        assert kinds[row["corner"]] != "overload"
    for ref in ("D1", "D2"):  # fails where the loop converged: stays a fail
        row = rows[(ref, "v_reverse_peak")]
        assert row["status"] == "fail" and row["ratio"] > 1
        assert "thermal runaway" in row["note"]
        assert kinds[row["corner"]] != "overload"
    assert all(c["status"] in ("fail", "not-computed") for c in doc["checks"])


def test_runaway_switch_has_no_passing_current_or_loss_row(tmp_path):
    """The demo design with its bridge switches on a 400 K/W thermal path: the loop runs
    away; the switches' i_rms and p_loss (a pass and an info row before) are
    not-computed with the reason, and their t_j is a fail.

    Source: the project rule "a stress not computed is reported as not-computed, never as
    a pass"; the runaway criterion as in the test above.
    """
    design = _demo_with(tmp_path, 'r_th_ca = "10 K/W"', 'r_th_ca = "400 K/W"')
    status, _, err = run_cli(["check", design, "--out", tmp_path / "out"])
    assert status == 1, err
    doc = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    rows = {(c["ref"], c["quantity"]): c for c in doc["checks"]}
    assert rows[("Q1", "t_j")]["status"] == "fail"
    assert rows[("Q1", "p_loss")]["status"] == "not-computed"
    assert "thermal runaway of Q1" in rows[("Q1", "p_loss")]["note"]
    # i_d derated with the case temperature: zero where the converged case is above
    # T_j,max, so i_rms already fails on converged corners (never a pass)
    i_rms = rows[("Q1", "i_rms")]
    assert i_rms["status"] == "not-computed" or (i_rms["status"] == "fail"
                                                  and "derated" in i_rms["note"])
    assert "thermal runaway of Q1" in i_rms["note"]
    assert doc["summary"]["pass"] == 0 and doc["summary"]["info"] == 0
