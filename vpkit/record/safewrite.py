"""The one way the package writes a file: locked, written aside, flushed, renamed over.

* :func:`locked` takes an advisory lock on a small companion file (``.NAME.vpkit-lock``
  beside ``NAME``) for a read-modify-write, so two writers (two processes, two
  notebook tabs) take turns instead of one silently dropping the other's change.
  POSIX ``fcntl.flock`` or Windows ``msvcrt.locking``, behind this one function.
* :func:`atomic_write_bytes` / :func:`atomic_write_text` write a temporary file in
  the same folder (``.NAME.XXXX.vpkit-tmp``), flush and fsync it, give it the old
  file's permission bits, rename it over ``NAME`` and fsync the folder (where the
  platform allows), so a crash or a killed process leaves the old file or the new
  one, never a half-written one. Temporary files of the package's own naming left
  by a killed writer are removed on the next locked write.
* :func:`write_table` writes a CSV table through the same path, with every text cell
  that a spreadsheet would evaluate made inert (see :func:`inert`).

References
----------
.. [1] POSIX.1-2017, rename(): replacing the destination is atomic; fsync() of the
   directory makes the new entry durable.
.. [2] OWASP, "CSV Injection": a cell that begins with =, +, -, @, tab or carriage
   return may be run as a formula; prefixing it with a single quote prevents that.
"""

from __future__ import annotations

import contextlib
import io
import os
import re
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

from ..errors import OutputError

TMP_SUFFIX = ".vpkit-tmp"
LOCK_SUFFIX = ".vpkit-lock"
#: How long a writer waits for another's lock before saying so [s].
LOCK_TIMEOUT = 30.0
#: A temporary file older than this is left over from a killed writer [s] (a live writer
#: holds the lock and finishes within seconds; the age guards a writer that does not).
STALE_AFTER = 60.0


class LockTimeout(OSError):
    """Another writer held the file's lock for longer than :data:`LOCK_TIMEOUT`."""


def lock_path(path) -> Path:
    path = Path(path)
    return path.with_name(f".{path.name}{LOCK_SUFFIX}")


@contextlib.contextmanager
def locked(path, timeout: float = LOCK_TIMEOUT) -> Iterator[None]:
    """Hold the advisory lock of ``path`` (blocking up to ``timeout`` seconds)."""
    lp = lock_path(path)
    fd = os.open(lp, os.O_RDWR | os.O_CREAT, 0o666)
    try:
        _acquire(fd, timeout, path)
        try:
            yield
        finally:
            _release(fd)
    finally:
        os.close(fd)


def _acquire(fd: int, timeout: float, path) -> None:
    deadline = time.monotonic() + timeout
    while True:
        try:
            if os.name == "nt":  # pragma: no cover - exercised on Windows only
                import msvcrt

                msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
            else:
                import fcntl

                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            return
        except OSError:
            if time.monotonic() > deadline:
                raise LockTimeout(f"{path}: another writer has held its lock for over "
                                  f"{timeout:g} s") from None
            time.sleep(0.005)


def _release(fd: int) -> None:
    if os.name == "nt":  # pragma: no cover
        import msvcrt

        os.lseek(fd, 0, 0)
        msvcrt.locking(fd, msvcrt.LK_UNLCK, 1)
    else:
        import fcntl

        fcntl.flock(fd, fcntl.LOCK_UN)


def remove_stale_temporaries(path, older_than: float = STALE_AFTER) -> list[Path]:
    """Remove temporary files of the package's own naming beside ``path`` that a killed
    writer left (only ``.NAME.*.vpkit-tmp``, only older than ``older_than`` seconds)."""
    path = Path(path)
    gone = []
    now = time.time()
    for tmp in path.parent.glob(f".{glob_escape(path.name)}.*{TMP_SUFFIX}"):
        try:
            if now - tmp.stat().st_mtime > older_than:
                tmp.unlink()
                gone.append(tmp)
        except OSError:
            pass
    return gone


def glob_escape(name: str) -> str:
    return re.sub(r"([*?\[])", r"[\1]", name)


def output_folder(path) -> Path:
    """``path`` as a folder for outputs, created if missing; a clear error if it is a file
    or cannot be made."""
    folder = Path(path)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"the output folder {str(folder)!r} is a file (how to fix: name a "
                          "folder, which is created if missing)")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create the output folder {str(folder)!r}: "
                          f"{exc.strerror} (how to fix: name a folder you can write to)") from exc
    return folder


def file_names(names) -> list[str]:
    """A file-name-safe stem for each of ``names``, no two alike (case ignored, as on
    macOS and Windows): characters other than letters, digits, '.', '_' and '-' become
    '_', at most 80 are kept, and a stem already taken gets ``_2``, ``_3``, ... in the
    order given, so the same names always give the same files."""
    out: list[str] = []
    taken: set[str] = set()
    for name in names:
        base = re.sub(r"[^A-Za-z0-9._-]+", "_", str(name))[:80].strip(".") or "run"
        stem, k = base, 1
        while stem.lower() in taken:
            k += 1
            stem = f"{base}_{k}"
        taken.add(stem.lower())
        out.append(stem)
    return out


def atomic_write_bytes(path, data: bytes) -> Path:
    """Replace ``path`` by ``data`` atomically (see the module docstring)."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=TMP_SUFFIX, dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        try:  # keep the permissions the file had (mkstemp makes it private)
            os.chmod(tmp, path.stat().st_mode & 0o7777)
        except FileNotFoundError:
            os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    _sync_folder(path.parent)
    return path


def atomic_write_text(path, text: str, *, encoding: str = "utf-8") -> Path:
    """Replace ``path`` by ``text`` (in ``encoding``, line ends as given) atomically."""
    return atomic_write_bytes(path, text.encode(encoding))


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _sync_folder(folder: Path) -> None:
    """fsync the folder so the rename is durable (POSIX; a no-op where not allowed)."""
    if os.name == "nt":  # pragma: no cover
        return
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


_NUMBER = re.compile(r"^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*$")


def inert(text: str) -> str:
    """A text cell a spreadsheet will not evaluate: one beginning with =, +, -, @, tab or
    carriage return (and not a number) gets a leading single quote [2]; so does one that
    already begins with a quote, so that :func:`restore` gives back exactly the text."""
    if not isinstance(text, str) or not text:
        return text
    if text[0] == "'" or (text[0] in "=+-@\t\r" and not _NUMBER.match(text)):
        return "'" + text
    return text


def restore(text):
    """The text as written before :func:`inert` (one leading quote removed)."""
    return text[1:] if isinstance(text, str) and text.startswith("'") else text


def write_table(df, path, *, float_format: str | None = None) -> Path:
    """Write a DataFrame as CSV (UTF-8, no index) with inert text cells, atomically."""
    from pandas.api.types import is_object_dtype, is_string_dtype

    safe = df.copy()
    for col in safe.columns:
        if is_object_dtype(safe[col]) or is_string_dtype(safe[col]):
            safe[col] = safe[col].map(inert)
    safe.columns = [inert(str(c)) for c in safe.columns]
    buf = io.StringIO()
    safe.to_csv(buf, index=False, float_format=float_format)
    return atomic_write_text(path, buf.getvalue())
