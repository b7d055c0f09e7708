"""The installed package holds every module and the demo's seed files (not only a source tree)."""

from __future__ import annotations

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _config() -> dict:
    with open(ROOT / "pyproject.toml", "rb") as f:
        return tomllib.load(f)["tool"]["setuptools"]


def test_every_python_package_is_listed_for_installation() -> None:
    # pyproject lists its packages (seed_data/ is mapped in by name), so a new sub-package must
    # be added there or a regular (non-editable) install would leave it out.
    listed = set(_config()["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts)
             for top in ("partsdb", "tui") for p in (ROOT / top).rglob("__init__.py")}
    assert found <= listed, f"not listed in pyproject.toml: {sorted(found - listed)}"


def test_seed_files_are_installed_with_the_package() -> None:
    config = _config()
    assert config["package-dir"]["partsdb_seed"] == "seed_data"
    patterns = config["package-data"]["partsdb_seed"]
    for name in ("devices.csv", "stock.csv", "movements.csv"):
        assert (ROOT / "seed_data" / name).is_file()
        assert any(Path(name).match(p) for p in patterns), name
