"""Hostile output paths (issue 14 items 1, 18): each with the exit code it must give.

``{db}`` is the open SQLite database, ``{dir}`` a scratch folder holding it, ``{file}`` an
existing ordinary file there. Every case must leave every existing file unchanged and no new
file behind (the tests compare a checksum listing of the folder before and after).
"""

from __future__ import annotations

OUTPUT_PATHS: tuple[tuple[str, str, bool, int], ...] = (
    # (what, path template, --force given, exit code)
    ("the open database", "{db}", True, 2),
    ("its write-ahead log", "{db}-wal", True, 2),
    ("its shared-memory index", "{db}-shm", True, 2),
    ("its rollback journal", "{db}-journal", True, 2),
    ("the database through a ./ detour", "{dir}/./sub/../shop.sqlite", True, 2),
    ("the database through a symbolic link", "{dir}/link.sqlite", True, 2),
    ("the database through a hard link", "{dir}/hard.sqlite", True, 2),
    ("an existing file without --force", "{file}", False, 2),
    ("a folder", "{dir}", True, 2),
    ("a name under an ordinary file", "{file}/out.csv", True, 3),
    ("a folder that does not exist", "{dir}/missing/out.csv", True, 3),
    ("a device that is always full", "/dev/full", True, 3),
)

EXCEPTIONS: dict[tuple[str, str], int] = {
    # A backup is a SQLite file or a zip written under a temporary name and renamed, so a
    # device is refused before anything is written rather than written and found full.
    ("backup", "a device that is always full"): 2,
}
