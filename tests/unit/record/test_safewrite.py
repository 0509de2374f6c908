"""The one atomic write (vpkit.record.safewrite): a crash leaves the old file, and no
temporary file; the text is written in the encoding asked for."""

import os

import pytest

from vpkit.record.safewrite import atomic_write_text


def test_a_failed_rename_leaves_the_old_file_and_no_temporary(tmp_path, monkeypatch):
    path = tmp_path / "run.csv"
    path.write_text("old\n")

    def crash(*args, **kwargs):
        raise OSError("simulated power cut during rename")

    monkeypatch.setattr(os, "replace", crash)
    with pytest.raises(OSError, match="power cut"):
        atomic_write_text(path, "new\n")
    monkeypatch.undo()
    assert path.read_text() == "old\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.csv"]


def test_replaces_the_file_in_the_encoding_asked_for(tmp_path):
    path = tmp_path / "run.csv"
    path.write_text("old\n")
    atomic_write_text(path, "ΔH_vap,1\r\n", encoding="utf-16")
    assert path.read_bytes().startswith((b"\xff\xfe", b"\xfe\xff"))
    assert path.read_bytes().decode("utf-16") == "ΔH_vap,1\r\n"  # line ends kept as given


def _run_text():
    import vpkit
    from tests.conftest import make_run

    return vpkit.format_run(make_run("ethanol"))


def _appender(path, base, count, go):
    from vpkit.record.runfile import append_reading

    go.wait()
    for k in range(count):
        append_reading(path, base + k * 0.001, 2.0 + k * 1e-4)


def test_two_processes_appending_at_once_lose_nothing(tmp_path):
    """Two real processes, 150 appends each, started at the same moment: every accepted
    reading is in the file (the read-modify-write runs under the file's lock)."""
    import multiprocessing as mp

    import vpkit

    path = tmp_path / "run.csv"
    path.write_text(_run_text())
    n0 = vpkit.read_run(path).n_points
    ctx = mp.get_context("fork")
    go = ctx.Event()
    procs = [ctx.Process(target=_appender, args=(path, base, 150, go)) for base in (100.0, 200.0)]
    for p in procs:
        p.start()
    go.set()
    for p in procs:
        p.join(120)
        assert p.exitcode == 0
    run = vpkit.read_run(path)
    assert run.n_points == n0 + 300
    got = set(run.bath_temperature[n0:])
    assert got == {base + k * 0.001 for base in (100.0, 200.0) for k in range(150)}


def _session_writer(path, run_path, mine, rounds, go, out):
    import vpkit
    from vpkit.record.session import (
        SessionConflict,
        SessionState,
        file_digest,
        load_session,
        save_session,
    )

    run = vpkit.read_run(run_path)
    go.wait()
    conflicts = 0
    for k in range(rounds):
        while True:
            seen = file_digest(path)
            state = load_session(path, run) if seen else SessionState.from_run(run)
            include = list(state.include)
            include[mine] = bool(k % 2)  # this writer's own point, toggled every round
            new = SessionState(state.run_sha256, tuple(include), state.reasons, state.choices,
                               points=state.points)
            try:
                save_session(new, path, expected=seen)
                break
            except SessionConflict as exc:  # never a silent loss: re-read, re-apply
                conflicts += 1
                exc.aside.unlink()
    out.put((mine, conflicts))


def test_two_session_writers_see_each_others_changes(tmp_path):
    """Two processes each toggle their own point 60 times on one session file, re-reading
    when the file changed under them: both final states survive, and a conflict is
    reported (with the writer's state kept aside) instead of overwriting."""
    import multiprocessing as mp

    import vpkit
    from vpkit.record.session import load_session, session_path

    run_path = tmp_path / "run.csv"
    run_path.write_text(_run_text())
    path = session_path(run_path)
    ctx = mp.get_context("fork")
    go, out = ctx.Event(), ctx.Queue()
    procs = [ctx.Process(target=_session_writer, args=(path, run_path, mine, 60, go, out))
             for mine in (0, 7)]
    for p in procs:
        p.start()
    go.set()
    for p in procs:
        p.join(120)
        assert p.exitcode == 0
    state = load_session(path, vpkit.read_run(run_path))
    assert state.include[0] is True and state.include[7] is True  # round 59: k % 2 == 1
    assert sorted(out.get(timeout=5)[0] for _ in range(2)) == [0, 7]


@pytest.mark.long
def test_a_writer_killed_at_random_moments_leaves_a_complete_file(tmp_path):
    """SIGKILL a process that rewrites a run file in a loop (two versions, alternately),
    250 times at random moments: the file is always one complete version, and the
    temporary files the killed writers left are removed by the next write."""
    import signal
    import time

    import numpy as np

    import vpkit
    from tests.conftest import make_run
    from vpkit.record.runfile import write_run

    if not hasattr(os, "fork"):
        pytest.skip("needs fork (POSIX)")
    path = tmp_path / "run.csv"
    versions = [make_run("ethanol"), make_run("water", (30, 40, 50, 60, 70))]
    write_run(versions[0], path)
    rng = np.random.default_rng(7)
    for _ in range(250):
        pid = os.fork()
        if pid == 0:  # the child: rewrite forever
            try:
                k = 0
                while True:
                    write_run(versions[k % 2], path)
                    k += 1
            finally:
                os._exit(0)
        time.sleep(rng.uniform(0.0, 0.02))
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
        assert vpkit.read_run(path) in versions
    write_run(versions[0], path)
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".vpkit-tmp")] == []
    assert vpkit.read_run(path) == versions[0]


def test_a_write_keeps_the_files_permissions_and_a_run_files_encoding(tmp_path):
    import vpkit
    from vpkit.record.runfile import append_reading

    path = tmp_path / "run.csv"
    text = _run_text().replace("liquid,ethanol,,", "liquid,ethanol,,\nnotes,Müller's tube,,")
    path.write_bytes(text.encode("latin-1"))
    os.chmod(path, 0o644)
    append_reading(path, 61.0, 2.9)
    assert os.stat(path).st_mode & 0o777 == 0o644
    raw = path.read_bytes()
    assert "Müller".encode("latin-1") in raw and "Müller".encode() not in raw
    assert vpkit.read_run(path).entry("notes").value == "Müller's tube"


HOSTILE = ["=HYPERLINK(\"http://x\",\"y\")", "@SUM(1+1)", "+1+1", "-2+3", "\tx", "'quoted",
           "ordinary text", "-5.5", "+7"]


@pytest.mark.parametrize("text", HOSTILE)
def test_text_cells_are_made_inert_and_come_back_unchanged(text):
    """OWASP 'CSV Injection': a cell starting with =, +, -, @, tab or CR that is not a
    number is written with a leading quote; reading takes exactly one quote off."""
    from vpkit.record.safewrite import inert, restore

    out = inert(text)
    assert restore(out) == text
    if text in ("ordinary text", "-5.5", "+7"):
        assert out == text
    else:
        assert out.startswith("'")


def _cells(path):
    import csv

    with open(path, newline="", encoding="utf-8") as fh:
        return [c for row in csv.reader(fh) for c in row]


def test_hostile_text_in_exports_and_run_files(tmp_path):
    """Reasons, notes and run ids that a spreadsheet would evaluate: no exported cell
    starts with a formula character, and a run file written and read back is equal."""
    import dataclasses

    import vpkit
    from tests.conftest import make_run
    from vpkit.output.run_summary import write_outputs
    from vpkit.output.section_report import write_batch_report

    base = make_run("ethanol")
    run = dataclasses.replace(
        base, entries=base.entries + (("notes", vpkit.Entry("=cmd|' /C calc'!A0")),),
        include=(True,) * 7 + (False,), reason=("",) * 7 + ("@SUM(1+1)",))
    path = vpkit.write_run(run, tmp_path / "run.csv")
    assert vpkit.read_run(path) == run
    bad = [c for c in _cells(path) if c[:1] in ("=", "+", "-", "@", "\t", "\r")
           and not c.lstrip("+-").replace(".", "", 1).replace("e", "", 1).isdigit()]
    assert bad == []
    paths = write_outputs(vpkit.analyze(path, warn=False), tmp_path / "out", formats=("png",))
    folder = tmp_path / "section"
    folder.mkdir()
    for rid in ("=1+1", "@x", "plain"):
        vpkit.write_run(make_run("ethanol"), folder / f"{rid}.csv")
    rep = write_batch_report(vpkit.analyze_many(folder), tmp_path / "rep")
    for csv_path in (paths["points"], paths["results"], paths["budget"], rep["summary_csv"],
                     rep["consensus_csv"]):
        for c in _cells(csv_path):
            if c[:1] in ("=", "@", "\t", "\r") or (c[:1] in ("+", "-") and not _is_number(c)):
                raise AssertionError(f"{csv_path.name}: {c!r} would be evaluated")


def _is_number(text):
    try:
        float(text)
    except ValueError:
        return False
    return True


def test_file_names_never_collide_and_are_deterministic():
    from vpkit.record.safewrite import file_names

    names = ["run a", "run_a", "Run_A", "../etc/passwd", "", "x" * 200]
    got = file_names(names)
    assert got[:3] == ["run_a", "run_a_2", "Run_A_3"]  # case ignored, as on macOS/Windows
    assert "/" not in got[3] and not got[3].startswith(".") and got[4] == "run"
    assert len(got[5]) == 80 and len({g.lower() for g in got}) == len(got)
    assert file_names(names) == got
