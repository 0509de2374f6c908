"""Session files: round trip, atomic writes, refusal of damaged or foreign sessions.

Expectations are behaviour we promise (common practice, no source); values are
built in each test, never taken from the code's own output."""

import json
import os

import pytest

import vpkit
from tests.conftest import make_run
from vpkit.record.session import (
    SessionError,
    SessionState,
    load_session,
    run_fingerprint,
    save_session,
    session_path,
)


@pytest.fixture
def run_file(tmp_path):
    return vpkit.write_run(make_run("ethanol"), tmp_path / "bench3.csv")


def test_round_trip_and_apply(run_file):
    run = vpkit.read_run(run_file)
    state = SessionState(run_fingerprint(run), (True,) * 7 + (False,),
                         ("",) * 7 + ("bubble escaped",), {"model": "antoine", "use_head": False})
    path = save_session(state, session_path(run_file))
    assert path.name == "bench3.vpkit-session.json"
    back = load_session(path, run)
    assert back.include == state.include and back.reasons == state.reasons
    assert back.choices == state.choices and back.saved_at
    applied = back.apply(run)
    assert applied.include[7] is False and applied.reason[7] == "bubble escaped"
    assert run.include[7] is True  # the run itself is untouched


def test_fingerprint_ignores_flags_but_not_readings(run_file):
    run = vpkit.read_run(run_file)
    flipped = run.with_include([False] + [True] * 7)
    assert run_fingerprint(flipped) == run_fingerprint(run)
    other = run.__class__(run.entries, run.units, run.bath_temperature,
                          (run.reading[0] + 0.001,) + run.reading[1:], run.pressure,
                          run.include, run.reason)
    assert run_fingerprint(other) != run_fingerprint(run)


def test_session_of_another_run_is_refused(run_file, tmp_path):
    run = vpkit.read_run(run_file)
    path = save_session(SessionState.from_run(run), session_path(run_file))
    other = make_run("toluene")
    with pytest.raises(SessionError, match="another run") as info:
        load_session(path, other)
    assert info.value.file == str(path) and info.value.hint


@pytest.mark.parametrize("damage", [
    lambda t: t[: len(t) // 2],  # truncated
    lambda t: t.replace('"schema": 1', '"schema": 99'),
    lambda t: t.replace('"kind": "vpkit-session"', '"kind": "other"'),
    lambda t: t.replace("false", "0", 1),
    lambda t: t.replace('"n_points": 8', '"n_points": 9'),
    lambda t: t.replace('"choices": {', '"choices": {"evil": "x", '),
])
def test_damaged_or_hand_edited_session_is_refused(run_file, damage):
    run = vpkit.read_run(run_file)
    state = SessionState.from_run(run.with_include([True] * 7 + [False]), {"model": "antoine"})
    path = save_session(state, session_path(run_file))
    path.write_text(damage(path.read_text()))
    with pytest.raises(SessionError):
        load_session(path, run)


def test_crash_mid_write_leaves_old_session(run_file, monkeypatch):
    run = vpkit.read_run(run_file)
    path = save_session(SessionState.from_run(run, {"model": "antoine"}), session_path(run_file))
    before = path.read_text()

    def crash(*args, **kwargs):
        raise OSError("simulated power cut during rename")

    monkeypatch.setattr(os, "replace", crash)
    with pytest.raises(OSError):
        save_session(SessionState.from_run(run, {"model": "constant_dcp"}), path)
    monkeypatch.undo()
    assert path.read_text() == before
    assert load_session(path, run).choices["model"] == "antoine"
    assert [p.name for p in path.parent.iterdir() if p.suffix == ".tmp"] == []


def test_session_json_is_plain(run_file):
    run = vpkit.read_run(run_file)
    path = save_session(SessionState.from_run(run), session_path(run_file))
    data = json.loads(path.read_text())
    assert data["schema"] == 1 and data["n_points"] == 8
