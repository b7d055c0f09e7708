"""Ledger times: stored UTC shown in local time with the zone named, typed local days to UTC."""

from __future__ import annotations

from datetime import datetime
from zoneinfo import ZoneInfo

import pytest

from partsdb.clock import local_to_utc, show, to_local

BERLIN = ZoneInfo("Europe/Berlin")
NEW_YORK = ZoneInfo("America/New_York")


@pytest.mark.parametrize(("utc", "zone", "expected"), [
    # Central European Time is UTC+1 in winter, UTC+2 in summer (EU Directive 2000/84/EC:
    # summer time from the last Sunday of March to the last Sunday of October).
    (datetime(2026, 1, 15, 12, 0), BERLIN, "2026-01-15 13:00 CET"),
    (datetime(2026, 7, 15, 12, 0), BERLIN, "2026-07-15 14:00 CEST"),
    # US Eastern: UTC-5 (EST), UTC-4 in daylight time (EDT), US Energy Policy Act of 2005.
    (datetime(2026, 1, 15, 3, 30), NEW_YORK, "2026-01-14 22:30 EST"),
    (datetime(2026, 7, 15, 3, 30), NEW_YORK, "2026-07-14 23:30 EDT"),
])
def test_stored_utc_is_shown_in_local_time_with_the_zone(utc: datetime, zone: ZoneInfo,
                                                         expected: str) -> None:
    assert show(utc, zone) == expected


def test_a_typed_local_time_becomes_the_stored_utc_and_back() -> None:
    typed = datetime(2026, 7, 15, 0, 0)  # midnight in Berlin, summer: 22:00 UTC the day before
    assert local_to_utc(typed, BERLIN) == datetime(2026, 7, 14, 22, 0)
    assert to_local(local_to_utc(typed, BERLIN), BERLIN).replace(tzinfo=None) == typed
