"""Times as stored (naive UTC) and as shown (the machine's local time, zone named).

The ledger stores UTC without a zone (``storage.models.utcnow``); people read the time of their
own wall clock. Showing converts UTC -> local and names the zone ("CET", "EDT"), so a time is
never ambiguous on screen; dates typed as filters are local days, converted back to UTC.
"""

from __future__ import annotations

from datetime import UTC, datetime, tzinfo


def to_local(at: datetime, zone: tzinfo | None = None) -> datetime:
    """A stored naive-UTC time as an aware local time (``zone``: the machine's when None)."""
    aware = at.replace(tzinfo=UTC) if at.tzinfo is None else at
    return aware.astimezone(zone)


def show(at: datetime, zone: tzinfo | None = None, seconds: bool = False) -> str:
    """"2026-12-02 12:24 CET": local time and the zone's name (or its UTC offset)."""
    local = to_local(at, zone)
    name = local.tzname() or local.strftime("%z")
    return local.strftime("%Y-%m-%d %H:%M" + (":%S" if seconds else "")) + f" {name}"


def zone_name(zone: tzinfo | None = None, when: datetime | None = None) -> str:
    """The local zone's name now (or at ``when``), for column headings."""
    local = to_local(when or datetime.now(UTC), zone)
    return local.tzname() or local.strftime("%z")


def local_to_utc(at: datetime, zone: tzinfo | None = None) -> datetime:
    """A naive local time (as typed) -> naive UTC, for comparing with stored times."""
    if at.tzinfo is None:
        at = at.replace(tzinfo=zone) if zone is not None else at.astimezone()
    return at.astimezone(UTC).replace(tzinfo=None)
