"""Export of devices and lots as CSV in SI base units, every text cell through the formula
guard (:mod:`partsdb.csvsafe`), a file name written through the one file writer."""

from __future__ import annotations

from pathlib import Path
from typing import IO, TYPE_CHECKING, Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from partsdb.csvsafe import guard
from partsdb.device import COUNT_FIELDS, FIELD_NAMES, FIELDS
from partsdb.services.exchange import STOCK_COLUMNS
from partsdb.storage.models import DeviceRow

if TYPE_CHECKING:
    import pandas as pd


def neutralise(cell: Any) -> Any:
    """Prefix a text cell that a spreadsheet would run as a formula with an apostrophe
    (:func:`partsdb.csvsafe.guard`, the guard of every CSV partsdb writes)."""
    return guard(cell)


def devices_frame(session: Session) -> pd.DataFrame:
    import pandas as pd

    table = DeviceRow.__table__
    rows = session.execute(select(*[table.c[name] for name in FIELD_NAMES])
                           .order_by(table.c.key)).all()
    frame = pd.DataFrame(rows, columns=list(FIELD_NAMES))
    frame["obsolete"] = frame["obsolete"].map(lambda v: "yes" if v else "no")
    for name in COUNT_FIELDS:
        if name in frame:
            frame[name] = frame[name].astype("Int64")
    return frame


def stock_frame(session: Session) -> pd.DataFrame:
    import pandas as pd

    from partsdb.services import stock

    lots = stock.lots_at(session, None)
    return pd.DataFrame([[v.designation, v.location, v.quantity, v.condition, v.note or ""]
                         for v in lots], columns=list(STOCK_COLUMNS))


def write_csv(frame: pd.DataFrame, path: str | Path | IO[str],
              text_columns: list[str]) -> None:
    """Write a frame as RFC 4180 CSV with formula injection neutralised in text columns, to an
    open text handle or (atomically, replacing it) to a file name."""
    import csv

    safe = frame.copy()
    for col in text_columns:
        if col in safe:
            safe[col] = safe[col].map(neutralise)
    if isinstance(path, str | Path):  # a file name: written through the one file writer
        from partsdb.services.files import atomic_open

        with atomic_open(path, force=True, what="export") as handle:
            safe.to_csv(handle, index=False, quoting=csv.QUOTE_MINIMAL, lineterminator="\n",
                        float_format="%.12g")
        return
    safe.to_csv(path, index=False, quoting=csv.QUOTE_MINIMAL, lineterminator="\n",
                float_format="%.12g")


DEVICE_TEXT_COLUMNS = [f.name for f in FIELDS if f.kind in ("text", "choice")]
STOCK_TEXT_COLUMNS = ["designation", "location", "condition", "note"]


def export_devices(session: Session, path: str | Path | IO[str]) -> int:
    frame = devices_frame(session)
    write_csv(frame, path, DEVICE_TEXT_COLUMNS)
    return len(frame)


def export_stock(session: Session, path: str | Path | IO[str]) -> int:
    frame = stock_frame(session)
    write_csv(frame, path, STOCK_TEXT_COLUMNS)
    return len(frame)

