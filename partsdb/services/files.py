"""The one way partsdb writes a file: checked destination, temporary name, fsync, rename.

Every command that writes a file (``export``, ``substitute --output``, ``backup``) goes through
:func:`atomic_path` (or :func:`write_text` / :func:`atomic_open` built on it):

* the open database and its ``-wal``/``-shm``/``-journal`` files are refused (paths compared
  after resolving links), whatever ``force`` says;
* an existing regular file is refused unless ``force`` is given;
* the content goes to a hidden temporary ``.NAME.PID-XXXX.part`` beside the destination, is
  flushed to the disk (fsync), then renamed over the destination (``os.replace``, atomic on
  POSIX and Windows), so a failed or full-disk write leaves the old file whole;
* a destination that is a stream rather than a file (a character device such as
  ``/dev/stdout``, or a pipe) is written directly: there is no file to lose;
* temporary files of an earlier run of the same destination that was killed (their process is
  gone) are removed before writing.

Operating-system failures (no such folder, a parent that is a file, a read-only folder, a full
disk) become one-line :class:`FileProblem` errors (exit 3) with nothing left behind.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import sqlite3
import stat
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import IO, Any

from partsdb.errors import EnvironmentProblem, InvalidInput

DB_SUFFIXES: tuple[str, ...] = ("", "-wal", "-shm", "-journal")
"""SQLite keeps a database in its file plus these companions (SQLite docs, "Temporary Files
Used By SQLite")."""

PART_SUFFIX = ".part"


class FileProblem(EnvironmentProblem):
    """A file could not be written or read (missing folder, no permission, full disk): exit 3."""


class OutputRefused(InvalidInput):
    """A destination refused before anything was written (exists, is the database): exit 2."""


def sqlite_files(database: str | os.PathLike[str] | None) -> list[Path]:
    """The resolved paths of a SQLite database file and its companions."""
    if not database or str(database) == ":memory:":
        return []
    base = Path(database).expanduser().resolve()
    return [Path(str(base) + suffix) for suffix in DB_SUFFIXES]


def protected_files(db: Any) -> list[Path]:
    """The files of an open :class:`~partsdb.storage.database.Database` (none for a server)."""
    if db is None or getattr(db, "dialect", None) != "sqlite":
        return []
    return sqlite_files(db.url.database)


def _oserror(what: str, path: str | os.PathLike[str], err: OSError) -> FileProblem:
    reason = err.strerror or type(err).__name__
    return FileProblem(f"{what}: cannot write {os.fspath(path)!r}: {reason}; nothing was written")


def _is_stream(path: Path) -> bool:
    try:
        mode = path.stat().st_mode
    except OSError:
        return False
    return stat.S_ISCHR(mode) or stat.S_ISFIFO(mode)


def check_destination(dest: str | os.PathLike[str], *, force: bool = False,
                      protect: Iterable[Path] = (), what: str = "output") -> Path:
    """Refuse a destination that must not be written (see the module notes); returns it."""
    path = Path(dest).expanduser()
    text = str(dest)
    if not text or text.endswith(os.sep):
        raise OutputRefused(f"{what}: {text!r} is not a file name; expected e.g. parts.csv")
    resolved = path.resolve()
    guarded = {p for p in protect}
    if resolved in guarded or _same_file_as(path, guarded):
        raise OutputRefused(f"{what}: {text!r} is a file of the open database; "
                            "choose another file (nothing was written)")
    if path.is_dir():
        raise OutputRefused(f"{what}: {text!r} is a folder; expected a file name")
    if _is_stream(path):
        return path
    if path.exists() and not force:
        raise OutputRefused(f"{what}: {text!r} exists; nothing was written "
                            "(use --force to replace it)")
    parent = resolved.parent
    if parent.exists() and not parent.is_dir():
        raise FileProblem(f"{what}: cannot write {text!r}: {str(parent)!r} is not a folder; "
                          "nothing was written")
    if not parent.exists():
        raise FileProblem(f"{what}: cannot write {text!r}: the folder {str(parent)!r} does "
                          "not exist; nothing was written")
    return path


def _same_file_as(path: Path, others: set[Path]) -> bool:
    """Whether ``path`` is one of ``others`` under another name (a hard link)."""
    try:
        mine = path.stat()
    except OSError:
        return False
    for other in others:
        with contextlib.suppress(OSError):
            theirs = other.stat()
            if (mine.st_dev, mine.st_ino) == (theirs.st_dev, theirs.st_ino):
                return True
    return False


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists but belongs to someone else
        return True
    return True


def stale_parts(dest: Path) -> list[Path]:
    """Temporary files left beside ``dest`` by a run that was killed (its process is gone).

    Names are ``.NAME.PID-XXXX.part`` (plus SQLite's -wal/-shm/-journal of such a file); a
    name without a process id (older partsdb) is stale too."""
    folder = dest.parent
    prefix = f".{dest.name}."
    found: list[Path] = []
    try:
        entries = list(folder.iterdir())
    except OSError:
        return []
    for entry in entries:
        name = entry.name
        if not name.startswith(prefix):
            continue
        middle = name[len(prefix):]
        for suffix in DB_SUFFIXES:
            if suffix and middle.endswith(PART_SUFFIX + suffix):
                middle = middle[: -len(suffix)]
                break
        if not middle.endswith(PART_SUFFIX):
            continue
        tag = middle[: -len(PART_SUFFIX)]
        pid_text = tag.split("-", 1)[0]
        if pid_text.isdigit() and "-" in tag and _pid_alive(int(pid_text)):
            continue
        found.append(entry)
    return found


def remove_stale_parts(dest: Path) -> list[Path]:
    """Remove :func:`stale_parts` of ``dest``; returns what was removed."""
    removed = []
    for part in stale_parts(dest):
        with contextlib.suppress(OSError):
            part.unlink()
            removed.append(part)
    return removed


def _fsync_folder(folder: Path) -> None:
    with contextlib.suppress(OSError):  # not every platform can open a folder
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


@contextlib.contextmanager
def atomic_path(dest: str | os.PathLike[str], *, force: bool = False,
                protect: Iterable[Path] = (), what: str = "output") -> Iterator[Path]:
    """Yield a temporary path to fill; on success it is fsynced and renamed onto ``dest``.

    On any error the temporary file (and SQLite companions of it) is removed and ``dest`` is
    left as it was. OSErrors become :class:`FileProblem`.
    """
    path = check_destination(dest, force=force, protect=protect, what=what)
    if _is_stream(path):
        raise OutputRefused(f"{what}: {str(dest)!r} is a device or pipe, not a file")
    remove_stale_parts(path)
    tmp = path.parent / f".{path.name}.{os.getpid()}-{secrets.token_hex(4)}{PART_SUFFIX}"
    try:
        try:
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
            os.close(fd)
        except OSError as err:
            raise _oserror(what, dest, err) from err
        try:
            yield tmp
            fd = os.open(tmp, os.O_RDONLY)
            try:
                os.fsync(fd)
            finally:
                os.close(fd)
            os.replace(tmp, path)
        except OSError as err:
            raise _oserror(what, dest, err) from err
        except sqlite3.Error as err:  # SQLite writing the file (a backup): disk full, I/O error
            raise FileProblem(f"{what}: cannot write {str(dest)!r}: {err}; nothing was "
                              "written") from err
        _fsync_folder(path.parent)
    finally:
        for suffix in DB_SUFFIXES:
            with contextlib.suppress(OSError):
                Path(str(tmp) + suffix).unlink()


@contextlib.contextmanager
def atomic_open(dest: str | os.PathLike[str], *, force: bool = False,
                protect: Iterable[Path] = (), what: str = "output",
                encoding: str = "utf-8") -> Iterator[IO[str]]:
    """A text handle whose content replaces ``dest`` only when the block ends without error.

    ``-`` is standard output; a character device or pipe is written directly."""
    if str(dest) == "-":
        import sys

        yield sys.stdout
        sys.stdout.flush()
        return
    path = check_destination(dest, force=force, protect=protect, what=what)
    if _is_stream(path):
        try:
            with path.open("w", encoding=encoding, newline="") as handle:
                yield handle
        except OSError as err:
            raise _oserror(what, dest, err) from err
        return
    with atomic_path(path, force=force, protect=protect, what=what) as tmp:
        try:
            with tmp.open("w", encoding=encoding, newline="") as handle:
                yield handle
        except OSError as err:
            raise _oserror(what, dest, err) from err


def write_text(dest: str | os.PathLike[str], text: str, *, force: bool = False,
               protect: Iterable[Path] = (), what: str = "output") -> None:
    """Write ``text`` to ``dest`` through :func:`atomic_open`."""
    with atomic_open(dest, force=force, protect=protect, what=what) as handle:
        handle.write(text)




@contextlib.contextmanager
def input_path(source: str | os.PathLike[str]) -> Iterator[Path]:
    """A path to read ``source`` from; ``-`` copies standard input to a private temporary file
    (removed when the block ends), so readers that need a seekable file can use it."""
    if str(source) != "-":
        yield Path(source)
        return
    import shutil
    import sys
    import tempfile

    from partsdb.errors import PartsdbError

    with tempfile.TemporaryDirectory(prefix="partsdb-stdin-") as folder:
        copy = Path(folder) / "stdin.csv"
        with copy.open("wb") as handle:
            shutil.copyfileobj(sys.stdin.buffer, handle)
        try:
            yield copy
        except PartsdbError as err:  # name the input as the user gave it, not the copy
            err.args = tuple(a.replace(str(copy), "standard input") if isinstance(a, str)
                             else a for a in err.args)
            raise


__all__ = ["FileProblem", "OutputRefused", "atomic_open", "atomic_path", "check_destination",
           "input_path", "protected_files", "remove_stale_parts", "sqlite_files", "stale_parts",
           "write_text"]
