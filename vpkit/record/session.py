"""The user's judgement about a run, kept in a small versioned session file.

A session holds which points are included, why the others are not, and the
analysis choices. It lives beside the run file (``RUN.csv`` ->
``RUN.vpkit-session.json``), is written atomically (temporary file, flush,
fsync, rename) so a crash mid-write leaves the previous file intact, and
carries a fingerprint of the run so it is never applied to another run.

Layout (JSON, our own)::

    {"schema": 1, "kind": "vpkit-session", "run_sha256": "...", "n_points": 8,
     "include": [true, ...], "reasons": ["", ...], "choices": {"model": ...},
     "saved_at": "2026-12-02T10:00:00+00:00"}
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import time
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .. import display as D
from ..errors import InputError
from .run import Run
from .runfile import format_run
from .safewrite import atomic_write_text, locked, remove_stale_temporaries

SCHEMA = 1
KIND = "vpkit-session"

#: Choices a session may carry, with the type each must have.
CHOICE_TYPES: dict[str, tuple[type, ...]] = {
    "model": (str,), "weighting": (str,), "air_from": (str,),
    "vapor_at_air_reference": (str,), "use_head": (bool,), "gas_mass": (bool,),
    "bubble_depth": (float, int, type(None)), "reference_liquid": (str, type(None)),
    "pressure_unit": (str,), "temperature_unit": (str,), "water_layer": (bool,),
}


class SessionError(InputError):
    """A session file cannot be used (damaged, another run, another schema)."""


def run_fingerprint(run: Run) -> str:
    """SHA-256 of the run's readings and metadata, ignoring include flags and reasons.

    Include flags and reasons are what a session changes, so they are left out:
    the same run keeps its fingerprint while points are toggled.
    """
    neutral = run.with_include([True] * run.n_points, [""] * run.n_points)
    return hashlib.sha256(format_run(neutral).encode("utf-8")).hexdigest()


def session_path(run_path) -> Path:
    """Where the session of ``run_path`` lives."""
    p = Path(run_path)
    return p.with_name(p.stem + ".vpkit-session.json")


@dataclass(frozen=True)
class SessionState:
    """Include flags, reasons and choices for one run."""

    run_sha256: str
    include: tuple[bool, ...]
    reasons: tuple[str, ...]
    choices: Mapping[str, Any] = field(default_factory=dict)
    saved_at: str = ""
    #: (bath temperature, reading) of each point as typed, to re-apply exclusions after
    #: the run file was edited (empty in sessions written before it was kept).
    points: tuple[tuple[float, float], ...] = ()

    @classmethod
    def from_run(cls, run: Run, choices: Mapping[str, Any] | None = None) -> SessionState:
        return cls(run_fingerprint(run), tuple(run.include), tuple(run.reason),
                   dict(choices or {}), points=points_of(run))

    def apply(self, run: Run) -> Run:
        """The run with this session's include flags and reasons (a copy)."""
        if run_fingerprint(run) != self.run_sha256:
            raise SessionError("this session belongs to another run (or the run file was "
                               "edited since)", column="run_sha256",
                               hint="delete or rename the session file to start afresh")
        return run.with_include(self.include, self.reasons)

    def to_json(self) -> str:
        return json.dumps({
            "schema": SCHEMA, "kind": KIND, "run_sha256": self.run_sha256,
            "n_points": len(self.include), "include": list(self.include),
            "reasons": list(self.reasons), "choices": dict(self.choices),
            "saved_at": self.saved_at, "points": [list(p) for p in self.points],
        }, indent=1, ensure_ascii=False)

    def reapply(self, run: Run) -> tuple[Run, list[int], list[int]]:
        """Re-apply the exclusions and reasons to an edited run, point by point.

        A saved point with an exclusion or a reason is matched to a point of ``run``
        with the same bath temperature and reading as typed (each used once). Returns
        the run with those applied, the indices (in ``run``) that were matched, and
        the saved indices that found no unchanged reading.
        """
        include, reasons = list(run.include), list(run.reason)
        free = {}
        for i, key in enumerate(points_of(run)):
            free.setdefault(key, []).append(i)
        applied, lost = [], []
        for j, key in enumerate(self.points):
            if self.include[j] and not self.reasons[j]:
                continue
            if free.get(key):
                i = free[key].pop(0)
                include[i], reasons[i] = self.include[j], self.reasons[j]
                applied.append(i)
            else:
                lost.append(j)
        return run.with_include(include, reasons), applied, lost


def points_of(run: Run) -> tuple[tuple[float, float], ...]:
    """(bath temperature, reading) of every point, as typed."""
    return tuple((float(t), float(r)) for t, r in zip(run.bath_temperature, run.reading))


class SessionConflict(SessionError):
    """Another writer changed the session file since this writer read it.

    ``aside`` is where this writer's state was kept instead; nothing was overwritten."""

    def __init__(self, message: str, *, aside: Path | None = None, **kw) -> None:
        super().__init__(message, **kw)
        self.aside = aside


def file_digest(path) -> str | None:
    """SHA-256 of a file's bytes, or None when it does not exist."""
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except FileNotFoundError:
        return None


def save_session(state: SessionState, path, expected: str | None | bool = False) -> Path:
    """Write ``state`` to ``path`` atomically, under the file's lock; returns the path.

    ``expected`` is the digest (:func:`file_digest`) of the session file as this writer
    last read or wrote it (None: it did not exist). When the file now differs, another
    writer changed it: nothing is overwritten, this writer's state is kept aside as
    ``NAME.mine-TIME.json`` and :class:`SessionConflict` says so. ``expected=False``
    (the default) skips the check.
    """
    path = Path(path)
    stamped = SessionState(state.run_sha256, state.include, state.reasons, state.choices,
                           _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
                           state.points)
    with locked(path):
        remove_stale_temporaries(path, older_than=0.0)  # under the lock: all are stale
        if expected is not False and file_digest(path) != expected:
            aside = path.with_name(f"{path.stem}.mine-{time.strftime('%Y%m%d-%H%M%S')}"
                                   f"-{time.time_ns() % 1000000:06d}.json")
            atomic_write_text(aside, stamped.to_json())
            raise SessionConflict(
                "the session file was changed by another writer (another notebook or panel "
                f"on this run) since it was read; your exclusions and choices were kept as "
                f"{aside.name}, and the file was not overwritten", file=str(path),
                aside=aside, hint="reload the session to see the other changes, then "
                "re-apply yours")
        return atomic_write_text(path, stamped.to_json())


def load_session(path, run: Run | None = None) -> SessionState:
    """Read a session file; with ``run``, also check that it belongs to that run.

    Raises
    ------
    SessionError
        The file is not valid JSON, not a vpkit session, of an unknown schema,
        internally inconsistent, or (with ``run``) for another run.
    """
    path = Path(path)
    src = str(path)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise SessionError(f"cannot read the session file: {exc.strerror}", file=src) from exc
    except (ValueError, UnicodeDecodeError) as exc:
        raise SessionError("the session file is damaged (not valid JSON; truncated?)",
                           file=src, hint="delete it to start afresh; the run file is "
                           "unaffected") from exc
    if not isinstance(data, dict) or data.get("kind") != KIND:
        raise SessionError("not a vpkit session file", file=src)
    if data.get("schema") != SCHEMA:
        raise SessionError(f"session schema {data.get('schema')!r} is not {SCHEMA}", file=src,
                           column="schema", hint="open it with the vpkit version that wrote it")
    include, reasons = data.get("include"), data.get("reasons")
    n = data.get("n_points")
    if (not isinstance(include, list) or not isinstance(reasons, list)
            or not all(isinstance(v, bool) for v in include)
            or not all(isinstance(v, str) for v in reasons)
            or len(include) != n or len(reasons) != n):
        raise SessionError("include flags and reasons do not match n_points", file=src,
                           column="include", hint="the file was edited by hand; delete it")
    choices = data.get("choices", {})
    if not isinstance(choices, dict):
        raise SessionError("choices must be a mapping", file=src, column="choices")
    for key, value in choices.items():
        if key not in CHOICE_TYPES or not isinstance(value, CHOICE_TYPES[key]):
            raise SessionError(f"unknown or malformed choice {key!r}: {value!r}", file=src,
                               column="choices", hint="delete the entry or the file")
    sha = data.get("run_sha256")
    if not isinstance(sha, str):
        raise SessionError("no run fingerprint", file=src, column="run_sha256")
    points = data.get("points", [])
    if not (isinstance(points, list) and all(
            isinstance(p, list) and len(p) == 2 and all(isinstance(v, (int, float)) for v in p)
            for p in points) and len(points) in (0, n)):
        raise SessionError("the saved points are malformed", file=src, column="points",
                           hint="delete the entry or the file")
    state = SessionState(sha, tuple(include), tuple(reasons), choices,
                         str(data.get("saved_at", "")),
                         tuple((float(a), float(b)) for a, b in points))
    if run is not None:
        if run.n_points != n or run_fingerprint(run) != sha:
            raise SessionError("this session belongs to another run (or the run file was "
                               "edited since)", file=src, column="run_sha256",
                               hint="delete or rename the session file to start afresh")
    return state


@dataclass(frozen=True)
class Restored:
    """What :func:`restore_session` recovered: flags, reasons, choices, and what was done."""

    include: tuple[bool, ...]
    reasons: tuple[str, ...]
    choices: dict
    message: str


def restore_session(path, run: Run) -> Restored | None:
    """The saved exclusions and choices for ``run`` from its session file, or None.

    A session saved for another version of the run file is never overwritten: it is
    kept aside as ``NAME.refused-TIME``, and the exclusions and reasons of the points
    whose readings are unchanged are re-applied (the message says how many, and which
    saved points no longer match a reading).
    """
    path = Path(path)
    if not path.exists():
        return None
    try:
        state = load_session(path, run)
    except SessionError as exc:
        try:
            old = load_session(path)  # readable, but for an edited run file?
        except SessionError:
            old = None
        aside = path.with_name(path.name + f".refused-{int(time.time())}")
        path.rename(aside)
        if old is not None and old.points:
            new, applied, lost = old.reapply(run)
            return Restored(
                new.include, new.reason, dict(old.choices),
                f"the run file changed since the session was saved (old session kept as "
                f"{aside.name}): re-applied the exclusions and reasons of "
                f"{D.count(len(applied), 'point')} whose readings are unchanged"
                + (f"; {D.count(len(lost), 'saved point')} ({', '.join(map(str, lost))}) "
                   + ("no longer matches a reading and was not applied" if len(lost) == 1
                      else "no longer match a reading and were not applied") if lost else ""))
        return Restored(run.include, run.reason, {},
                        f"{exc} — kept as {aside.name}; starting from the run file")
    return Restored(tuple(state.include), tuple(state.reasons), dict(state.choices),
                    f"restored exclusions and choices from {path.name}")

