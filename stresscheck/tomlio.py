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
from .fsio import NotRegularFile, read_regular

_LINE = re.compile(r"\(at line (\d+), column (\d+)\)")
_END = re.compile(r"\s*\(at end of document\)")
MAX_INPUT_BYTES = 8 * 1024 * 1024  # no design, part sheet or policy comes near this
_BOM = b"\xef\xbb\xbf"


def _read_bytes(path: Path, what: str) -> bytes:
    try:
        if path.is_dir():
            raise InputError(path, None, f"{what} expected, but this is a folder")
        raw = read_regular(path, MAX_INPUT_BYTES + 1)
    except NotRegularFile as exc:
        raise InputError(path, None, f"{what} is {exc.describe()}, not a regular file; "
                         f"a {what} must be a regular file") from None
    except FileNotFoundError:
        raise InputError(path, None, f"{what} not found") from None
    except IsADirectoryError:
        raise InputError(path, None, f"{what} expected, but this is a folder") from None
    except OSError as exc:
        raise InputError(path, None, f"cannot read {what}: {exc.strerror or exc}") from None
    if len(raw) > MAX_INPUT_BYTES:
        raise InputError(path, None, f"{what} is larger than {MAX_INPUT_BYTES // 2**20} MiB; "
                         "this is not a stresscheck input file")
    return raw


def read_text(path: str | Path, what: str) -> str:
    """The UTF-8 text of an input file (a leading byte-order mark is dropped)."""
    path = Path(path)
    raw = _read_bytes(path, what)
    if raw.startswith(_BOM):  # Windows editors add one; it carries no meaning in UTF-8
        raw = raw[len(_BOM):]
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError(path, None, f"{what} is not UTF-8 text (bad byte 0x"
                         f"{raw[exc.start]:02x}); save it as UTF-8", line=line) from None
    if not text.strip():
        raise InputError(path, None, f"{what} is empty")
    return text


def read_toml(path: str | Path, what: str) -> dict:
    """Read a TOML file; ``what`` ("design file", "part sheet", ...) is used in messages.

    Every failure is an InputError naming the file (and the line for syntax errors):
    missing file, folder, unreadable, too large, not UTF-8, empty, TOML syntax.
    """
    path = Path(path)
    text = read_text(path, what)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _syntax_error(path, text, str(exc)) from None
    except RecursionError:  # absurdly deep nesting of arrays or inline tables
        raise InputError(path, None, "TOML syntax error: values nested too deeply") from None
    if not doc:
        raise InputError(path, None, f"{what} holds no keys (only comments or blank lines)")
    return doc


def _syntax_error(path: Path, text: str, msg: str) -> InputError:
    m = _LINE.search(msg)
    line = int(m.group(1)) if m else None
    detail = _LINE.sub("", msg)
    if m:
        detail = f"{detail.strip()} (column {m.group(2)})"
    elif _END.search(msg):
        detail = _END.sub("", msg).strip() + " at the end of the file"
        line = max(text.count("\n") + (0 if text.endswith("\n") else 1), 1)
    if "Unterminated string" in msg or "character '\\n'" in msg:
        detail = detail.strip() + "; is a string not closed on its line?"
    if any(word in msg.lower() for word in ("overwrite", "redefine", "declare")):
        dup = KeyLines(text).duplicate  # the parser names no position: find it here
        if dup is not None:
            key, first, second = dup
            return InputError(path, key, f"TOML syntax error: key defined twice (first on "
                              f"line {first})", line=second)
    return InputError(path, None, f"TOML syntax error: {detail.strip()}", line=line)


def shorten(value, limit: int = 60) -> str:
    """A value as it may be echoed in a message: repr-quoted (control characters
    escaped, so a message cannot carry terminal escape sequences) and cut to ``limit``."""
    text = repr(value)
    if len(text) <= limit:
        return text
    if isinstance(value, str):
        return text[: limit - 4] + "...'" + f" ({len(value)} characters)"
    return text[: limit - 3] + "..."


def suggest(name: str, valid) -> str:
    """' (did you mean 'x'?)' for the nearest valid name, or a list of the valid names."""
    valid = sorted(valid)
    if not isinstance(name, str) or len(name) > 100:
        return "; valid: " + ", ".join(valid)
    close = difflib.get_close_matches(name, valid, n=1, cutoff=0.6)
    if close:
        return f"; did you mean '{close[0]}'?"
    return "; valid: " + ", ".join(valid)


def check_keys(table: dict, valid, path, prefix: str = "") -> None:
    """Reject keys of ``table`` that are not in ``valid``, suggesting the nearest one."""
    for key in table:
        if key not in valid:
            shown = key if len(key) <= 60 and key.isprintable() else shorten(key)
            raise InputError(path, f"{prefix}{shown}", "unknown key" + suggest(key, valid))


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
        raise InputError(path, full, f"expected a string, got {type_name(value)}")
    if choices is not None and value not in choices:
        raise InputError(path, full, f"unknown value {shorten(value)}"
                         + suggest(value, choices))
    return value


def optional_text(table: dict, key: str, path, prefix: str = "", *,
                  max_length: int | None = None, single_line: bool = False) -> str | None:
    """A free-text key (name, description, notes): a string if present, else None.

    ``single_line`` refuses control characters (newlines, escapes): for names that are
    printed on a terminal or in a report header.
    """
    if key not in table:
        return None
    full = f"{prefix}{key}"
    value = table[key]
    if not isinstance(value, str):
        raise InputError(path, full, f"expected a string, got {type_name(value)}")
    if max_length is not None and len(value) > max_length:
        raise InputError(path, full, f"text of {len(value)} characters; at most "
                         f"{max_length} expected")
    if single_line and not value.isprintable():
        raise InputError(path, full, "must be one line of printable text (no tabs, "
                         "newlines or control characters)")
    return value


def type_name(value) -> str:
    """TOML's name for the type of a parsed value, for messages."""
    import datetime as _dt
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, int):
        return "an integer"
    if isinstance(value, float):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, (_dt.date, _dt.time, _dt.datetime)):
        return "a date or time"
    return type(value).__name__


# ---------------------------------------------------------------- key -> line lookup

class KeyLines:
    """Line numbers of the keys of a TOML text, for messages.

    TOML parsers give no positions for keys, so this light scanner follows table headers
    ``[a.b]``, arrays of tables ``[[components]]`` (numbered ``components[0]``, ...) and
    ``key = value`` lines, skipping strings, comments and multi-line arrays. It is used
    only to add a line to a message; where it cannot tell, it gives None.
    """

    def __init__(self, text: str):
        self.lines: dict[str, int] = {}
        self.duplicate: tuple[str, int, int] | None = None
        try:
            self._scan(text)
        except Exception:  # never let a message helper fail
            pass

    def line(self, key: str | None) -> int | None:
        """Line of ``key`` ("operating.input_voltage.min", "components[2].part"), or of
        the nearest enclosing table or key that is in the file."""
        while key:
            if key in self.lines:
                return self.lines[key]
            cut = max(key.rfind("."), key.rfind("["))
            if cut <= 0:
                return None
            key = key[:cut]
        return None

    def _record(self, key: str, lineno: int) -> None:
        if key in self.lines:
            if self.duplicate is None:
                self.duplicate = (key, self.lines[key], lineno)
            return
        self.lines[key] = lineno

    def _scan(self, text: str) -> None:
        counts: dict[str, int] = {}
        prefix = ""
        depth = 0
        string_end: str | None = None  # closing delimiter of an open multi-line string
        for lineno, line in enumerate(text.splitlines(), start=1):
            pos = 0
            if string_end is not None:
                end = line.find(string_end)
                if end < 0:
                    continue
                pos, string_end = end + 3, None
            if depth > 0 or pos > 0:
                depth, string_end = _scan_value(line, pos, depth)
                continue
            stripped = line.strip()
            if not stripped or stripped.startswith("#"):
                continue
            if stripped.startswith("[["):
                name = _join_key(stripped[2:stripped.index("]]")])
                name = _index_first(name, counts)
                index = counts.get(name, 0)
                counts[name] = index + 1
                self.lines.setdefault(name, lineno)
                prefix = f"{name}[{index}]"
                self.lines[prefix] = lineno
                prefix += "."
                continue
            if stripped.startswith("["):
                name = _index_first(_join_key(stripped[1:stripped.index("]")]), counts)
                self._record(name, lineno)
                prefix = name + "."
                continue
            eq = _find_equals(line)
            if eq < 0:
                continue
            key = prefix + _join_key(line[:eq])
            self._record(key, lineno)
            depth, string_end = _scan_value(line, eq + 1, 0, key, self, lineno)


def _index_first(name: str, counts: dict) -> str:
    """[components.extra] after [[components]] is a table inside the last element."""
    head, _, rest = name.partition(".")
    if head in counts and rest:
        return f"{head}[{counts[head] - 1}].{rest}"
    return name


def _join_key(raw: str) -> str:
    parts, buf, quote = [], "", None
    for ch in raw.strip():
        if quote:
            if ch == quote:
                quote = None
            else:
                buf += ch
        elif ch in "\"'":
            quote = ch
        elif ch == ".":
            parts.append(buf.strip())
            buf = ""
        else:
            buf += ch
    parts.append(buf.strip())
    return ".".join(parts)


def _find_equals(line: str) -> int:
    quote = None
    for i, ch in enumerate(line):
        if quote:
            if ch == quote:
                quote = None
        elif ch in "\"'":
            quote = ch
        elif ch == "=":
            return i
        elif ch == "#":
            return -1
    return -1


def _scan_value(line: str, pos: int, depth: int, key: str | None = None,
                owner: KeyLines | None = None, lineno: int = 0):
    """Bracket depth after ``line[pos:]`` and the delimiter of a multi-line string left
    open; keys of a one-line inline table ``{ min = .., max = .. }`` are recorded."""
    i, n = pos, len(line)
    inline: list[str] = []  # key path of open inline tables on this line
    last = key
    while i < n:
        ch = line[i]
        if line.startswith('"""', i) or line.startswith("'''", i):
            delim = line[i:i + 3]
            end = line.find(delim, i + 3)
            if end < 0:
                return depth, delim
            i = end + 3
            continue
        if ch in "\"'":
            j = i + 1
            while j < n and line[j] != ch:
                j += 2 if (ch == '"' and line[j] == "\\") else 1
            i = j + 1
            continue
        if ch == "#":
            break
        if ch in "[{":
            depth += 1
            if ch == "{" and owner is not None and last is not None:
                inline.append(last)
        elif ch in "]}":
            depth -= 1
            if ch == "}" and inline:
                inline.pop()
        elif ch == "=" and inline and owner is not None:
            start = max(line.rfind("{", 0, i), line.rfind(",", 0, i)) + 1
            last = inline[-1] + "." + _join_key(line[start:i])
            owner._record(last, lineno)
        i += 1
    return max(depth, 0), None


def locate(path, key: str | None) -> int | None:
    """Line of ``key`` in the TOML file ``path`` (see `KeyLines`), or None."""
    if not key or path is None:
        return None
    try:
        text = read_text(path, "file")
    except InputError:
        return None
    return KeyLines(text).line(key)
