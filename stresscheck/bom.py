"""Bills of materials: read a BOM (CSV or XLSX) into part substitutions for a design.

A BOM row names designators and a part id. Designators may be lists and ranges:
``"Q1-Q4"``, ``"C3, C5"``, ``"R1-R3, R7"`` (a range keeps one prefix and counts its
number up). The columns are ``refs`` and ``part`` unless the design's ``[bom]`` table names
others (``refs_column``, ``part_column``); column names match without regard to case.
Foreign column names are mapped here, at the edge: nothing else in the tool sees them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError
from .substitution import Substitution

DEFAULT_COLUMNS = {"refs_column": "refs", "part_column": "part"}
MAX_RANGE = 10_000  # "R1-R99999" is a typing error, not a BOM line
_RANGE = re.compile(r"^(?P<prefix>[A-Za-z_]*)(?P<lo>\d+)-(?P=prefix)?(?P<hi>\d+)$")


@dataclass
class Bom:
    """The BOM's substitutions and the designators it names, in file order."""

    path: Path
    substitutions: list[Substitution]
    refs: list[str]


def expand_designators(text: str, path, key: str) -> list[str]:
    """``"Q1-Q4, C7"`` -> ``["Q1", "Q2", "Q3", "Q4", "C7"]``.

    Items are separated by commas, semicolons or blanks; a range ``<prefix><m>-<prefix><n>``
    (or ``<prefix><m>-<n>``) with m <= n expands to every number between.
    """
    refs: list[str] = []
    text = re.sub(r"\s*[-\u2013]\s*", "-", text.strip())  # "Q1 - Q4" is "Q1-Q4"
    for item in re.split(r"[,;\s]+", text):
        if not item:
            continue
        match = _RANGE.match(item)
        if match is None:
            refs.append(item)
            continue
        lo, hi = int(match["lo"]), int(match["hi"])
        if hi < lo or hi - lo >= MAX_RANGE:
            raise InputError(path, key, f"designator range {item!r} does not count up "
                             f"(or spans more than {MAX_RANGE} refs)")
        width = len(match["lo"]) if match["lo"].startswith("0") else 0
        refs += [f"{match['prefix']}{n:0{width}d}" for n in range(lo, hi + 1)]
    return refs


def read_table(path: Path, what: str):
    """A CSV or XLSX file as a pandas DataFrame of strings (first sheet of a workbook)."""
    import pandas as pd

    path = Path(path)
    if not path.exists():
        raise InputError(path, None, f"{what} does not exist")
    if not path.is_file():
        from .fsio import file_kind
        kind = file_kind(path.stat().st_mode)
        via = "a symbolic link to " if path.is_symlink() else ""
        raise InputError(path, None, f"{what} is {via}{kind}, not a regular file")
    suffix = path.suffix.lower()
    try:
        if suffix in (".xlsx", ".xlsm"):
            frame = pd.read_excel(path, dtype=str, keep_default_na=False, engine="openpyxl")
        elif suffix in (".csv", ".txt"):
            frame = pd.read_csv(path, dtype=str, keep_default_na=False,
                                skipinitialspace=True, encoding="utf-8-sig")
        else:
            raise InputError(path, None, f"{what} must be a .csv or .xlsx file")
    except InputError:
        raise
    except Exception as exc:  # pandas and openpyxl raise many types for unreadable files
        raise InputError(path, None, f"cannot read the {what}: "
                         f"{' '.join(str(exc).split())[:200]}") from None
    return frame


def find_column(frame, name: str, path, setting: str):
    """The frame's column called ``name`` without regard to case; InputError if absent."""
    for column in frame.columns:
        if str(column).strip().lower() == name.strip().lower():
            return column
    raise InputError(path, setting, f"no column '{name}' in the BOM (columns: "
                     + ", ".join(str(c) for c in frame.columns) + ")")


def read_bom(path, columns: dict | None = None) -> Bom:
    """Read a BOM file into substitutions (one per designator).

    Parameters
    ----------
    path : path of the CSV or XLSX file
    columns : the design's ``[bom]`` table (``refs_column``, ``part_column``), if any

    Raises
    ------
    InputError
        Unreadable file, missing column, an empty or unreadable designator, a row without
        a part, or a designator listed twice (names the file, row and column).
    """
    path = Path(path)
    names = {**DEFAULT_COLUMNS, **(columns or {})}
    frame = read_table(path, "BOM")
    refs_col = find_column(frame, names["refs_column"], path, "bom.refs_column")
    part_col = find_column(frame, names["part_column"], path, "bom.part_column")
    subs: list[Substitution] = []
    seen: dict[str, int] = {}
    for index, row in frame.iterrows():
        line = int(index) + 2  # the header is row 1, as a spreadsheet numbers it
        refs_text, part_id = str(row[refs_col]).strip(), str(row[part_col]).strip()
        if not refs_text and not part_id:
            continue  # blank separator row
        refs_key = f"row {line}, column '{refs_col}'"
        part_key = f"row {line}, column '{part_col}'"
        if not refs_text:
            raise InputError(path, refs_key, "no designator on a row that names a part")
        if not part_id:
            raise InputError(path, part_key, f"no part for {refs_text}")
        for ref in expand_designators(refs_text, path, refs_key):
            if ref in seen:
                raise InputError(path, refs_key, f"designator '{ref}' is also on row "
                                 f"{seen[ref]}")
            seen[ref] = line
            subs.append(Substitution(ref, part_id, str(path), part_key))
    return Bom(path, subs, list(seen))


def bom_columns(design_path: Path) -> dict:
    """The design file's optional ``[bom]`` table, checked."""
    from .tomlio import check_keys, read_toml, require_str

    doc = read_toml(design_path, "design file")
    table = doc.get("bom")
    if table is None:
        return {}
    if not isinstance(table, dict):
        raise InputError(design_path, "bom", "[bom] must be a table")
    check_keys(table, tuple(DEFAULT_COLUMNS), design_path, "bom.")
    return {key: require_str(table, key, design_path, "bom.") for key in table}
