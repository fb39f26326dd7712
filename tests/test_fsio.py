"""Input files that are not regular files (a FIFO, a device, a link to one) are refused
with the file named and exit status 2, never read: reading a FIFO with no writer would
block for ever. Part sheets already did this; the design, the policy, the BOM and the
results file of ``diff`` now do too, through ``stresscheck.fsio.read_regular``.

Source: the brief's rule for bad input (a clear message naming the file, exit status 2);
POSIX ``open(2)``: ``O_NONBLOCK`` on a FIFO opened for reading returns at once.
"""

from __future__ import annotations

import os
import sys
import threading
from pathlib import Path

import pytest

from stresscheck.fsio import NotRegularFile, read_regular
from test_input_errors import assert_input_error, run_cli, write_inputs

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="FIFOs are POSIX")

WATCHDOG = 30.0  # [s] after which a blocked reader is released (and the test fails)


class _Watchdog:
    """Opens ``fifo`` for writing after WATCHDOG seconds if the test is still running:
    a reader blocked on it then sees end of file, so a regression fails (with an
    'empty' or JSON message instead of the expected one) rather than hanging the run."""

    def __init__(self, fifo: Path):
        self.fifo, self.done = fifo, threading.Event()
        self.thread = threading.Thread(target=self._run, daemon=True)

    def _run(self):
        if not self.done.wait(WATCHDOG):
            try:
                fd = os.open(self.fifo, os.O_WRONLY | os.O_NONBLOCK)
                os.close(fd)
            except OSError:
                pass

    def __enter__(self):
        self.thread.start()
        return self

    def __exit__(self, *exc):
        self.done.set()
        self.thread.join()


def _replace_by_fifo(path: Path) -> Path:
    path.unlink(missing_ok=True)
    os.mkfifo(path)
    return path


def test_read_regular_reads_a_file_and_refuses_a_fifo_and_a_device(tmp_path):
    data = tmp_path / "a.toml"
    data.write_bytes(b"x = 1\n")
    assert read_regular(data) == b"x = 1\n"
    assert read_regular(data, 3) == b"x ="
    fifo = _replace_by_fifo(tmp_path / "pipe")
    with _Watchdog(fifo), pytest.raises(NotRegularFile) as err:
        read_regular(fifo)
    assert err.value.describe() == "a FIFO (named pipe)"
    link = tmp_path / "null.toml"
    link.symlink_to("/dev/null")
    with pytest.raises(NotRegularFile) as err:
        read_regular(link)
    assert err.value.describe() == "a symbolic link to a character device"
    with pytest.raises(FileNotFoundError):
        read_regular(tmp_path / "missing.toml")


@pytest.mark.parametrize("which", ["design", "policy"])
def test_design_or_policy_that_is_a_fifo_is_refused(tmp_path, which):
    inputs = write_inputs(tmp_path / "case")
    fifo = _replace_by_fifo(getattr(inputs, which))
    with _Watchdog(fifo):
        status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, fifo, None, "FIFO (named pipe), not a regular file")
    assert not inputs.out.exists()


def test_design_that_is_a_link_to_a_fifo_is_refused(tmp_path):
    inputs = write_inputs(tmp_path / "case")
    fifo = _replace_by_fifo(tmp_path / "pipe")
    inputs.design.unlink()
    inputs.design.symlink_to(fifo)
    with _Watchdog(fifo):
        status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, inputs.design, None, "symbolic link to a FIFO")


def test_bom_that_is_a_fifo_is_refused(tmp_path):
    inputs = write_inputs(tmp_path / "case")
    fifo = _replace_by_fifo(tmp_path / "bom.csv")
    with _Watchdog(fifo):
        status, _, err = run_cli(inputs.args("--bom", fifo))
    assert_input_error(status, err, fifo, None, "BOM is a FIFO (named pipe)")


def test_results_file_of_diff_that_is_a_fifo_is_refused(tmp_path):
    inputs = write_inputs(tmp_path / "case")
    status, _, err = run_cli(inputs.args())
    assert status in (0, 1), err
    fifo = _replace_by_fifo(tmp_path / "other.json")
    with _Watchdog(fifo):
        status, _, err = run_cli(["diff", inputs.out / "results.json", fifo])
    assert_input_error(status, err, fifo, None, "results file is a FIFO")
