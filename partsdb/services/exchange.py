"""CSV exchange of devices and stock (pandas), all-or-nothing.

An import reads the whole file, checks every row, and writes nothing unless every row is good;
the report lists every bad row by its line number in the file (the header is line 1). Plain
numeric cells are parsed column-wise; only cells carrying units or R-notation take the slower
per-cell path, so a catalog of 200,000 rows imports in seconds. Re-importing a file updates the
records in place (matched by normalised designation), so it never duplicates.

Export writes SI base units and neutralises spreadsheet formula injection: a text cell starting
with = + - @ TAB or CR gets a leading apostrophe (OWASP "CSV Injection"), while numbers such as
-5 in numeric columns stay numbers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlalchemy import select, update
from sqlalchemy.orm import Session

from partsdb.designations import normalize
from partsdb.device import (
    FALSE_WORDS,
    FIELD_BY_NAME,
    FIELD_NAMES,
    FIELDS,
    TRUE_WORDS,
    Device,
    InvalidRecord,
    check_columns,
    normalize_pinout,
    parse_field,
)
from partsdb.services import catalog
from partsdb.services.catalog import device_values
from partsdb.storage.models import DeviceRow
from partsdb.units import UnitError

if TYPE_CHECKING:
    import numpy as np
    import pandas as pd

STOCK_COLUMNS: tuple[str, ...] = ("designation", "location", "quantity", "condition", "note")
REQUIRED_DEVICE_COLUMNS = ("designation", "kind", "polarity", "material")
_INJECTION_START = ("=", "+", "-", "@", "\t", "\r", "\n")


class ImportRejected(ValueError):
    """The file was refused; ``problems`` lists (line, message); nothing was written."""

    def __init__(self, problems: list[tuple[int, str]], what: str = "rows") -> None:
        self.problems = problems
        lines = "\n".join(f"  line {line}: {msg}" if line else f"  {msg}"
                          for line, msg in problems[:200])
        more = f"\n  ... and {len(problems) - 200} more" if len(problems) > 200 else ""
        super().__init__(f"import refused, nothing was written ({len(problems)} problem(s)):\n"
                         f"{lines}{more}")


@dataclass
class ImportReport:
    added: int = 0
    updated: int = 0
    unchanged: int = 0
    warnings: list[tuple[int, str]] = field(default_factory=list)

    def summary(self) -> str:
        return (f"{self.added} added, {self.updated} updated, {self.unchanged} unchanged"
                + (f", {len(self.warnings)} warning(s)" if self.warnings else ""))


def read_csv(path: str | Path) -> pd.DataFrame:
    """Read a CSV as text cells (nothing guessed), blank cells as empty strings."""
    import pandas as pd

    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True,
                            encoding="utf-8-sig")
    except FileNotFoundError as err:
        raise ImportRejected([(0, f"file {str(path)!r} not found")]) from err
    except (pd.errors.ParserError, UnicodeDecodeError) as err:
        raise ImportRejected([(0, f"file {str(path)!r} is not a readable CSV: {err}")]) from err
    except pd.errors.EmptyDataError as err:
        raise ImportRejected([(0, f"file {str(path)!r} is empty")]) from err
    frame.columns = [str(c).strip().lower() for c in frame.columns]
    # Undo our own export's formula neutralising ("'=x" -> "=x") so files round-trip.
    for col in frame.columns:
        cells = frame[col]
        guarded = cells.str.match(r"^'[=+\-@\t\r\n]")
        if guarded.any():
            frame[col] = cells.where(~guarded, cells.str[1:])
    return frame


# ---------------------------------------------------------------- devices

def _parse_quantity_column(name: str, cells: pd.Series, problems: dict[int, list[str]]
                           ) -> np.ndarray:
    """Column-wise parse: numbers vectorised, only unit-bearing cells one by one."""
    import numpy as np
    import pandas as pd

    text = cells.str.strip()
    blank = text.isin(["", "—"]).to_numpy()
    numbers = pd.to_numeric(text.where(~blank), errors="coerce").to_numpy(dtype=float, copy=True)
    pending = ~blank & np.isnan(numbers)
    spec = FIELD_BY_NAME[name]
    if pending.any() and spec.kind == "quantity":
        # The common written form "40V", "300 MHz", "200mA" in one vectorised pass; anything
        # else (R-notation, junk) falls through to the per-cell parser and its messages.
        numbers, pending = _scale_plain(text, numbers, pending, spec.unit)
    slow = np.flatnonzero(pending)
    raw = text.to_numpy()
    for pos in slow:
        try:
            numbers[pos] = parse_field(name, raw[pos])
        except UnitError as err:
            problems.setdefault(int(pos), []).append(str(err))
    fast = ~blank
    fast[slow] = False
    if name == "low_stock":
        bad = fast & ~((numbers >= 0) & (numbers == np.floor(numbers)))
    else:
        bad = fast & ~(numbers > 0)
    for pos in np.flatnonzero(bad):
        try:
            parse_field(name, float(numbers[pos]))
        except UnitError as err:
            problems.setdefault(int(pos), []).append(str(err))
    return numbers


_PLAIN_WITH_UNIT = r"^([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*([TGMkKmuµμnpf]?)\s*({unit})$"


def _scale_plain(text: pd.Series, numbers: np.ndarray, pending: np.ndarray, unit: str
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Parse "number [prefix] unit" cells column-wise with the same prefix table as units.py."""
    import re

    import numpy as np

    from partsdb.units import PREFIXES, UNIT_SPELLINGS

    spellings = [re.escape(u) for u in UNIT_SPELLINGS.get(unit, ()) if u]
    if not spellings:
        return numbers, pending
    pattern = _PLAIN_WITH_UNIT.format(unit="|".join(spellings))
    subset = text[pending]
    parts = subset.str.extract(pattern, flags=re.IGNORECASE)
    matched = parts[0].notna().to_numpy()
    # A lower-case-insensitive match must not turn "m" (milli) into "M" (mega): prefixes are
    # taken exactly as written, from the original text.
    factor = parts[1].fillna("").map(PREFIXES).to_numpy(dtype=float)
    matched = matched & ~np.isnan(factor)  # a letter the case-folded match took for a prefix
    values = parts[0].astype(float).to_numpy() * factor
    positions = np.flatnonzero(pending)[matched]
    numbers[positions] = values[matched]
    pending = pending.copy()
    pending[positions] = False
    return numbers, pending


def _parse_choice_column(name: str, cells: pd.Series, problems: dict[int, list[str]]
                         ) -> list[str | None]:
    import numpy as np

    spec = FIELD_BY_NAME[name]
    lowered = cells.str.strip().str.lower()
    ok = (lowered.isin(spec.choices) | (lowered.eq("") & (not spec.required))).to_numpy()
    out: list[str | None] = [v or None for v in lowered.tolist()]
    for pos in np.flatnonzero(~ok):
        try:
            out[pos] = parse_field(name, cells.iloc[pos])
        except UnitError as err:
            problems.setdefault(int(pos), []).append(str(err))
    return out


def parse_device_frame(frame: pd.DataFrame) -> tuple[list[Device], dict[int, list[str]]]:
    """Devices from a frame of text cells, and problems by row position (column-wise)."""
    import numpy as np

    problems: dict[int, list[str]] = {}
    n = len(frame)
    columns: dict[str, Any] = {}
    for spec in FIELDS:
        if spec.name not in frame.columns:
            continue
        cells = frame[spec.name].astype(str)
        if spec.kind in ("quantity", "count"):
            columns[spec.name] = _parse_quantity_column(spec.name, cells, problems)
        elif spec.kind == "choice":
            columns[spec.name] = _parse_choice_column(spec.name, cells, problems)
        elif spec.kind == "bool":
            lowered = cells.str.strip().str.lower()
            values = lowered.isin(TRUE_WORDS).tolist()
            for pos in np.flatnonzero(~(lowered.isin(TRUE_WORDS) | lowered.isin(FALSE_WORDS))
                                      .to_numpy()):
                try:
                    values[pos] = parse_field(spec.name, cells.iloc[pos])
                except UnitError as err:
                    problems.setdefault(int(pos), []).append(str(err))
            columns[spec.name] = values
        else:
            stripped = cells.str.strip()
            columns[spec.name] = [v or None for v in stripped.tolist()]
    if "pinout" in columns:
        columns["pinout"] = [normalize_pinout(v) for v in columns["pinout"]]
    for pos, found in check_columns(columns, n).items():
        seen = {m.split(":")[0] for m in problems.get(pos, [])}
        problems.setdefault(pos, []).extend(msg for fld, msg in found if fld not in seen)
    problems = {pos: msgs for pos, msgs in problems.items() if msgs}

    # Rows of plain Python values: NaN -> None, floats as float, counts as int.
    as_lists: dict[str, list[Any]] = {}
    for name, col in columns.items():
        if isinstance(col, np.ndarray):
            values = col.tolist()
            as_lists[name] = [None if v != v else v for v in values]
        else:
            as_lists[name] = col
    if "low_stock" in as_lists:
        as_lists["low_stock"] = [None if v is None else int(v) for v in as_lists["low_stock"]]
    names = list(as_lists)
    devices = [Device(**dict(zip(names, row, strict=True)))
               for row in zip(*as_lists.values(), strict=True)]
    return devices, problems


def import_devices(session: Session, path: str | Path | None = None,
                   frame: pd.DataFrame | None = None, strict: bool = False) -> ImportReport:
    """Import device rows from a CSV file (or a frame of text cells); all or nothing.

    ``strict`` turns consistency warnings (designation vs fields) into errors.
    """
    if frame is None:
        if path is None:
            raise ValueError("import_devices needs a path or a frame")
        frame = read_csv(path)
    unknown = [c for c in frame.columns if c not in FIELD_BY_NAME]
    if unknown:
        raise ImportRejected([(1, f"unknown column(s) {', '.join(map(repr, unknown))}; known "
                                  f"columns are {', '.join(FIELD_NAMES)}")])
    missing = [c for c in REQUIRED_DEVICE_COLUMNS if c not in frame.columns]
    if missing:
        raise ImportRejected([(1, f"missing required column(s) {', '.join(missing)}")])

    devices, problems = parse_device_frame(frame)
    keys = [normalize(d.designation) for d in devices]
    first_line: dict[str, int] = {}
    for pos, (device, key) in enumerate(zip(devices, keys, strict=True)):
        if not key:
            continue
        if key in first_line:
            problems.setdefault(pos, []).append(
                f"designation: {device.designation!r} repeats line {first_line[key]} "
                f"(same normalised key {key})")
        else:
            first_line[key] = pos + 2

    report = ImportReport()
    for pos, device in enumerate(devices):
        if pos in problems:
            continue
        device.warnings = catalog.consistency_warnings(device)
        for w in device.warnings:
            if strict:
                problems.setdefault(pos, []).append(f"{device.designation}: {w} (--strict)")
            else:
                report.warnings.append((pos + 2, f"{device.designation}: {w}"))
    if problems:
        raise ImportRejected([(pos + 2, "; ".join(msgs)) for pos, msgs in sorted(problems.items())])

    _write_devices(session, devices, keys, report)
    return report


_ROW_COLUMNS: tuple[str, ...] = ("key", *FIELD_NAMES, "warnings", "updated_at")


def _row_tuple(device: Device, key: str, now: Any) -> tuple[Any, ...]:
    d = device.__dict__
    return (key, *[d[name] for name in FIELD_NAMES], "\n".join(device.warnings) or None, now)


def _write_devices(session: Session, devices: list[Device], keys: list[str],
                   report: ImportReport) -> None:
    from sqlalchemy import bindparam, func

    from partsdb.storage.models import utcnow

    table = DeviceRow.__table__
    now = utcnow()
    existing: dict[str, tuple[int, dict[str, Any]]] = {}
    if session.scalar(select(func.count()).select_from(table)):
        cols = [table.c.id, table.c.key, *[table.c[name] for name in (*FIELD_NAMES, "warnings")]]
        for start in range(0, len(keys), 900):
            chunk = keys[start:start + 900]
            for row in session.execute(select(*cols).where(table.c.key.in_(chunk))).mappings():
                existing[row["key"]] = (row["id"], dict(row))
    inserts: list[tuple[Any, ...]] = []
    updates: list[dict[str, Any]] = []
    for device, key in zip(devices, keys, strict=True):
        if key in existing:
            values = device_values(device)
            ident, old = existing[key]
            if all(_same(old.get(k), v) for k, v in values.items() if k != "key"):
                report.unchanged += 1
                continue
            updates.append({"_id": ident, **values, "updated_at": now})
            report.updated += 1
        else:
            inserts.append(_row_tuple(device, key, now))
            report.added += 1
    if inserts:
        # The driver's own executemany on plain tuples: a 200,000-row catalog is mostly inserts,
        # and SQLAlchemy's per-row parameter processing would cost more than the insert itself.
        connection = session.connection()
        dialect = connection.dialect
        marker = "?" if dialect.paramstyle == "qmark" else "%s"
        sql = (f"INSERT INTO {table.name} ({', '.join(_ROW_COLUMNS)}) "
               f"VALUES ({', '.join([marker] * len(_ROW_COLUMNS))})")
        for start in range(0, len(inserts), 20000):
            connection.exec_driver_sql(sql, inserts[start:start + 20000])
    if updates:
        stmt = (update(table).where(table.c.id == bindparam("_id"))
                .values({k: bindparam(k) for k in updates[0] if k != "_id"}))
        session.connection().execute(stmt, updates)
    session.flush()


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, float) and isinstance(b, float):
        return math.isclose(a, b, rel_tol=1e-12)
    if isinstance(a, bool) or isinstance(b, bool):
        return bool(a) == bool(b)
    return a == b


# ---------------------------------------------------------------- stock

def import_stock(session: Session, path: str | Path | None = None,
                 frame: pd.DataFrame | None = None) -> ImportReport:
    """Set lots from a stock CSV (each row is a count of that lot); all or nothing."""
    from partsdb.services import stock

    if frame is None:
        if path is None:
            raise ValueError("import_stock needs a path or a frame")
        frame = read_csv(path)
    unknown = [c for c in frame.columns if c not in STOCK_COLUMNS]
    if unknown:
        raise ImportRejected([(1, f"unknown column(s) {', '.join(map(repr, unknown))}; known "
                                  f"columns are {', '.join(STOCK_COLUMNS)}")])
    missing = [c for c in ("designation", "location", "quantity") if c not in frame.columns]
    if missing:
        raise ImportRejected([(1, f"missing required column(s) {', '.join(missing)}")])
    known = catalog.keys_in(session, frame["designation"].astype(str).tolist())
    problems: list[tuple[int, str]] = []
    rows: list[tuple[str, str, int, str, str | None]] = []
    seen: dict[tuple[str, str, str], int] = {}
    for pos, rec in enumerate(frame.to_dict("records")):
        line = pos + 2
        msgs = []
        designation = str(rec.get("designation", "")).strip()
        if normalize(designation) not in known:
            msgs.append(f"designation: {designation!r} is not in the catalog; import devices first")
        qty_text = str(rec.get("quantity", "")).strip()
        try:
            qty_f = float(qty_text)
            if qty_f < 0 or qty_f != int(qty_f):
                raise ValueError
            qty = int(qty_f)
        except ValueError:
            msgs.append(f"quantity: {qty_text!r} is not valid; expected a whole number, 0 or more")
            qty = 0
        condition = (str(rec.get("condition", "") or "new").strip().lower() or "new")
        if condition not in stock.CONDITIONS:
            msgs.append(f"condition: {condition!r} is not valid; expected one of "
                        + ", ".join(stock.CONDITIONS))
        location = str(rec.get("location", ""))
        try:
            location = stock.normalize_path(location)
        except stock.StockError as err:
            msgs.append(str(err))
        place = (normalize(designation), location.lower(), condition)
        if place in seen and not msgs:
            msgs.append(f"the lot {designation} at {location} ({condition}) repeats line "
                        f"{seen[place]}")
        seen.setdefault(place, line)
        note = str(rec.get("note", "") or "").strip() or None
        if msgs:
            problems.append((line, "; ".join(msgs)))
        else:
            rows.append((designation, location, qty, condition, note))
    if problems:
        raise ImportRejected(problems)
    report = ImportReport()
    changed = stock.import_lots(session, rows)
    report.updated = changed
    report.unchanged = len(rows) - changed
    return report


# ---------------------------------------------------------------- export

def neutralise(cell: Any) -> Any:
    """Prefix a text cell that a spreadsheet would run as a formula with an apostrophe."""
    if isinstance(cell, str) and cell.startswith(_INJECTION_START):
        return "'" + cell
    return cell


def devices_frame(session: Session) -> pd.DataFrame:
    import pandas as pd

    table = DeviceRow.__table__
    rows = session.execute(select(*[table.c[name] for name in FIELD_NAMES])
                           .order_by(table.c.key)).all()
    frame = pd.DataFrame(rows, columns=list(FIELD_NAMES))
    frame["obsolete"] = frame["obsolete"].map(lambda v: "yes" if v else "no")
    if "low_stock" in frame:
        frame["low_stock"] = frame["low_stock"].astype("Int64")
    return frame


def stock_frame(session: Session) -> pd.DataFrame:
    import pandas as pd

    from partsdb.services import stock

    lots = stock.lots_at(session, None)
    return pd.DataFrame([[v.designation, v.location, v.quantity, v.condition, v.note or ""]
                         for v in lots], columns=list(STOCK_COLUMNS))


def write_csv(frame: pd.DataFrame, path: str | Path, text_columns: list[str]) -> None:
    """Write a frame as RFC 4180 CSV with formula injection neutralised in text columns."""
    import csv

    safe = frame.copy()
    for col in text_columns:
        if col in safe:
            safe[col] = safe[col].map(neutralise)
    safe.to_csv(path, index=False, quoting=csv.QUOTE_MINIMAL, lineterminator="\n",
                float_format="%.12g")


DEVICE_TEXT_COLUMNS = [f.name for f in FIELDS if f.kind in ("text", "choice")]
STOCK_TEXT_COLUMNS = ["designation", "location", "condition", "note"]


def export_devices(session: Session, path: str | Path) -> int:
    frame = devices_frame(session)
    write_csv(frame, path, DEVICE_TEXT_COLUMNS)
    return len(frame)


def export_stock(session: Session, path: str | Path) -> int:
    frame = stock_frame(session)
    write_csv(frame, path, STOCK_TEXT_COLUMNS)
    return len(frame)


__all__ = ["ImportRejected", "ImportReport", "InvalidRecord", "export_devices", "export_stock",
           "import_devices", "import_stock", "neutralise"]
