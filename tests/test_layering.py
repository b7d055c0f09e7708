"""Layering holds: pure domain modules import no database or UI code; `partsdb --help` stays light."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).parents[1] / "partsdb"
DOMAIN = sorted(p.stem for p in PACKAGE.glob("*.py") if p.stem not in ("__init__", "__main__", "bench"))


def _modules_after(code: str) -> set[str]:
    out = subprocess.run([sys.executable, "-c", code + "\nimport sys\nprint('\\n'.join(sys.modules))"],
                         capture_output=True, text=True, check=True)
    return set(out.stdout.split())


@pytest.mark.parametrize("module", DOMAIN)
def test_domain_module_imports_no_storage_or_ui(module: str) -> None:
    loaded = _modules_after(f"import partsdb.{module}")
    for forbidden in ("sqlalchemy", "textual", "tui", "pandas"):
        assert forbidden not in loaded, f"partsdb.{module} imports {forbidden}"


def test_help_is_light() -> None:
    loaded = _modules_after(
        "import sys\nfrom partsdb.cli import main\n"
        "try:\n    main(['--help'])\nexcept SystemExit:\n    pass")
    for heavy in ("pandas", "textual", "numpy", "sqlalchemy"):
        assert heavy not in loaded, f"partsdb --help imports {heavy}"
