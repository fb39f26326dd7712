"""Running ngspice in batch mode and reading its results."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import numpy as np

from ..errors import SimulationError

TIMEOUT = 600.0  # [s] per ngspice run
RAW_NAME = "result.raw"


def find_ngspice() -> str | None:
    """Path of the ngspice executable (``$NGSPICE`` first, then ``PATH``), or None."""
    env = os.environ.get("NGSPICE")
    if env and Path(env).is_file() and os.access(env, os.X_OK):
        return env
    return shutil.which("ngspice")


def _with_control(text: str) -> str:
    """Insert a ``.control`` block that runs the deck and writes every vector."""
    control = (".control\nset filetype=binary\nrun\n"
               f"write {RAW_NAME}\nquit\n.endc\n")
    lines = text.rstrip().splitlines()
    if not lines or lines[-1].strip().lower() != ".end":
        raise SimulationError("netlist does not end with .end")
    return "\n".join(lines[:-1]) + "\n" + control + ".end\n"


def read_raw(path: Path) -> dict[str, np.ndarray]:
    """Vectors of an ngspice binary raw file (one real plot), by lower-case name.

    Parameters
    ----------
    path : Path
        The raw file.

    Returns
    -------
    dict of str to numpy.ndarray
        Every vector by lower-case name [s, V, A].

    Raises
    ------
    SimulationError
        Not a binary raw file of one real plot, or no data.
    """
    data = path.read_bytes()
    marker = data.find(b"Binary:\n")
    if marker < 0:
        raise SimulationError(f"{path}: not a binary raw file")
    header = data[:marker].decode("latin-1").splitlines()
    n_vars = n_points = None
    names: list[str] = []
    in_vars = False
    for line in header:
        if line.startswith("Flags:") and "complex" in line:
            raise SimulationError(f"{path}: complex data not supported")
        if line.startswith("No. Variables:"):
            n_vars = int(line.split(":")[1])
        elif line.startswith("No. Points:"):
            n_points = int(line.split(":")[1])
        elif line.startswith("Variables:"):
            in_vars = True
        elif in_vars and line.strip():
            names.append(line.split()[1].lower())
    if n_vars is None or n_points is None or len(names) != n_vars:
        raise SimulationError(f"{path}: unreadable raw header")
    values = np.frombuffer(data, dtype="<f8", offset=marker + len(b"Binary:\n"))
    n_points = min(n_points, values.size // n_vars)  # an interrupted run writes fewer
    if n_points < 1:
        raise SimulationError(f"{path}: no data points")
    table = values[: n_points * n_vars].reshape(n_points, n_vars)
    return {name: table[:, j].copy() for j, name in enumerate(names)}


def run_netlist(text: str, workdir: str | Path) -> dict[str, np.ndarray]:
    """Run a deck with ``ngspice -b`` and return all its vectors.

    Parameters
    ----------
    text : str
        A deck ending with ``.end`` and without a ``.control`` block.
    workdir : str or Path
        Folder for the deck, the log and the raw file (created if missing).

    Returns
    -------
    dict of str to numpy.ndarray
        Every saved vector by its lower-case ngspice name (``time`` or the sweep
        variable, ``v(node)``, ``i(vsource)``, ``i(linductor)``) [s, V, A].

    Raises
    ------
    SimulationError
        ngspice is missing, exits with an error, or writes no usable data; the message
        carries the tail of its output.
    """
    exe = find_ngspice()
    if exe is None:
        raise SimulationError("ngspice not found (install it or set $NGSPICE)")
    workdir = Path(workdir)
    workdir.mkdir(parents=True, exist_ok=True)
    deck, raw = workdir / "deck.cir", workdir / RAW_NAME
    deck.write_text(_with_control(text))
    raw.unlink(missing_ok=True)
    try:
        proc = subprocess.run([exe, "-b", deck.name], cwd=workdir, capture_output=True,
                              text=True, timeout=TIMEOUT)
    except subprocess.TimeoutExpired as exc:
        raise SimulationError(f"ngspice timed out after {TIMEOUT:g} s") from exc
    log = (proc.stdout or "") + (proc.stderr or "")
    (workdir / "ngspice.log").write_text(log)
    tail = "\n".join(log.strip().splitlines()[-15:])
    bad = ("timestep too small", "singular matrix", "simulation(s) aborted", "fatal")
    if proc.returncode != 0 or any(b in log.lower() for b in bad) or not raw.is_file():
        raise SimulationError(f"ngspice failed (exit {proc.returncode}):\n{tail}")
    return read_raw(raw)
