"""The terminal UI's two speed figures, measured through Textual's pilot (``partsdb bench --tui``).

* ``tui_first_screen_s``: from creating the app on a database to its first screen (the Devices
  view, 80x24) mounted and painted (the app stamps the time in the callback it sets to run
  after the first refresh): what a technician waits for after ``partsdb tui``, less the
  interpreter's start. ``tui_first_screen_pilot_s`` is the same up to the pilot's first
  ``pause()`` returning, which waits for the whole process to look idle (up to 1 s) while the
  search index is already being built in a thread: not the technician's wait.
* ``tui_keystroke_ms``: one key typed into the Devices search, after the shared search index is
  built (a background thread after the first screen), from the key handed to the app's driver
  until the screen has refreshed with the hits (the view stamps the time in a
  ``call_after_refresh`` set when the search runs): the median over several keys, each after a
  pause longer than the search's debounce, so each key runs a search. The pilot's own round
  trip (``press`` then ``pause``) is not the figure: it waits for the process to look idle in
  20 ms sleeps, at least three of them, so even a key typed into a bare ``Input`` of an empty
  app takes about 80 ms there; the notes give that round trip beside the figure.
"""

from __future__ import annotations

import asyncio
import statistics
import time
from pathlib import Path
from typing import Any

QUERY = "2sc18"
"""Typed one key at a time: a JIS-style start that grows from many hits to few."""
INDEX_WAIT_S = 600.0


async def _measure(path: str) -> dict[str, float]:
    from partsdb.storage.database import open_database
    from tui.app import PartsdbApp
    from tui.devices import SEARCH_DEBOUNCE, DevicesView

    db = open_database(path, notify=None)
    try:
        start = time.perf_counter()
        app = PartsdbApp(db, start="devices", cursor_blink=False, poll_seconds=0)
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.pause()
            first_screen_pilot = time.perf_counter() - start
            if app.first_screen_at is None:
                raise RuntimeError("the first screen was not painted")
            first_screen = app.first_screen_at - start
            waited = time.perf_counter()
            while app.catalog_index.index is None:
                if time.perf_counter() - waited > INDEX_WAIT_S:
                    raise RuntimeError("the search index was not built within "
                                       f"{INDEX_WAIT_S:.0f} s")
                await pilot.pause(0.05)
            # The worker goes on to import the heavier views' modules: let it finish, so the
            # keys are timed on an idle app, as a technician types after the first seconds.
            await app.workers.wait_for_complete()
            view = app.query_one(DevicesView)
            await pilot.press("slash")
            times, trips = [], []
            for key in QUERY:
                await pilot.pause(SEARCH_DEBOUNCE * 2)
                before = view.searches_run
                t = time.perf_counter()
                await pilot.press(key)
                await pilot.pause()
                trips.append(time.perf_counter() - t)
                times.append(view.answered_at - t)
                if view.searches_run != before + 1 or view.answered_at < t:
                    raise RuntimeError(f"typing {key!r} ran {view.searches_run - before} "
                                       "searches and was not shown; expected one")
    finally:
        db.dispose()
    return {"tui_first_screen_s": first_screen, "tui_first_screen_pilot_s": first_screen_pilot,
            "tui_keystroke_ms": 1000 * statistics.median(times),
            "tui_keystroke_pilot_ms": 1000 * statistics.median(trips)}


def measure_tui(target: str | Path) -> dict[str, Any]:
    """Both figures on the database at ``target``, a SQLite path or a URL (see the module
    docstring)."""
    return asyncio.run(_measure(str(target)))
