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
