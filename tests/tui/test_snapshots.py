"""A few pictures of the main views, at 80x24 and 120x40 (fixed invented data, no clock shown).

Regenerate after a reviewed change with ``pytest tests/tui/test_snapshots.py --snapshot-update``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from tests.tui.conftest import build_small_shop
from tui.app import build_app


def _app(tmp_path: Path, start: str) -> Any:
    return build_app(build_small_shop(tmp_path / "shop.sqlite"), start=start, cursor_blink=False)


def test_drawers_80x24(snap_compare: Any, tmp_path: Path) -> None:
    """The place tree beside all lots; QX3302 carries the word LOW; the view bar and keys below."""
    assert snap_compare(_app(tmp_path, "drawers"), terminal_size=(80, 24))


def test_devices_120x40(snap_compare: Any, tmp_path: Path) -> None:
    """Wide layout: catalog list on the left, the first device's full detail on the right."""
    assert snap_compare(_app(tmp_path, "devices"), terminal_size=(120, 40))


def test_substitute_120x40(snap_compare: Any, tmp_path: Path) -> None:
    """Ranked substitutes for QX3301 and the first one's side-by-side comparison with bars."""
    assert snap_compare(_app(tmp_path, "substitute"), terminal_size=(120, 40),
                        press=[*"QX3301", "enter"])


def test_help_80x24(snap_compare: Any, tmp_path: Path) -> None:
    """The help screen over the drawers: keys of every view and the safety cautions."""
    assert snap_compare(_app(tmp_path, "drawers"), terminal_size=(80, 24), press=["f1"])
