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
    """The named tabs on top (Drawers marked, the database at the right), the place tree beside
    all lots, QX3302 carrying the word LOW, and the Drawers keys in one line below."""
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


async def _solve_pair(pilot: Any) -> None:
    stage = pilot.app.view("stage")
    stage.fill("QX3310", "QX3301")
    stage.action_solve()
    await pilot.pause()


def test_stage_80x24(snap_compare: Any, tmp_path: Path) -> None:
    """Stage tab marked; a solved swap: the values in unwrapped columns on the right, the fix as
    a table, the plot below the form on the left (no room beside the results)."""
    assert snap_compare(_app(tmp_path, "stage"), terminal_size=(80, 24), run_before=_solve_pair)


def test_stage_120x40(snap_compare: Any, tmp_path: Path) -> None:
    """Wide: the same solved swap with the plot beside the results, under them."""
    assert snap_compare(_app(tmp_path, "stage"), terminal_size=(120, 40),
                        run_before=_solve_pair)
