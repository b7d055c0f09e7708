"""Tampered zip backups (issue 14 items 13, 14): each gives its documented exit code, one line,
no traceback, and leaves the database exactly as it was (every row compared) on both backends.

The oracle for "nothing written" is the database's own content read before the attempt; the
archive cases (tests/attack_corpus/files/archives.py) each change one thing in a real backup.
Zip structure facts used by the cases: PKZIP APPNOTE.TXT 4.4.15 (external attributes hold the
Unix mode, so S_IFLNK marks a symbolic link) and 4.4.17 (a member name is a relative path).
"""

from __future__ import annotations

import hashlib
import tracemalloc
import zipfile
from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main
from partsdb.services import archive as checks
from partsdb.services import shop
from partsdb.storage.database import open_database
from tests.attack_corpus.files.archives import CASES, build
from tests.storage.workers import dump, fill_shop


def _cli(*args: str) -> object:
    return CliRunner().invoke(main, list(args))


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def good_backup(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("good")
    db = open_database(folder / "source.sqlite", notify=None)
    fill_shop(db)
    db.dispose()
    dest = folder / "good.zip"
    made = _cli("--db", str(folder / "source.sqlite"), "backup", "--format", "zip", str(dest))
    assert made.exit_code == 0, made.output  # type: ignore[attr-defined]
    return dest


def test_every_tampered_archive_is_refused_and_changes_nothing(db_url: str, tmp_path: Path,
                                                              good_backup: Path) -> None:
    first = _cli("--db", db_url, "restore", str(good_backup))
    assert first.exit_code == 0, first.output  # type: ignore[attr-defined]
    db = open_database(db_url, notify=None)
    before = dump(db)
    db.dispose()
    wrong: list[str] = []
    for number, case in enumerate(CASES):
        archive = build(case, good_backup, tmp_path / f"case{number}.zip")
        digest = _sha(archive)
        result = _cli("--db", db_url, "restore", "--force", str(archive))
        output = result.output  # type: ignore[attr-defined]
        if result.exit_code != case.exit_code:  # type: ignore[attr-defined]
            wrong.append(f"{case.name}: exit {result.exit_code}, expected {case.exit_code}: "  # type: ignore[attr-defined]
                         f"{output.strip()[:200]} {result.exception!r}")  # type: ignore[attr-defined]
        elif len(output.strip().splitlines()) != 1 or not output.startswith("error: "):
            wrong.append(f"{case.name}: not one error line: {output!r}")
        if _sha(archive) != digest:
            wrong.append(f"{case.name}: the archive itself changed")
    db = open_database(db_url, notify=None)
    after = dump(db)
    db.dispose()
    assert wrong == []
    assert after == before


def test_an_archive_without_rows_empties_only_with_allow_empty(db_url: str, tmp_path: Path,
                                                              good_backup: Path) -> None:
    assert _cli("--db", db_url, "restore", str(good_backup)).exit_code == 0  # type: ignore[attr-defined]
    empty = build(next(c for c in CASES if c.name.startswith("no tables")), good_backup,
                  tmp_path / "empty.zip")
    refused = _cli("--db", db_url, "restore", "--force", str(empty))
    assert refused.exit_code == 2 and "--allow-empty" in refused.output  # type: ignore[attr-defined]
    done = _cli("--db", db_url, "restore", "--force", "--allow-empty", str(empty))
    assert done.exit_code == 0, done.output  # type: ignore[attr-defined]
    db = open_database(db_url, notify=None)
    assert all(rows == [] for rows in dump(db).values())
    db.dispose()


def test_oversized_member_is_refused_from_its_declared_size(tmp_path: Path,
                                                            monkeypatch: pytest.MonkeyPatch,
                                                            good_backup: Path) -> None:
    """A member declaring more than the limit is refused before a byte of it is read. The
    limit is lowered here so the test archive stays small; the same check refuses a 1.5 GB
    member at the real 1 GiB limit."""
    monkeypatch.setattr(checks, "MEMBER_LIMIT", 1 << 20)
    bomb = tmp_path / "bomb.zip"
    with zipfile.ZipFile(good_backup) as good, \
            zipfile.ZipFile(bomb, "w", compression=zipfile.ZIP_DEFLATED) as out:
        for name in good.namelist():
            out.writestr(name, good.read(name))
        out.writestr("zeros.bin", b"\0" * (2 << 20))
    db = open_database(tmp_path / "t.sqlite", notify=None)
    try:
        with pytest.raises(checks.ArchiveError, match="declares 2,097,152 bytes"):
            shop.restore(db, bomb)
    finally:
        db.dispose()


def test_checksums_are_verified_streaming(tmp_path: Path) -> None:
    """Hashing a 64 MiB member keeps Python's allocations far below its size (read in 1 MiB
    pieces); a whole-member read would allocate at least 64 MiB."""
    big = tmp_path / "big.zip"
    with zipfile.ZipFile(big, "w", compression=zipfile.ZIP_DEFLATED) as out:
        out.writestr("zeros.bin", b"\0" * (64 << 20))
    with zipfile.ZipFile(big) as archive:
        info = archive.getinfo("zeros.bin")
        tracemalloc.start()
        with pytest.raises(checks.ArchiveError, match="SHA-256 differs"):
            checks.verify_checksum(archive, info, "0" * 64, "big.zip")
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
    assert peak < 8 << 20, peak
