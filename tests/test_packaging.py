"""The installed package holds every module, its data files and the demo's seed files (not only a
source tree), and the sdist holds what it takes to run the tests."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import partsdb

ROOT = Path(__file__).resolve().parents[1]


def _pyproject() -> dict:
    with open(ROOT / "pyproject.toml", "rb") as f:
        return tomllib.load(f)


def _manifest() -> list[tuple[str, list[str]]]:
    """(folder, patterns) of every ``recursive-include`` line of MANIFEST.in."""
    rules = []
    for line in (ROOT / "MANIFEST.in").read_text().splitlines():
        words = line.split()
        if words[:1] == ["recursive-include"]:
            rules.append((words[1], words[2:]))
    return rules


def _shipped(path: Path) -> bool:
    rel = path.relative_to(ROOT)
    return any(rel.parts[0] == folder and any(rel.match(p) for p in patterns)
               for folder, patterns in _manifest())


def test_every_python_package_is_listed_for_installation() -> None:
    # pyproject lists its packages (seed_data/ is mapped in by name), so a new sub-package must
    # be added there or a regular (non-editable) install would leave it out. A folder of Python
    # files is a package whether or not it has an __init__.py (the migration scripts have none).
    listed = set(_pyproject()["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts)
             for top in ("partsdb", "tui") for p in (ROOT / top).rglob("*.py")
             if "__pycache__" not in p.parts}
    assert found <= listed, f"not listed in pyproject.toml: {sorted(found - listed)}"


def test_seed_files_and_package_data_are_found_for_installation() -> None:
    config = _pyproject()["tool"]["setuptools"]
    assert config["package-dir"]["partsdb_seed"] == "seed_data"
    assert config["include-package-data"] is True
    data = [*(ROOT / "seed_data").glob("*"), *(ROOT / "tui").glob("*.tcss"),
            *(ROOT / "partsdb" / "storage" / "migrations").rglob("*.mako")]
    for name in ("devices.csv", "stock.csv", "movements.csv"):
        assert ROOT / "seed_data" / name in data
    assert any(p.suffix == ".mako" for p in data)  # alembic revision --autogenerate needs it
    missing = [str(p.relative_to(ROOT)) for p in data if not _shipped(p)]
    assert not missing, f"not matched by MANIFEST.in: {missing}"


def test_sdist_carries_the_test_suite_and_docs() -> None:
    files = [p for top in ("tests", "docs") for p in (ROOT / top).rglob("*")
             if p.is_file() and "__pycache__" not in p.parts]
    assert any(p.name == "conftest.py" for p in files)
    missing = [str(p.relative_to(ROOT)) for p in files if not _shipped(p)]
    assert not missing, f"not matched by MANIFEST.in: {missing}"


def test_one_source_for_the_version() -> None:
    project = _pyproject()["project"]
    assert "version" not in project and "version" in project["dynamic"]
    assert _pyproject()["tool"]["setuptools"]["dynamic"]["version"] == {"attr": "partsdb.__version__"}
    assert re.fullmatch(r"\d+\.\d+\.\d+", partsdb.__version__)


def test_license_is_an_spdx_string_with_its_file() -> None:
    # PEP 639: "license" is an SPDX expression and the text ships as a license file.
    project = _pyproject()["project"]
    assert project["license"] == "MIT"
    assert (ROOT / "LICENSE").read_text().startswith("MIT License")
    assert project["name"] != "partsdb"  # taken on the package index by an unrelated project
