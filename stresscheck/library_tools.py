"""Part library tools: validate a folder of part sheets; import a parts table.

``check_folder`` loads every sheet and reports every problem at once (one line per file).
``import_table`` turns a CSV/XLSX table (one row per part; columns ``id``, ``kind``,
``technology``, ``description`` and the sheet keys, e.g. ``v_ds``, ``r_ds_on``) into part
sheets. A cell holds a quantity with its unit ("16 mOhm"), or the column header carries the
unit in brackets ("r_ds_on [mOhm]") and the cell a number. A spread is given in columns
``<key>.tolerance`` (with ``<key>`` the nominal value) or ``<key>.min`` / ``<key>.max``.
Every generated sheet is validated as if read from disk before any file is written; nothing
is written if any row is wrong, and an existing file is never replaced.
"""

from __future__ import annotations

import re
import tempfile
from pathlib import Path

from . import schema
from .errors import InputError
from .fsio import write_text_atomic
from .parts import load_part, valid_part_id

HEADER_UNIT = re.compile(r"^\s*(?P<key>[A-Za-z0-9_.]+)\s*\[(?P<unit>[^\]]*)\]\s*$")
META = ("id", "kind", "technology", "description", "notes", "source")


def check_folder(folder) -> int:
    """Validate every ``*.toml`` sheet in ``folder``; print all problems; 2 if any, else 0."""
    folder = Path(folder)
    if not folder.is_dir():
        raise InputError(folder, None, "not a folder of part sheets")
    problems, count = [], 0
    for path in sorted(folder.glob("*.toml")):
        count += 1
        if path.is_symlink() or not path.is_file():
            problems.append(f"{path}: not a regular file")
            continue
        try:
            load_part(path)
        except InputError as exc:
            problems.append(str(exc))
    for line in problems:
        print(f"  {line}")
    print(f"{folder}: {count} part sheet(s), {len(problems)} with problems")
    return 2 if problems else 0


def _toml_string(text: str) -> str:
    out = ['"']
    for ch in text:
        if ch in '"\\':
            out.append("\\" + ch)
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _cell(value: str, unit: str | None) -> str:
    value = value.strip()
    return f"{value} {unit}".strip() if unit else value


def sheet_text(row: dict[str, str], where: str) -> tuple[str, str]:
    """(part id, TOML text) of one table row; InputError names the row and column."""
    columns: dict[str, tuple[str, str | None]] = {}
    for header, value in row.items():
        match = HEADER_UNIT.match(str(header))
        key, unit = (match["key"], match["unit"].strip()) if match else (str(header).strip(), None)
        if str(value).strip():
            columns[key.lower()] = (str(value), unit)
    part_id = columns.get("id", ("", None))[0].strip()
    if not valid_part_id(part_id):
        raise InputError(where, "id", f"invalid or missing part id {part_id!r}")
    kind = columns.get("kind", ("", None))[0].strip()
    if kind not in schema.KINDS:
        raise InputError(where, "kind", f"unknown kind {kind!r}; kinds: "
                         + ", ".join(schema.KINDS))
    lines = ["# Imported by stresscheck parts import: check every value against the "
             "datasheet.", "", f'schema = "{schema.PART_SCHEMA}"', f"id = {_toml_string(part_id)}",
             f'kind = "{kind}"']
    for key in ("technology", "description", "notes", "source"):
        if key in columns:
            lines.append(f"{key} = {_toml_string(columns[key][0].strip())}")
    sections: dict[str, list[str]] = {}
    tables = schema.PART_KEYS[kind]
    used = set(META)
    for key in columns:
        base, _, field = key.partition(".")
        if key in used or base in used:
            continue
        section = next((s for s, keys in tables.items() if base in keys), None)
        if section is None:
            raise InputError(where, key, f"not a key of a {kind} part sheet")
        used.add(base)
        nominal = columns.get(base)
        extras = {f: columns[f"{base}.{f}"] for f in ("tolerance", "min", "max")
                  if f"{base}.{f}" in columns}
        if extras:
            items = []
            if nominal:
                items.append(f"nom = {_toml_string(_cell(*nominal))}")
            items += [f"{f} = {_toml_string(_cell(*v))}" for f, v in extras.items()]
            text = "{ " + ", ".join(items) + " }"
        else:
            text = _toml_string(_cell(*nominal))
        sections.setdefault(section, []).append(f"{base} = {text}")
    for section in ("ratings", "electrical", "thermal"):
        if section in sections:
            lines += ["", f"[{section}]", *sections[section]]
    return part_id, "\n".join(lines) + "\n"


def import_table(table, out_dir) -> int:
    """Write one part sheet per row of ``table`` into ``out_dir`` (all or nothing)."""
    from .bom import read_table

    table, out_dir = Path(table), Path(out_dir)
    frame = read_table(table, "parts table")
    sheets: dict[str, str] = {}
    problems: list[str] = []
    with tempfile.TemporaryDirectory() as tmp:
        for index, row in frame.iterrows():
            where = f"{table}, row {int(index) + 2}"
            try:
                part_id, text = sheet_text(dict(row), where)
                if part_id in sheets:
                    raise InputError(where, "id", f"part id '{part_id}' is on two rows")
                probe = Path(tmp) / f"{part_id}.toml"
                probe.write_text(text, encoding="utf-8")
                load_part(probe)  # exactly what a later check will read
            except InputError as exc:
                problems.append(str(exc).replace(str(Path(tmp)) + "/", f"{where}: "))
                continue
            sheets[part_id] = text
    for part_id in sheets:
        target = out_dir / f"{part_id}.toml"
        if target.exists() or target.is_symlink():
            problems.append(f"{target}: exists; refusing to replace it")
    for line in problems:
        print(f"  {line}")
    if problems:
        print(f"{table}: {len(problems)} problem(s); nothing written")
        return 2
    out_dir.mkdir(parents=True, exist_ok=True)
    for part_id, text in sheets.items():
        write_text_atomic(out_dir / f"{part_id}.toml", text)
    print(f"{table}: {len(sheets)} part sheet(s) written to {out_dir}")
    return 0
