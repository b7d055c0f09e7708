"""Reading a zip backup without trusting it: shape first, sizes next, checksums, then rows.

A zip backup (see :mod:`partsdb.services.shop`) is checked in this order before any row
reaches the database:

1. the archive's members: no symlink, no absolute or ``..`` path, no duplicate name, and every
   declared (uncompressed) size within :data:`MEMBER_LIMIT` (total :data:`TOTAL_LIMIT`);
2. ``manifest.json`` (at most :data:`MANIFEST_LIMIT` bytes): an object with the expected
   format, an integer ``format_version``, a known schema revision, integer totals, and
   ``tables`` as an object whose every entry has ``file`` (a member of the archive),
   ``sha256`` (64 hex digits), ``rows`` (an integer) and ``columns`` (known column names);
3. each member's SHA-256, computed while streaming it in 1 MiB pieces (never read whole);
4. each row, decoded strictly (integers within the column's range, finite floats, ISO dates,
   booleans only ``1``/``0``, UTF-8 text without NUL, strings within the column's length)
   and, for devices, checked by the same rules as an import (:func:`partsdb.device.parse_device`)
   with the stored key equal to the normalised designation and no designation twice.

Every problem is a :class:`~partsdb.services.shop.BackupError` (exit 2) naming the member,
line and column; nothing is written.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import re
import stat
import zipfile
import zlib
from collections.abc import Callable, Iterator
from datetime import datetime
from pathlib import PurePosixPath
from typing import Any, TypeGuard

from sqlalchemy import BigInteger, Boolean, DateTime, Float, Integer, String, Table

from partsdb.errors import InvalidInput

MANIFEST = "manifest.json"
MANIFEST_LIMIT = 1 << 20
"""Largest manifest read (a real one is about 2 kB)."""
MEMBER_LIMIT = 1 << 30
"""Largest uncompressed member accepted (1 GiB; a 200,000-device catalog is about 60 MB)."""
TOTAL_LIMIT = 4 << 30
"""Largest uncompressed archive accepted (4 GiB)."""
CHUNK = 1 << 20
NULL = "\\N"
INT32 = (-(2**31), 2**31 - 1)
INT64 = (-(2**63), 2**63 - 1)
_HEX64 = re.compile(r"[0-9a-f]{64}")
_INT = re.compile(r"[+-]?\d{1,19}")


class ArchiveError(InvalidInput):
    """A zip backup refused: damaged, tampered or not a partsdb backup (exit 2)."""


def _is_int(value: Any) -> TypeGuard[int]:
    return isinstance(value, int) and not isinstance(value, bool)


def check_members(archive: zipfile.ZipFile, where: str) -> dict[str, zipfile.ZipInfo]:
    """The archive's members by name, after the structural checks (item 1 above)."""
    members: dict[str, zipfile.ZipInfo] = {}
    total = 0
    for info in archive.infolist():
        name = info.filename
        mode = info.external_attr >> 16
        if stat.S_ISLNK(mode):
            raise ArchiveError(f"restore: {where} holds a symbolic link {name!r}; a partsdb "
                               "backup holds plain files only")
        path = PurePosixPath(name.replace("\\", "/"))
        if path.is_absolute() or ".." in path.parts or ":" in name:
            raise ArchiveError(f"restore: {where} holds a member with an unsafe path {name!r}")
        if name in members:
            raise ArchiveError(f"restore: {where} holds {name!r} twice")
        if info.file_size > MEMBER_LIMIT:
            raise ArchiveError(f"restore: {name} in {where} declares {info.file_size:,} bytes; "
                               f"the limit is {MEMBER_LIMIT:,} (refused before reading it)")
        total += info.file_size
        members[name] = info
    if total > TOTAL_LIMIT:
        raise ArchiveError(f"restore: {where} declares {total:,} bytes in all; the limit is "
                           f"{TOTAL_LIMIT:,}")
    return members


def read_manifest(archive: zipfile.ZipFile, members: dict[str, zipfile.ZipInfo], where: str,
                  tables: dict[str, Table], fmt: str, max_version: int,
                  known_revisions: Callable[[], list[str]]) -> dict[str, Any]:
    """The manifest, its shape and types checked (item 2 above)."""
    info = members.get(MANIFEST)
    if info is None:
        raise ArchiveError(f"restore: {where} has no manifest.json; expected a zip made by "
                           "partsdb backup")
    if info.file_size > MANIFEST_LIMIT:
        raise ArchiveError(f"restore: manifest.json in {where} is {info.file_size:,} bytes; "
                           f"the limit is {MANIFEST_LIMIT:,}")
    try:
        manifest = json.loads(_read_small(archive, info).decode("utf-8"))
    except (ValueError, UnicodeDecodeError) as err:
        raise ArchiveError(f"restore: manifest.json in {where} is not valid JSON ({err})") from err
    if not isinstance(manifest, dict):
        raise ArchiveError(f"restore: manifest.json in {where} is a {type(manifest).__name__}; "
                           "expected an object")
    if manifest.get("format") != fmt:
        raise ArchiveError(f"restore: {where} is not a partsdb backup (format "
                           f"{str(manifest.get('format'))[:40]!r}, expected {fmt!r})")
    version = manifest.get("format_version")
    if not _is_int(version) or version < 1:
        raise ArchiveError(f"restore: manifest format_version {str(version)[:40]!r} in {where}; "
                           "expected a whole number from 1")
    if version > max_version:
        raise ArchiveError(f"restore: {where} uses backup format version {version}; this "
                           f"partsdb reads up to {max_version}")
    revision = manifest.get("schema_revision")
    if not isinstance(revision, str) or revision not in known_revisions():
        raise ArchiveError(f"restore: the backup has schema revision {str(revision)[:40]!r}, "
                           "which this partsdb does not know; restore it with a newer partsdb")
    for key in ("stock_total", "ledger_total"):
        if not _is_int(manifest.get(key)):
            raise ArchiveError(f"restore: manifest {key} {str(manifest.get(key))[:40]!r} in "
                               f"{where}; expected a whole number")
    entries = manifest.get("tables")
    if not isinstance(entries, dict):
        raise ArchiveError(f"restore: manifest tables in {where} is a "
                           f"{type(entries).__name__}; expected an object")
    for name, entry in entries.items():
        if name not in tables:
            raise ArchiveError(f"restore: the backup holds a table {name[:40]!r} this partsdb "
                               "does not know; restore it with a newer partsdb")
        if not isinstance(entry, dict):
            raise ArchiveError(f"restore: manifest entry of table {name!r} is a "
                               f"{type(entry).__name__}; expected an object")
        file, digest, rows = entry.get("file"), entry.get("sha256"), entry.get("rows")
        columns = entry.get("columns")
        if not isinstance(file, str) or file not in members or file == MANIFEST:
            raise ArchiveError(f"restore: table {name!r}: file {str(file)[:60]!r} is not a "
                               f"member of {where}")
        if not isinstance(digest, str) or not _HEX64.fullmatch(digest):
            raise ArchiveError(f"restore: table {name!r}: sha256 {str(digest)[:70]!r}; expected "
                               "64 lower-case hex digits")
        if not _is_int(rows) or rows < 0:
            raise ArchiveError(f"restore: table {name!r}: rows {str(rows)[:40]!r}; expected a "
                               "whole number, 0 or more")
        if (not isinstance(columns, list) or not columns
                or not all(isinstance(c, str) for c in columns)):
            raise ArchiveError(f"restore: table {name!r}: columns must be a list of names")
        unknown = [c for c in columns if c not in tables[name].columns]
        if unknown:
            raise ArchiveError(f"restore: table {name!r} in the backup has column(s) "
                               f"{', '.join(sorted(unknown))[:80]} this partsdb does not know")
    files = [e["file"] for e in entries.values()]
    if len(set(files)) != len(files):
        raise ArchiveError(f"restore: two tables of {where} name the same file")
    return manifest


def _read_small(archive: zipfile.ZipFile, info: zipfile.ZipInfo) -> bytes:
    try:
        with archive.open(info) as handle:
            return handle.read(MANIFEST_LIMIT + 1)
    except (zipfile.BadZipFile, zlib.error, EOFError, OSError, NotImplementedError,
            RuntimeError) as err:
        raise ArchiveError(f"restore: cannot read {info.filename}: {err}") from err


def verify_checksum(archive: zipfile.ZipFile, info: zipfile.ZipInfo, expected: str,
                    where: str) -> None:
    """Stream ``info`` in pieces and compare its SHA-256 with ``expected`` (item 3 above)."""
    digest = hashlib.sha256()
    seen = 0
    try:
        with archive.open(info) as handle:
            while piece := handle.read(CHUNK):
                seen += len(piece)
                if seen > info.file_size or seen > MEMBER_LIMIT:
                    raise ArchiveError(f"restore: {info.filename} in {where} is longer than it "
                                       "declares; refused")
                digest.update(piece)
    except ArchiveError:
        raise
    except (zipfile.BadZipFile, zlib.error, EOFError, OSError, NotImplementedError,
            RuntimeError) as err:
        raise ArchiveError(f"restore: {info.filename} in {where} is damaged ({err})") from err
    if digest.hexdigest() != expected:
        raise ArchiveError(f"restore: {info.filename} in {where} is damaged (its SHA-256 differs "
                           "from the manifest); nothing was changed")


def _decoder(column: Any) -> Callable[[str], Any]:
    kind = column.type
    if isinstance(kind, Boolean):
        def boolean(s: str) -> bool:
            if s not in ("0", "1"):
                raise ValueError("expected 1 or 0")
            return s == "1"
        return boolean
    if isinstance(kind, Integer):
        low, high = INT64 if isinstance(kind, BigInteger) else INT32

        def integer(s: str) -> int:
            if not _INT.fullmatch(s) or not low <= int(s) <= high:
                raise ValueError(f"expected a whole number from {low} to {high}")
            value = int(s)
            return value
        return integer
    if isinstance(kind, Float):
        def number(s: str) -> float:
            value = float(s)
            if not math.isfinite(value):
                raise ValueError("expected a finite number")
            return value
        return number
    if isinstance(kind, DateTime):
        def when(s: str) -> datetime:
            return datetime.fromisoformat(s)
        return when
    length = kind.length if isinstance(kind, String) else None

    def textual(s: str) -> str:
        value = s[1:] if s.startswith("\\") else s
        if "\x00" in value:
            raise ValueError("text holds a NUL character")
        if length is not None and len(value) > length:
            raise ValueError(f"longer than {length} characters")
        return value
    return textual


def rows(archive: zipfile.ZipFile, table: Table, entry: dict[str, Any], where: str,
         batch: int) -> Iterator[list[dict[str, Any]]]:
    """The rows of one table's member, decoded and checked (item 4 above), in batches."""
    from partsdb.designations import normalize
    from partsdb.device import FIELD_NAMES, parse_device

    file = entry["file"]
    columns = [table.columns[c] for c in entry["columns"]]
    decoders = [_decoder(c) for c in columns]
    names = [c.name for c in columns]
    missing = [c.name for c in table.columns if not c.nullable and c.default is None
               and not c.primary_key and c.name not in names]
    if "id" not in names:
        missing.insert(0, "id")
    if missing:
        raise ArchiveError(f"restore: {file}: column(s) {', '.join(missing)} missing")
    is_devices = table.name == "devices"
    seen_keys: dict[str, int] = {}
    out: list[dict[str, Any]] = []
    line = 1
    try:
        with archive.open(file) as raw:
            reader = csv.reader(io.TextIOWrapper(raw, encoding="utf-8", newline=""))
            header = next(reader, None)
            if header is None:
                raise ArchiveError(f"restore: {file} in {where} is empty; expected a header "
                                   "line")
            if header != names:
                raise ArchiveError(f"restore: {file}: header {','.join(header)[:120]!r} differs "
                                   "from the manifest's columns")
            for line, cells in enumerate(reader, start=2):
                if len(cells) != len(names):
                    raise ArchiveError(f"restore: {file} line {line} has {len(cells)} cells, "
                                       f"expected {len(names)}")
                record: dict[str, Any] = {}
                for name, decode, cell in zip(names, decoders, cells, strict=True):
                    if cell == NULL:
                        record[name] = None
                        continue
                    try:
                        record[name] = decode(cell)
                    except ValueError as err:
                        reason = str(err).split(":")[0] if "Invalid isoformat" not in str(err) \
                            else "expected an ISO date and time"
                        if reason.startswith("could not convert"):
                            reason = "expected a number"
                        raise ArchiveError(f"restore: {file} line {line}, column {name}: "
                                           f"{cell[:40]!r}: {reason}") from err
                if is_devices:
                    _check_device(record, file, line, seen_keys, normalize, parse_device,
                                  FIELD_NAMES)
                if table.name == "swaps":
                    for text_col in ("original", "substitute"):
                        if (record.get(text_col) is not None
                                and record.get(f"{text_col}_key") != normalize(record[text_col])):
                            raise ArchiveError(f"restore: {file} line {line}: {text_col}_key "
                                               f"{str(record.get(f'{text_col}_key'))[:40]!r} is "
                                               f"not the normalised {text_col}")
                out.append(record)
                if len(out) >= batch:
                    yield out
                    out = []
    except UnicodeDecodeError as err:
        raise ArchiveError(f"restore: {file} after line {line}: not UTF-8 text ({err.reason})"
                           ) from err
    except csv.Error as err:
        raise ArchiveError(f"restore: {file} line {line + 1}: {err}") from err
    except (zipfile.BadZipFile, zlib.error, EOFError, NotImplementedError) as err:
        raise ArchiveError(f"restore: {file} in {where} is damaged ({err})") from err
    if out:
        yield out


def _check_device(record: dict[str, Any], file: str, line: int, seen: dict[str, int],
                  normalize: Callable[[str], str], parse_device: Callable[..., Any],
                  field_names: tuple[str, ...]) -> None:
    raw = {k: record[k] for k in field_names if k in record}
    if "obsolete" in raw and raw["obsolete"] is None:
        raw["obsolete"] = False
    try:
        device = parse_device(raw)
    except InvalidInput as err:
        raise ArchiveError(f"restore: {file} line {line}: {err}") from err
    designation = str(record.get("designation") or "")
    key = normalize(designation)
    if record.get("key") != key:
        raise ArchiveError(f"restore: {file} line {line}: key {str(record.get('key'))[:40]!r} is "
                           f"not the normalised designation {key!r}")
    if key in seen:
        raise ArchiveError(f"restore: {file} line {line}: designation {designation!r} is the "
                           f"same part as line {seen[key]}")
    seen[key] = line
    del device  # checked only: the stored values are restored exactly as backed up
