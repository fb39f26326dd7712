"""Safe operating area of a MOSFET: the sheet's ``[[soa]]`` lines and the transition check.

A part sheet may give its SOA as lines of (V_DS, I_D) points, one line per single-pulse
width, at 25 °C case (as makers draw them)::

    [[soa]]
    pulse_width = "10 us"          # or "dc"
    v_ds = ["10 V", "100 V", "600 V"]
    i_d = ["40 A", "40 A", "6 A"]

The operating point that matters in a hard-switched converter is the switching
transition: the off-state voltage and the switched current overlap for about t_fall at
turn-off (t_rise at a hard turn-on). That point is checked against the line of the
nearest pulse width not shorter than the transition (log–log interpolation between the
points), with the current derated for the solved case temperature (``soa_current``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .thermal import derated_current
from .tomlio import check_keys, shorten, type_name
from .units import parse_quantity

T_SOA = 25.0  # [degC] case temperature of the makers' SOA lines


@dataclass(frozen=True)
class SoaLine:
    """One SOA line: ``pulse_width`` [s] (inf for DC), points ``v`` [V] rising, ``i`` [A]."""

    pulse_width: float
    v: tuple[float, ...]
    i: tuple[float, ...]


@dataclass(frozen=True)
class SoaTable:
    """The SOA lines of one part, shortest pulse first."""

    lines: tuple[SoaLine, ...]

    def line_for(self, duration: float) -> SoaLine | None:
        """The line of the shortest pulse width not below ``duration`` [s], or None."""
        for line in self.lines:
            if line.pulse_width >= duration:
                return line
        return None

    def __repr__(self) -> str:
        return "SoaTable(" + ", ".join(
            "dc" if np.isinf(ln.pulse_width) else f"{ln.pulse_width:g} s"
            for ln in self.lines) + ")"


def load_soa(raw, path) -> SoaTable:
    """``[[soa]]`` of a part sheet -> SoaTable, every error naming the file and key."""
    if not isinstance(raw, list) or not raw:
        raise InputError(path, "soa", "expected [[soa]] tables with pulse_width, v_ds and "
                         f"i_d, got {type_name(raw)}")
    lines = []
    for n, table in enumerate(raw, start=1):
        where = f"soa[{n}]"
        if not isinstance(table, dict):
            raise InputError(path, where, f"must be a table, got {type_name(table)}")
        check_keys(table, ("pulse_width", "v_ds", "i_d"), path, prefix=f"{where}.")
        for key in ("pulse_width", "v_ds", "i_d"):
            if key not in table:
                raise InputError(path, f"{where}.{key}", "missing")
        pw_raw = table["pulse_width"]
        if isinstance(pw_raw, str) and pw_raw.strip().lower() == "dc":
            pw = np.inf
        else:
            pw = parse_quantity(pw_raw, "time", path, f"{where}.pulse_width")
            if pw <= 0:
                raise InputError(path, f"{where}.pulse_width", "must be greater than zero")
        v_raw, i_raw = table["v_ds"], table["i_d"]
        if (not isinstance(v_raw, list) or not isinstance(i_raw, list)
                or len(v_raw) != len(i_raw) or len(v_raw) < 2):
            raise InputError(path, where, "v_ds and i_d must be lists of the same length, "
                             "at least two points")
        v = [parse_quantity(x, "voltage", path, f"{where}.v_ds") for x in v_raw]
        i = [parse_quantity(x, "current", path, f"{where}.i_d") for x in i_raw]
        if min(v) <= 0 or min(i) <= 0:
            raise InputError(path, where, "every point must have V_DS and I_D greater than "
                             "zero (the lines are read on log-log axes)")
        if any(b <= a for a, b in zip(v, v[1:])):
            raise InputError(path, f"{where}.v_ds", f"must rise from point to point, got "
                             f"{shorten(v_raw)}")
        lines.append(SoaLine(pw, tuple(v), tuple(i)))
    lines.sort(key=lambda ln: ln.pulse_width)
    if len({ln.pulse_width for ln in lines}) != len(lines):
        raise InputError(path, "soa", "two lines with the same pulse_width")
    return SoaTable(tuple(lines))


def soa_line_current(line: SoaLine, v_ds):
    """Drain current the SOA line allows at ``v_ds`` [A], at 25 °C case.

    Straight lines between the points on log–log axes (the makers draw SOA lines on
    log–log paper, so the interpolation is linear in log V and log I; common practice):
    ln I = ln I_k + (ln V − ln V_k)·(ln I_k+1 − ln I_k)/(ln V_k+1 − ln V_k).
    Below the first point the first point's current holds; above the last point (the
    line ends at the breakdown voltage) nothing is allowed (0 A).

    Parameters
    ----------
    line : SoaLine
        Points (V_DS [V], I_D [A]).
    v_ds : array_like
        Drain-source voltage [V].

    Returns
    -------
    ndarray
        Allowed drain current [A].
    """
    v = np.asarray(v_ds, dtype=float)
    lv, li = np.log(line.v), np.log(line.i)
    with np.errstate(divide="ignore"):
        x = np.log(np.maximum(v, line.v[0]))
    out = np.exp(np.interp(x, lv, li))
    return np.where(v > line.v[-1], 0.0, out)


def soa_current(table: SoaTable, v_ds, duration: float, t_case, t_j_max: float):
    """Drain current allowed [A] at ``v_ds`` for a pulse of ``duration``, at case
    temperature ``t_case``.

    The line of the shortest listed pulse width not below ``duration`` (a longer pulse's
    line is lower: the nearest longer one is the conservative choice), read at ``v_ds``
    (``soa_line_current``), derated for the case temperature:
    I(T_c) = I(25 °C)·(T_j,max − T_c)/(T_j,max − 25 °C), not above the 25 °C value
    (``thermal.derated_current``). The makers' SOA lines hold at 25 °C case and must be
    derated for the real case temperature (docs/derating-sources.md §2, S24); the
    straight-line derating to zero at T_j,max is common practice.

    Parameters
    ----------
    table : SoaTable
        The sheet's lines.
    v_ds : array_like
        Drain-source voltage during the transition [V], (N,).
    duration : float
        Duration of the transition [s] (t_fall at turn-off, t_rise at turn-on).
    t_case : array_like
        Case temperature [degC], (N,).
    t_j_max : float
        Maximum junction temperature [degC].

    Returns
    -------
    ndarray
        Allowed drain current [A], (N,); NaN where no line is as long as ``duration``.
    """
    line = table.line_for(duration)
    if line is None:
        return np.full(np.shape(v_ds), np.nan)
    return derated_current(soa_line_current(line, v_ds), T_SOA, t_j_max, t_case)
