"""The ranking's catalog columns of a SQLite database, kept on disk for the next process.

A new process (one ``partsdb substitute``) would read half a million rows through the sqlite3
driver, a Python object per cell, before it can rank: seconds at a million devices. This cache
keeps the columns :func:`partsdb.services.substitution.read_group` builds as one uncompressed
``.npz`` file per database and group (numbers as float64, choices as int8/int16/int32 codes,
designations and keys as fixed-width Unicode arrays, never Python objects), read back with
numpy in a few tens of milliseconds.

Trade-offs, stated: numbers stay float64 (float32 would halve the largest part but move ratings
such as 0.15 A by a rounding step, and verdicts compare ratings with derated limits exactly);
the text columns are as wide as the longest key of the group (4 bytes a character).

Invalidation: each file carries the catalog version it was read at — (row count, newest
``updated_at``, highest id) of ``devices``, read from the database on every use — and its
format number; a file whose version differs is ignored and replaced. Adding, editing, importing
or removing a device changes the version (the edit sets ``updated_at``; a removal lowers the
count; an addition raises the highest id). Only SQLite files are cached: a PostgreSQL catalog is
shared by many benches and read each time a process starts.

Where: ``$PARTSDB_CACHE_DIR`` or the per-user cache directory (platformdirs), one file per
(database path, group) named by a digest of both; files are written through
:func:`partsdb.services.files.atomic_path`, so a reader never sees half a file. Deleting the
folder is always safe.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import zipfile
from pathlib import Path
from typing import Any

import numpy as np

from partsdb.errors import PartsdbError
from partsdb.ranking import KINDS, POLARITIES, CatalogColumns
from partsdb.ranking.columns import NUMBERS
from partsdb.services.files import atomic_path

CACHE_FORMAT = 1
"""Raised whenever the arrays kept change meaning; older files are then ignored."""
ENV = "PARTSDB_CACHE_DIR"

_ARRAYS = ("designation", "key", "polarity", "kind", "material", "case_rated", "package",
           "pinout", *NUMBERS)


def cache_dir() -> Path:
    """The folder of the cache files (``$PARTSDB_CACHE_DIR`` or the user cache directory)."""
    chosen = os.environ.get(ENV)
    if chosen:
        return Path(chosen)
    from platformdirs import user_cache_dir

    return Path(user_cache_dir("partsdb")) / "columns"


def database_path(session: Any) -> Path | None:
    """The resolved file of the session's SQLite database (None: a server or in memory)."""
    url = session.get_bind().url
    if url.get_backend_name() != "sqlite" or not url.database or url.database == ":memory:":
        return None
    return Path(url.database).expanduser().resolve()


def cache_file(database: Path, part: str) -> Path:
    digest = hashlib.sha256(f"{database}\0{part}".encode()).hexdigest()[:24]
    return cache_dir() / f"{digest}.npz"


def _version_text(version: tuple[Any, ...]) -> np.ndarray:
    return np.array([str(CACHE_FORMAT), *map(str, version)])


def load(database: Path, part: str, version: tuple[Any, ...]) -> CatalogColumns | None:
    """The cached columns of ``part`` at ``version``, or None (no file, another version, or a
    file that cannot be read: the caller reads the database instead)."""
    path = cache_file(database, part)
    try:
        with np.load(path, allow_pickle=False) as data:
            if data["version"].tolist() != _version_text(version).tolist():
                return None
            arrays = {name: data[name] for name in _ARRAYS}
            packages = tuple(data["packages"].tolist())
            pinouts = tuple(data["pinouts"].tolist())
    except (OSError, KeyError, ValueError, zipfile.BadZipFile):
        return None
    return CatalogColumns(**arrays, packages=packages, pinouts=pinouts)


def store(database: Path, part: str, version: tuple[Any, ...], columns: CatalogColumns) -> None:
    """Write ``columns`` for the next process (a failure to write is not an error: the cache
    only saves time)."""
    path = cache_file(database, part)
    arrays = {name: getattr(columns, name) for name in _ARRAYS}
    for name in ("designation", "key"):
        if arrays[name].dtype == object:
            arrays[name] = arrays[name].astype(str)
    with contextlib.suppress(OSError, PartsdbError):
        path.parent.mkdir(parents=True, exist_ok=True)
        with atomic_path(path, force=True, what="column cache") as tmp, \
                open(tmp, "wb") as handle:
            np.savez(handle, version=_version_text(version),
                     packages=np.array(columns.packages, dtype=str),
                     pinouts=np.array(columns.pinouts, dtype=str), **arrays)


def remove(database: Path) -> None:
    """Forget every cached group of ``database`` (the bench's uncached figure)."""
    for part in ("all", *(f"{p}/{k}" for p in POLARITIES for k in KINDS)):
        cache_file(database, part).unlink(missing_ok=True)
