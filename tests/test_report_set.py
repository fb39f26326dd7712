"""The report set (results.json, report.html, report.xlsx, checks.csv) is replaced as one:
one run id stamped in every file, a mixed set recognised, stale temporary files of a
killed run removed.

Source: the robustness issue "Trust at the edges" (item 1); common practice for safe
file replacement (write every file, flush, then rename).
"""

from __future__ import annotations

import json

import pytest

from stresscheck import fsio
from stresscheck.errors import InputError
from stresscheck.report import writer as writer_mod
from stresscheck.report.writer import FILES, check_set, read_run_ids, write_reports
from stresscheck.runid import run_id_of, stamp_run_id
from test_reports import CONTEXT, make_results


def _second():
    results = make_results()
    results["design"] = "second run"
    return results


def test_every_file_of_a_set_carries_the_run_id(tmp_path):
    """After a write, each of the four files names the same run id, the one results.json
    holds, and `check_set` accepts the folder."""
    paths = write_reports(make_results(), CONTEXT, tmp_path)
    run_id = json.loads(paths["json"].read_text(encoding="utf-8"))["run_id"]
    assert read_run_ids(tmp_path) == {key: run_id for key in FILES}
    assert check_set(tmp_path) == run_id
    assert run_id in paths["html"].read_text(encoding="utf-8")  # shown, not only stamped


def test_run_id_follows_the_content():
    """Identical results give the same id (results.json stays byte-identical across
    reruns); any change of content gives another."""
    a, b = make_results(), make_results()
    assert run_id_of(a) == run_id_of(b)
    b["checks"][0]["stress"] += 1e-9
    assert run_id_of(a) != run_id_of(b)
    stamped = stamp_run_id(a)
    assert list(stamped)[:2] == ["schema", "run_id"]
    assert run_id_of(stamped) == stamped["run_id"]  # its own id is left out


@pytest.mark.parametrize("fail_at", [2, 3, 4])
def test_kill_between_renames_is_recognised(tmp_path, monkeypatch, fail_at):
    """A run killed after some of its files were renamed into place leaves a set whose
    files carry different run ids; `check_set` refuses it and names the files. (On the
    earlier version the files carried no id: a new results.json beside an old report
    was indistinguishable from a whole set.)"""
    write_reports(make_results(), CONTEXT, tmp_path)
    calls = {"n": 0}
    real_replace = fsio.os.replace

    def killed(src, dst):
        calls["n"] += 1
        if calls["n"] == fail_at:
            raise KeyboardInterrupt
        return real_replace(src, dst)

    monkeypatch.setattr(fsio.os, "replace", killed)
    with pytest.raises(KeyboardInterrupt):
        write_reports(_second(), CONTEXT, tmp_path)
    monkeypatch.undo()
    ids = read_run_ids(tmp_path)
    assert None not in ids.values()
    assert len(set(ids.values())) == 2
    with pytest.raises(InputError, match="different runs"):
        check_set(tmp_path)
    # the next run replaces the whole set again
    write_reports(_second(), CONTEXT, tmp_path)
    assert len(set(read_run_ids(tmp_path).values())) == 1


def test_stale_temporaries_of_a_killed_run_are_removed(tmp_path):
    """Temporary files a killed run left (a kill -9 runs no cleanup) are removed by the
    next write; other files in the folder are left alone."""
    write_reports(make_results(), CONTEXT, tmp_path)
    stale = [tmp_path / f".{name}.k1ll3d.tmp" for name in FILES.values()]
    for path in stale:
        path.write_bytes(b"half a file")
    keep = [tmp_path / "notes.txt", tmp_path / ".report.html.tmp.bak",
            tmp_path / "report.html.x.tmp"]
    for path in keep:
        path.write_text("mine\n")
    write_reports(_second(), CONTEXT, tmp_path)
    assert not any(p.exists() for p in stale)
    assert all(p.read_text() == "mine\n" for p in keep)


def test_a_set_with_a_missing_file_is_refused(tmp_path):
    write_reports(make_results(), CONTEXT, tmp_path)
    (tmp_path / "checks.csv").unlink()
    with pytest.raises(InputError, match="checks.csv"):
        check_set(tmp_path)


def test_nothing_is_renamed_until_every_file_is_on_disk(tmp_path, monkeypatch):
    """A failure while staging the third file renames nothing: the earlier set stays
    whole."""
    write_reports(make_results(), CONTEXT, tmp_path)
    before = {n: (tmp_path / n).read_bytes() for n in FILES.values()}
    real = writer_mod.stage_atomic
    calls = {"n": 0}

    def stage(path, data):
        calls["n"] += 1
        if calls["n"] == 3:
            raise OSError(28, "No space left on device")
        return real(path, data)

    monkeypatch.setattr(writer_mod, "stage_atomic", stage)
    with pytest.raises(InputError, match="No space left"):
        write_reports(_second(), CONTEXT, tmp_path)
    assert {n: (tmp_path / n).read_bytes() for n in FILES.values()} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(FILES.values())
