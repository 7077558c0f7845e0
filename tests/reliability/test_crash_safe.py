"""Crash-safe saves: a child process saving a case or a record is killed with
SIGKILL at random moments; the file on disk is always the last good one.

The child is forked from the test process (so each kill costs milliseconds,
not an interpreter start) and saves two versions in turn, as fast as it can,
through the same functions a user calls (``Case.save`` and the record's
writer). After each kill the target must load (the case) or verify (the
record) and be one of the versions written. A killed save may leave its
temporary file behind (nothing can remove it); a normal or failed save never
does.

Counts: ``make test`` runs 12 kills of each kind; ``make fuzz`` runs 120.
"""

from __future__ import annotations

import json
import os
import random
import signal
import time

import pytest

import beliefledger as bl
from beliefledger import casefile
from beliefledger.errors import CaseFileError
from helpers import records, report

pytestmark = pytest.mark.skipif(not hasattr(os, "fork"), reason="needs fork and SIGKILL")

_report = report.reporting_fixture("crash-safe saves")

N_KILLS = report.scaled(12, 120)


def _big_case(tag: str) -> bl.Case:
    """Invented test data, large enough that a save takes a few milliseconds."""
    n = 1500
    case = bl.Case(f"pump station outage {tag}",
                   hypotheses={f"cause {i:04d}": 1 / n for i in range(n)}, normalize=True)
    case.add_evidence("alarm log", states=["seen", "not seen"],
                      likelihoods={f"cause {i:04d}": [0.3, 0.7] if i % 2 else [0.6, 0.4]
                                   for i in range(n)}, observed="seen")
    return case


def _temp_files(folder) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


def _kill_loop(target, write_a, write_b, rnd, n_kills, max_delay):
    """Fork a child that writes A and B in turn; kill it at a random moment, n times.

    Returns how many kills left a temporary file behind (killed mid-write)."""
    mid_write = 0
    for _ in range(n_kills):
        r, w = os.pipe()
        pid = os.fork()
        if pid == 0:  # child: never returns into pytest
            try:
                os.close(r)
                os.write(w, b"x")
                os.close(w)
                while True:
                    write_a()
                    write_b()
            finally:
                os._exit(0)
        os.close(w)
        os.read(r, 1)  # the child is running
        os.close(r)
        time.sleep(rnd.uniform(0, max_delay))
        os.kill(pid, signal.SIGKILL)
        _, status = os.waitpid(pid, 0)
        assert os.WIFSIGNALED(status) and os.WTERMSIG(status) == signal.SIGKILL
        left = _temp_files(target.parent)
        if left:
            mid_write += 1
            for name in left:  # a killed writer's leftovers; remove for the next round
                (target.parent / name).unlink()
        yield mid_write


@pytest.mark.slow
def test_killed_case_saves_leave_the_last_good_file(tmp_path):
    a, b = _big_case("A"), _big_case("B")
    dict_a, dict_b = a.to_dict(), b.to_dict()
    target = tmp_path / "outage.json"
    a.save(target)
    rnd = random.Random(20261201)
    t0 = time.perf_counter()
    a.save(tmp_path / "timing.json")
    one_save = time.perf_counter() - t0
    (tmp_path / "timing.json").unlink()
    mid = 0
    for n_mid in _kill_loop(target, lambda: a.save(target), lambda: b.save(target), rnd,
                            N_KILLS, max_delay=4 * one_save):
        loaded = bl.load_case(target).to_dict()
        assert loaded in (dict_a, dict_b)
        mid = n_mid
    report.add("crash-safe saves", case_kills=N_KILLS, case_kills_mid_write=mid,
               case_files_intact=N_KILLS)


@pytest.mark.slow
def test_killed_record_writes_leave_a_verifiable_record(tmp_path):
    from beliefledger.record import verify
    from beliefledger.record.nbio import write_text

    rec = records.conveyor_record()
    text_a = records.dumps(rec)
    text_b = json.dumps(rec, indent=2, ensure_ascii=True) + "\n"  # same record, other bytes
    target = tmp_path / "review.sealed.ipynb"
    write_text(target, text_a)
    assert verify(target).ok
    rnd = random.Random(1201)
    t0 = time.perf_counter()
    write_text(tmp_path / "timing.ipynb", text_b)
    one = time.perf_counter() - t0
    (tmp_path / "timing.ipynb").unlink()
    mid = 0
    for n_mid in _kill_loop(target, lambda: write_text(target, text_a),
                            lambda: write_text(target, text_b), rnd, N_KILLS, max_delay=4 * one):
        assert target.read_text(encoding="utf-8") in (text_a, text_b)
        assert verify(target).ok
        mid = n_mid
    report.add("crash-safe saves", record_kills=N_KILLS, record_kills_mid_write=mid,
               records_intact=N_KILLS)


def test_normal_saves_leave_no_temporary_file(tmp_path, small_case):
    from beliefledger.record.nbio import write_text

    for i in range(5):
        small_case.save(tmp_path / "c.json")
        casefile.atomic_write_text(tmp_path / f"t{i}.txt", "x" * (i * 1000))
        write_text(tmp_path / "r.ipynb", "{}\n")
    assert _temp_files(tmp_path) == []
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.json", "r.ipynb", "t0.txt",
                                                          "t1.txt", "t2.txt", "t3.txt",
                                                          "t4.txt"]


def test_a_failed_save_keeps_the_old_file_and_leaves_nothing(tmp_path, small_case,
                                                               monkeypatch):
    path = small_case.save(tmp_path / "c.json")
    before = path.read_bytes()
    # text that cannot be encoded fails during the write
    with pytest.raises(UnicodeEncodeError):
        casefile.atomic_write_text(path, "half \ud800 written")
    assert path.read_bytes() == before and _temp_files(tmp_path) == []

    # the rename itself fails (e.g. a full or read-only disk at the last moment)
    def refuse(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", refuse)
    small_case.set_prior("H1", 0.4, rescale=True)
    with pytest.raises(OSError):
        small_case.save(path)
    monkeypatch.undo()
    assert path.read_bytes() == before and _temp_files(tmp_path) == []
    assert bl.load_case(path).base_priors["H1"] == 0.5


def test_saving_into_a_missing_folder_is_a_clear_error(tmp_path, small_case):
    with pytest.raises(CaseFileError, match="does not exist"):
        small_case.save(tmp_path / "no such folder" / "c.json")
