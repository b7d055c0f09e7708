"""Tampered zip backups: one change each to a real backup, with the exit code it must give.

A builder receives the backup's manifest (a dict) and its members (name -> bytes) and changes
them in place. With ``rechecksum`` the manifest's SHA-256 and row count of each changed member
are recomputed, as a careful attacker would, so that only the shape and row checks can refuse
the archive.
"""

from __future__ import annotations

import hashlib
import json
import stat
import zipfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

Members = dict[str, bytes]


@dataclass(frozen=True)
class Case:
    name: str
    change: Callable[[dict[str, Any], Members], Any]
    exit_code: int = 2
    rechecksum: bool = True
    symlink: str | None = None
    """Add a member that is a symbolic link with this name (PKZIP APPNOTE 4.4.15: the upper
    16 bits of the external attributes carry the Unix mode, S_IFLNK for a link)."""


def _cell(members: Members, file: str, column: str, value: str, row: int = 1) -> None:
    lines = members[file].decode("utf-8").split("\n")
    header = lines[0].split(",")
    cells = lines[row].split(",")
    # Rows of the chosen tables hold no quoted commas in the columns changed here.
    cells[header.index(column)] = value
    lines[row] = ",".join(cells)
    members[file] = "\n".join(lines).encode("utf-8")


def _raw_cell(members: Members, file: str, column: str, value: bytes) -> None:
    text = members[file]
    lines = text.split(b"\n")
    header = lines[0].split(b",")
    cells = lines[1].split(b",")
    cells[header.index(column.encode())] = value
    lines[1] = b",".join(cells)
    members[file] = b"\n".join(lines)


def _set(path: tuple[Any, ...], value: Any) -> Callable[[dict[str, Any], Members], None]:
    def change(manifest: dict[str, Any], _members: Members) -> None:
        target: Any = manifest
        for key in path[:-1]:
            target = target[key]
        target[path[-1]] = value
    return change


def _drop(path: tuple[Any, ...]) -> Callable[[dict[str, Any], Members], None]:
    def change(manifest: dict[str, Any], _members: Members) -> None:
        target: Any = manifest
        for key in path[:-1]:
            target = target[key]
        del target[path[-1]]
    return change


def _manifest_is_list(manifest: dict[str, Any], members: Members) -> None:
    members["manifest.json"] = json.dumps([manifest]).encode()


def _tables_as_list(manifest: dict[str, Any], _m: Members) -> None:
    manifest["tables"] = list(manifest["tables"].values())


def _unknown_column(manifest: dict[str, Any], members: Members) -> None:
    lines = members["lots.csv"].decode().split("\n")
    lines = [lines[0] + ",price"] + [line + ",1" if line else line for line in lines[1:]]
    members["lots.csv"] = "\n".join(lines).encode()
    manifest["tables"]["lots"]["columns"].append("price")


def _duplicate_designation(manifest: dict[str, Any], members: Members) -> None:
    # A second copy of the first device under a spaced-out spelling and an unnormalised key.
    text = members["devices.csv"].decode()
    lines = text.split("\n")
    header = lines[0].split(",")
    cells = lines[1].split(",")
    cells[header.index("id")] = "99999"
    designation = cells[header.index("designation")]
    spaced = designation[:2] + " " + designation[2:]
    cells[header.index("designation")] = spaced
    cells[header.index("key")] = spaced
    lines.insert(2, ",".join(cells))
    members["devices.csv"] = "\n".join(lines).encode()
    manifest["tables"]["devices"]["rows"] += 1


def _same_key_twice(manifest: dict[str, Any], members: Members) -> None:
    # The second copy's key is normalised correctly: the designation is still a duplicate.
    text = members["devices.csv"].decode()
    lines = text.split("\n")
    header = lines[0].split(",")
    cells = lines[1].split(",")
    cells[header.index("id")] = "99999"
    designation = cells[header.index("designation")]
    cells[header.index("designation")] = designation.lower()
    lines.insert(2, ",".join(cells))
    members["devices.csv"] = "\n".join(lines).encode()
    manifest["tables"]["devices"]["rows"] += 1


def _empty_tables(manifest: dict[str, Any], members: Members) -> None:
    for entry in manifest["tables"].values():
        members.pop(entry["file"], None)
    manifest["tables"] = {}
    manifest["stock_total"] = manifest["ledger_total"] = 0
    manifest["rows"] = {}


def _empty_member(manifest: dict[str, Any], members: Members) -> None:
    members["swaps.csv"] = b""


def _short_row(manifest: dict[str, Any], members: Members) -> None:
    lines = members["lots.csv"].split(b"\n")
    lines[1] = lines[1].rsplit(b",", 1)[0]
    members["lots.csv"] = b"\n".join(lines)


def _traversal(manifest: dict[str, Any], members: Members) -> None:
    members["../outside.csv"] = members["swaps.csv"]
    manifest["tables"]["swaps"]["file"] = "../outside.csv"
    del members["swaps.csv"]


def _missing_member(manifest: dict[str, Any], members: Members) -> None:
    del members["swaps.csv"]


def _huge_manifest(manifest: dict[str, Any], members: Members) -> None:
    manifest["padding"] = "x" * (2 << 20)


CASES: tuple[Case, ...] = (
    Case("manifest is a list, not an object", _manifest_is_list),
    Case("format_version is text", _set(("format_version",), "1")),
    Case("format_version missing", _drop(("format_version",))),
    Case("format_version from the future", _set(("format_version",), 99)),
    Case("schema revision unknown", _set(("schema_revision",), "9999")),
    Case("stock_total is text", _set(("stock_total",), "12")),
    Case("tables is a list", _tables_as_list),
    Case("table entry is a string", _set(("tables", "lots"), "lots.csv")),
    Case("file key missing", _drop(("tables", "lots", "file"))),
    Case("sha256 key missing", _drop(("tables", "lots", "sha256"))),
    Case("sha256 is a number", _set(("tables", "lots", "sha256"), 12345)),
    Case("rows is text", _set(("tables", "lots", "rows"), "many")),
    Case("columns is not a list", _set(("tables", "lots", "columns"), "id,quantity")),
    Case("unknown table", _set(("tables", "prices"), {"file": "lots.csv"})),
    Case("member named but missing", _missing_member),
    Case("member path climbs out (..)", _traversal),
    Case("symbolic link member", lambda m, s: None, symlink="link.csv"),
    Case("manifest over 1 MiB", _huge_manifest),
    Case("checksum differs (tampered, not re-checksummed)",
         lambda m, s: _cell(s, "lots.csv", "quantity", "7"), rechecksum=False),
    Case("unknown CSV column", _unknown_column),
    Case("bad int", lambda m, s: _cell(s, "lots.csv", "quantity", "seven")),
    Case("huge int", lambda m, s: _cell(s, "lots.csv", "quantity", "99999999999999999999")),
    Case("int beyond int32", lambda m, s: _cell(s, "lots.csv", "quantity", "2147483648")),
    Case("bad date", lambda m, s: _cell(s, "movements.csv", "at", "yesterday")),
    Case("bad float", lambda m, s: _cell(s, "devices.csv", "vceo", "forty")),
    Case("non-UTF-8 cell", lambda m, s: _raw_cell(s, "devices.csv", "notes", b"caf\xe9")),
    Case("empty member", _empty_member),
    Case("row with too few cells", _short_row),
    Case("negative Vceo", lambda m, s: _cell(s, "devices.csv", "vceo", "-16.0")),
    Case("Vceo NaN", lambda m, s: _cell(s, "devices.csv", "vceo", "nan")),
    Case("Vceo infinite", lambda m, s: _cell(s, "devices.csv", "vceo", "inf")),
    Case("NUL in text", lambda m, s: _raw_cell(s, "devices.csv", "notes", b"a\x00b")),
    Case("obsolete=yes (booleans are 1/0)",
         lambda m, s: _cell(s, "devices.csv", "obsolete", "yes")),
    Case("kind outside its choices", lambda m, s: _cell(s, "devices.csv", "kind", "fet")),
    Case("designation twice, unnormalised key", _duplicate_designation),
    Case("designation twice, other spelling", _same_key_twice),
    Case("text longer than its column",
         lambda m, s: _cell(s, "devices.csv", "package", "P" * 33)),
    Case("no tables: would empty the database (needs --allow-empty)", _empty_tables),
)


def read_backup(path: Path) -> tuple[dict[str, Any], Members]:
    with zipfile.ZipFile(path) as archive:
        members = {name: archive.read(name) for name in archive.namelist()}
    return json.loads(members["manifest.json"]), members


def build(case: Case, good: Path, dest: Path) -> Path:
    """Write the tampered archive for ``case`` (from the good backup ``good``) to ``dest``."""
    manifest, members = read_backup(good)
    before = dict(members)
    case.change(manifest, members)
    if case.rechecksum and isinstance(manifest.get("tables"), dict):
        for entry in manifest["tables"].values():
            if not isinstance(entry, dict):
                continue
            file = entry.get("file")
            if isinstance(file, str) and file in members and members[file] != before.get(file):
                entry["sha256"] = hashlib.sha256(members[file]).hexdigest()
    if members.get("manifest.json") == before["manifest.json"]:
        members["manifest.json"] = json.dumps(manifest).encode()
    with zipfile.ZipFile(dest, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for name, data in members.items():
            archive.writestr(name, data)
        if case.symlink:
            info = zipfile.ZipInfo(case.symlink)
            info.external_attr = (stat.S_IFLNK | 0o777) << 16
            archive.writestr(info, "/etc/passwd")
    return dest
