"""Reading TOML input files with errors that name the file and line."""

from __future__ import annotations

import difflib
import re
from pathlib import Path

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib  # type: ignore[no-redef]

from .errors import InputError

_LINE = re.compile(r"at line (\d+)")


def read_toml(path: str | Path, what: str) -> dict:
    """Read a TOML file; ``what`` ("design file", "part sheet", ...) is used in messages."""
    path = Path(path)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise InputError(path, None, f"{what} not found") from None
    except IsADirectoryError:
        raise InputError(path, None, f"{what} expected, but this is a folder") from None
    except OSError as exc:
        raise InputError(path, None, f"cannot read {what}: {exc.strerror}") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError(path, None, "file is not UTF-8 text", line=line) from None
    if not text.strip():
        raise InputError(path, None, f"{what} is empty")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _LINE.search(msg)
        line = int(m.group(1)) if m else None
        detail = re.sub(r"\s*\(at line \d+, column \d+\)", "", msg)
        raise InputError(path, None, f"TOML syntax error: {detail}", line=line) from None


def suggest(name: str, valid) -> str:
    """' (did you mean 'x'?)' for the nearest valid name, or a list of the valid names."""
    valid = sorted(valid)
    close = difflib.get_close_matches(name, valid, n=1, cutoff=0.6)
    if close:
        return f"; did you mean '{close[0]}'?"
    return "; valid: " + ", ".join(valid)


def check_keys(table: dict, valid, path, prefix: str = "") -> None:
    """Reject keys of ``table`` that are not in ``valid``, suggesting the nearest one."""
    for key in table:
        if key not in valid:
            raise InputError(path, f"{prefix}{key}", "unknown key" + suggest(key, valid))


def require_table(doc: dict, key: str, path, *, optional: bool = False) -> dict:
    value = doc.get(key)
    if value is None:
        if optional:
            return {}
        raise InputError(path, key, f"missing table [{key}]")
    if not isinstance(value, dict):
        raise InputError(path, key, f"[{key}] must be a table")
    return value


def require_str(table: dict, key: str, path, prefix: str = "", *, optional=False,
                choices=None) -> str | None:
    full = f"{prefix}{key}"
    if key not in table:
        if optional:
            return None
        raise InputError(path, full, "missing key")
    value = table[key]
    if not isinstance(value, str):
        raise InputError(path, full, f"expected a string, got {type(value).__name__}")
    if choices is not None and value not in choices:
        raise InputError(path, full, f"unknown value '{value}'" + suggest(value, choices))
    return value
