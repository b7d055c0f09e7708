"""Layering holds: the import-linter contracts in pyproject.toml are kept, they cover every domain
module, and `partsdb --help` stays light."""

from __future__ import annotations

import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
NOT_DOMAIN = {"__init__", "cli", "perf", "services", "storage"}
"""What sits directly in partsdb/ but is not domain: the faces, the harness, services, storage."""


def _contracts() -> list[dict]:
    with open(ROOT / "pyproject.toml", "rb") as f:
        return tomllib.load(f)["tool"]["importlinter"]["contracts"]


def _lint_imports() -> Path:
    script = Path(sys.executable).parent / "lint-imports"
    found = script if script.exists() else shutil.which("lint-imports")
    assert found, "lint-imports not found; install the test extra (import-linter)"
    return Path(found)


def test_import_contracts_are_kept() -> None:
    out = subprocess.run([str(_lint_imports()), "--no-cache"], cwd=ROOT, capture_output=True,
                         text=True)
    assert out.returncode == 0, out.stdout + out.stderr
    assert "2 kept, 0 broken" in out.stdout, out.stdout


def test_ui_free_contract_names_every_domain_module() -> None:
    # The forbidden contract lists its modules; a new module directly in partsdb/ must be added
    # there (or to NOT_DOMAIN, with a reason) so that it is checked.
    core = next(c for c in _contracts() if c["type"] == "forbidden")
    present = {p.stem for p in (ROOT / "partsdb").glob("*.py")}
    present |= {p.parent.name for p in (ROOT / "partsdb").glob("*/__init__.py")}
    domain = {f"partsdb.{name}" for name in present - NOT_DOMAIN}
    assert domain <= set(core["source_modules"]), sorted(domain - set(core["source_modules"]))
    assert {"sqlalchemy", "pandas", "textual", "tui"} <= set(core["forbidden_modules"])


def test_help_is_light() -> None:
    # A fresh interpreter: the test run itself has loaded everything already.
    code = ("import sys\nfrom partsdb.cli import main\n"
            "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print('\\n'.join(sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    loaded = set(out.stdout.split())
    for heavy in ("pandas", "textual", "numpy", "sqlalchemy"):
        assert heavy not in loaded, f"partsdb --help imports {heavy}"
