"""CSV exchange of devices and stock (pandas), all-or-nothing.

An import reads the whole file, checks every row, and keeps nothing unless every row is good;
the report lists every bad row by its line number in the file (the header is line 1). A device
file is streamed CHUNK_ROWS rows at a time: each chunk is parsed into columns (float arrays,
lists of shared strings), checked and written inside the one transaction, which a bad row
anywhere rolls back, so a million rows never sit in memory at once. Plain numeric cells are
parsed column-wise; only cells carrying units or R-notation take the slower per-cell path, so a
catalog of 200,000 rows imports in seconds. Re-importing a file updates the records in place
(matched by normalised designation), so it never duplicates.

Export writes SI base units and neutralises spreadsheet formula injection: a text cell starting
with = + - @ TAB or CR gets a leading apostrophe (OWASP "CSV Injection"), while numbers such as
-5 in numeric columns stay numbers.
"""

from __future__ import annotations

import unicodedata
from collections.abc import Iterator
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlalchemy.orm import Session

from partsdb.csvsafe import GUARDED_PATTERN
from partsdb.designations import normalize
from partsdb.device import (
    FALSE_WORDS,
    FIELD_BY_NAME,
    FIELD_NAMES,
    FIELDS,
    TRUE_WORDS,
    Device,
    check_columns,
    normalize_pinout,
    parse_field,
    strip_plus_minus,
)
from partsdb.errors import InvalidInput
from partsdb.kind_rules import settle_columns
from partsdb.limits import LimitError, check_quantity, text_problem
from partsdb.services import catalog
from partsdb.units import UnitError, parse_quantities

if TYPE_CHECKING:
    import numpy as np
    import pandas as pd

STOCK_COLUMNS: tuple[str, ...] = ("designation", "location", "quantity", "condition", "note")
REQUIRED_DEVICE_COLUMNS = ("designation", "kind", "polarity", "material")


class ImportRejected(InvalidInput):
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


CHUNK_ROWS = 20_000
"""Rows parsed at a time: the text cells of one chunk are freed before the next is read, so a
200,000-row import never holds the whole file as Python strings (about 1.4 KB a row)."""


def _open_error(path: str | Path, err: Exception) -> ImportRejected:
    import pandas as pd

    if isinstance(err, FileNotFoundError):
        return ImportRejected([(0, f"file {str(path)!r} not found")])
    if isinstance(err, pd.errors.EmptyDataError):
        return ImportRejected([(0, f"file {str(path)!r} is empty")])
    return ImportRejected([(0, f"file {str(path)!r} is not a readable CSV: {err}")])


def _read_errors() -> tuple[type[Exception], ...]:
    import pandas as pd

    return (FileNotFoundError, pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError)


def _tidy(frame: pd.DataFrame) -> pd.DataFrame:
    """Header names stripped and lower-cased; our own formula guard undone."""
    frame.columns = [str(c).strip().lower() for c in frame.columns]
    # Undo our own export's formula neutralising ("'=x" -> "=x") so files round-trip. One C-speed
    # scan of the joined column finds the columns with any cell starting with an apostrophe; only
    # those take the per-cell match (a false alarm from a cell holding NUL only costs time).
    for col in frame.columns:
        cells = frame[col]
        if len(cells) == 0 or "\x00'" not in "\x00" + "\x00".join(cells.astype(str).tolist()):
            continue
        guarded = cells.str.match(GUARDED_PATTERN)
        if guarded.any():
            frame[col] = cells.where(~guarded, cells.str[1:])
    return frame


def check_shape(path: str | Path) -> None:
    """Refuse a file whose header names a column twice (in any case) or whose rows do not have
    as many cells as the header, listing every such row by its line number.

    pandas would shift a row with one cell too many (the first cell becomes the index) and fill
    a short row with blanks, silently; so the file is read once with the standard csv module
    (RFC 4180 quoting, so a quoted line break stays in its cell) before pandas reads it.

    A cell holding NUL is refused here too, whatever pandas then makes of it: pandas 2.2's C
    parser ends the cell at the NUL (``a<NUL>b`` is read as ``a``, the rest silently dropped),
    later releases keep it for the per-field check, and PostgreSQL text cannot hold it at all.
    """
    import csv

    problems: list[tuple[int, str]] = []
    try:
        with open(path, encoding="utf-8-sig", newline="") as handle:
            reader = csv.reader(handle)
            header: list[str] | None = None
            start = 1
            for row in reader:
                line, start = start, reader.line_num + 1
                if not row:
                    continue  # a blank line (pandas skips these too)
                if NUL in "".join(row):
                    # text_problem names the NUL (or a length or character ahead of it).
                    problems.extend((line, str(text_problem(_column_name(header or row, i), cell)))
                                    for i, cell in enumerate(row) if NUL in cell)
                    if header is None or len(problems) > 200:
                        break  # a NUL in the header: the rows cannot be named by column
                if header is None:
                    header = row
                    _check_header_names(header)
                    continue
                if len(row) != len(header):
                    problems.append((line, f"{len(row)} cell(s) where the header has "
                                           f"{len(header)}; expected one cell per column "
                                           "(quote a cell that holds a comma)"))
                    if len(problems) > 200:
                        break
    except (OSError, UnicodeDecodeError, csv.Error):
        return  # pandas reads the file next and reports the problem in its own words
    if problems:
        raise ImportRejected(problems)


NUL = "\x00"


def _column_name(header: list[str], index: int) -> str:
    """The header's name for cell ``index`` (``column 3`` when the name holds a NUL itself, or
    the row has more cells than the header)."""
    if index < len(header) and NUL not in header[index]:
        return header[index].strip().lower()
    return f"column {index + 1}"


def _check_header_names(header: list[str]) -> None:
    seen: dict[str, str] = {}
    for name in header:
        key = name.strip().lower()
        if key in seen:
            raise ImportRejected([(1, f"column {key!r} appears twice in the header "
                                      f"({seen[key]!r} and {name!r}); expected each column "
                                      "once (names are compared without regard to case)")])
        seen[key] = name


def read_csv(path: str | Path) -> pd.DataFrame:
    """Read a CSV as text cells (nothing guessed), blank cells as empty strings."""
    import pandas as pd

    check_shape(path)
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True,
                            encoding="utf-8-sig")
    except _read_errors() as err:
        raise _open_error(path, err) from err
    return _tidy(frame)


def read_csv_chunks(path: str | Path, rows: int | None = None) -> Iterator[pd.DataFrame]:
    """:func:`read_csv` ``rows`` (default :data:`CHUNK_ROWS`) rows at a time; a header-only file
    gives one empty frame."""
    import pandas as pd

    check_shape(path)
    try:
        reader = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True,
                             encoding="utf-8-sig", chunksize=rows or CHUNK_ROWS)
    except _read_errors() as err:
        raise _open_error(path, err) from err
    with reader:
        first = True
        while True:
            try:
                frame = next(reader)
            except StopIteration:
                if first:  # header only: the columns still have to be checked
                    yield _tidy(pd.DataFrame(columns=_header_of(path), dtype=str))
                return
            except _read_errors() as err:
                raise _open_error(path, err) from err
            first = False
            yield _tidy(frame)


def _header_of(path: str | Path) -> list[str]:
    import pandas as pd

    return [str(c) for c in pd.read_csv(path, dtype=str, nrows=0, skipinitialspace=True,
                                        encoding="utf-8-sig").columns]


# ---------------------------------------------------------------- devices

def _stripped(cells: pd.Series) -> list[str]:
    """The cells with surrounding white space removed, as a list (str.strip, as parse_field does).

    A list comprehension: pandas' ``.str`` methods cost about three times as much per cell.
    """
    return [cell.strip() for cell in cells.tolist()]


def _parse_quantity_column(name: str, cells: pd.Series, problems: dict[int, list[str]],
                           scale: float = 1.0) -> np.ndarray:
    """A quantity or count column read by :func:`partsdb.units.parse_quantities`, then held to
    the field's own rules (positive; a count whole and 0 or more) as parse_field holds a cell."""
    import numpy as np

    spec = FIELD_BY_NAME[name]
    raw = cells.tolist()
    # One C-speed scan of the joined column answers "all blank?" (most FET columns of a mostly
    # bipolar file) and "any ± here?" before any pass over the cells.
    joined = "\n".join(raw)
    if not joined.strip():
        return np.full(len(raw), np.nan)
    text = [cell.strip() for cell in raw]
    if spec.sign == "magnitude" and ("±" in joined or "+" in joined):
        text = [strip_plus_minus(cell) if cell[:1] in ("±", "+") else cell for cell in text]
    numbers, errors = parse_quantities(text, spec.unit if spec.kind == "quantity" else "", name,
                                       bare_scale=scale)
    for pos, err in errors.items():
        problems.setdefault(pos, []).append(str(err))
    if spec.kind == "count":
        bad = ~np.isnan(numbers) & ~((numbers >= 0) & (numbers == np.floor(numbers)))
    elif spec.sign == "signed":
        bad = ~np.isnan(numbers) & (numbers == 0)
    else:
        if spec.sign == "magnitude":  # "-30 A" off a P-channel datasheet: stored as 30 A
            numbers = np.abs(numbers)
        bad = ~np.isnan(numbers) & ~(numbers > 0)
    for pos in np.flatnonzero(bad).tolist():
        try:
            parse_field(name, text[pos])
        except UnitError as err:
            problems.setdefault(pos, []).append(str(err))
    return numbers


def _parse_words(name: str, cells: list[str], wanted: list[bool], table: dict[str, Any],
                 problems: dict[int, list[str]]) -> list[Any]:
    """A choice or yes/no column: the lower-cased cells found in ``table``, the rest (aliases,
    blanks of a required field, junk) through parse_field, once per distinct cell text."""
    out: list[Any] = []
    odd: dict[str, Any] = {}
    for pos, (cell, ok) in enumerate(zip(cells, wanted, strict=True)):
        if ok:
            out.append(table[cell.strip().lower()])
            continue
        if cell not in odd:
            try:
                odd[cell] = parse_field(name, cell)
            except UnitError as err:
                odd[cell] = err
        value = odd[cell]
        if isinstance(value, UnitError):
            problems.setdefault(pos, []).append(str(value))
            value = None
        out.append(value)
    return out


def _parse_choice_column(name: str, cells: pd.Series, problems: dict[int, list[str]]
                         ) -> list[str | None]:
    spec = FIELD_BY_NAME[name]
    # The choice strings themselves, not one new lower-cased string per cell: a 200,000-row
    # import keeps these columns until the write.
    table: dict[str, str | None] = {c: c for c in spec.choices}
    if not spec.required:
        table[""] = None
    raw = cells.tolist()
    wanted = [cell.strip().lower() in table for cell in raw]
    return _parse_words(name, raw, wanted, table, problems)


def _parse_bool_column(name: str, cells: pd.Series, problems: dict[int, list[str]]
                       ) -> list[bool | None]:
    table: dict[str, bool | None] = {**dict.fromkeys(TRUE_WORDS, True),
                                     **dict.fromkeys(FALSE_WORDS, False)}
    if FIELD_BY_NAME[name].kind == "flag":  # a yes/no that may be unknown: blank is None
        table[""] = None
    raw = cells.tolist()
    wanted = [cell.strip().lower() in table for cell in raw]
    return _parse_words(name, raw, wanted, table, problems)


def _text_column(cells: pd.Series) -> list[str | None]:
    return [cell.strip() or None for cell in cells.tolist()]


def _parse_chunk(frame: pd.DataFrame, scales: dict[str, float] | None = None
                 ) -> tuple[dict[str, Any], dict[int, list[str]]]:
    """Parsed columns of one frame of text cells, and problems by row position in the frame."""
    problems: dict[int, list[str]] = {}
    n = len(frame)
    columns: dict[str, Any] = {}
    for spec in FIELDS:
        if spec.name not in frame.columns:
            continue
        cells = frame[spec.name].astype(str)
        if spec.kind in ("choice", "flag") and not spec.required \
                and not "\n".join(cells.tolist()).strip():
            columns[spec.name] = [None] * n  # an all-blank optional column (one C-speed scan)
            continue
        if spec.kind in ("quantity", "count"):
            columns[spec.name] = _parse_quantity_column(spec.name, cells, problems,
                                                        (scales or {}).get(spec.name, 1.0))
        elif spec.kind == "choice":
            columns[spec.name] = _parse_choice_column(spec.name, cells, problems)
        elif spec.kind in ("bool", "flag"):
            columns[spec.name] = _parse_bool_column(spec.name, cells, problems)
        else:
            columns[spec.name] = _text_column(cells)
    if "designation" in columns:  # stored NFKC-folded (designations.clean_designation)
        columns["designation"] = [
            v if v is None or v.isascii() else unicodedata.normalize("NFKC", v).strip()
            for v in columns["designation"]]
    if "pinout" in columns:
        # A catalog has a handful of distinct pinouts: each is normalised once.
        pinouts = {v: normalize_pinout(v) for v in set(columns["pinout"])}
        columns["pinout"] = [pinouts[v] for v in columns["pinout"]]
    settle_columns(columns, n)
    for pos, found in check_columns(columns, n).items():
        seen = {m.split(":")[0] for m in problems.get(pos, [])}
        problems.setdefault(pos, []).extend(msg for fld, msg in found if fld not in seen)
    return columns, {pos: msgs for pos, msgs in problems.items() if msgs}


_DEFAULTS: dict[str, Any] = {f.name: f.default for f in fields(Device) if f.name in FIELD_NAMES}


class _Columns:
    """Every field of every parsed row, column by column, in file order.

    Quantities are float arrays (NaN for blank), the rest lists; a column the file does not
    have holds the :class:`Device` default. Built chunk by chunk, so the text frame of a chunk
    can be freed as soon as it is parsed, and never turned into one object per row.
    """

    def __init__(self) -> None:
        self.n = 0
        self._parts: dict[str, list[Any]] = {name: [] for name in FIELD_NAMES}
        self.values: dict[str, Any] = {}

    def add(self, columns: dict[str, Any], n: int) -> None:
        import numpy as np

        for name in FIELD_NAMES:
            col = columns.get(name)
            if col is None:
                kind = FIELD_BY_NAME[name].kind
                col = np.full(n, np.nan) if kind in ("quantity", "count") else [_DEFAULTS[name]] * n
            self._parts[name].append(col)
        self.n += n

    def finish(self) -> None:
        import numpy as np

        for name, parts in self._parts.items():
            if FIELD_BY_NAME[name].kind in ("quantity", "count"):
                self.values[name] = np.concatenate(parts) if parts else np.zeros(0)
            else:
                self.values[name] = [v for part in parts for v in part]
        self._parts.clear()

    def plain(self, name: str, start: int, stop: int) -> list[Any]:
        """Rows start:stop of one column as the Python values a Device holds (None for blank)."""
        import numpy as np

        col = self.values[name]
        if not isinstance(col, np.ndarray):
            return col[start:stop]
        part = col[start:stop]
        blank = np.isnan(part)
        if FIELD_BY_NAME[name].kind == "count":  # a count is stored as an int
            part = np.where(blank, 0.0, part).astype(np.int64)
        out = part.astype(object)  # Python floats (ints), as Device holds them
        out[blank] = None
        return out.tolist()


def _parse_frames(frames: Iterator[pd.DataFrame], scales: dict[str, float] | None = None,
                  check: bool = True) -> tuple[_Columns, dict[int, list[str]]]:
    """Parse every chunk before anything is written; problems keyed by row position in the file."""
    parsed = _Columns()
    problems: dict[int, list[str]] = {}
    for frame in frames:
        if check:
            _check_header(frame)
        columns, found = _parse_chunk(frame, scales)
        offset = parsed.n
        problems.update((offset + pos, msgs) for pos, msgs in found.items())
        parsed.add(columns, len(frame))
        del frame, columns
    parsed.finish()
    return parsed, problems


def _check_header(frame: pd.DataFrame) -> None:
    unknown = [c for c in frame.columns if c not in FIELD_BY_NAME]
    if unknown:
        raise ImportRejected([(1, f"unknown column(s) {', '.join(map(repr, unknown))}; known "
                                  f"columns are {', '.join(FIELD_NAMES)}")])
    missing = [c for c in REQUIRED_DEVICE_COLUMNS if c not in frame.columns]
    if missing:
        raise ImportRejected([(1, f"missing required column(s) {', '.join(missing)}")])


def _frame_chunks(frame: pd.DataFrame) -> Iterator[pd.DataFrame]:
    rows = CHUNK_ROWS
    if len(frame) == 0:
        yield frame
    for start in range(0, len(frame), rows):
        yield frame.iloc[start:start + rows]


def import_devices(session: Session, path: str | Path | None = None,
                   frame: pd.DataFrame | None = None, strict: bool = False) -> ImportReport:
    """Import device rows from a CSV file (or a frame of text cells); all or nothing.

    ``strict`` turns consistency warnings (designation vs fields) into errors. The file is
    streamed :data:`CHUNK_ROWS` rows at a time: each chunk is parsed, checked (repeated keys
    against every earlier chunk through :class:`SeenKeys`) and written inside the caller's one
    transaction while no row so far has a problem; after the first problem the rest is only
    checked, so the report still lists every bad row, and :class:`ImportRejected` is raised at
    the end, which rolls the whole transaction back (the session's owner does).
    """
    from partsdb.services.seen_keys import SeenKeys

    if frame is None:
        if path is None:
            raise ValueError("import_devices needs a path or a frame")
        frames = read_csv_chunks(path)
    else:
        frames = _frame_chunks(frame)
    report = ImportReport()
    problems: dict[int, list[str]] = {}
    seen = SeenKeys()

    def batches() -> Iterator[Iterator[tuple[Any, ...]]]:
        offset = 0
        for chunk in frames:
            _check_header(chunk)
            n = len(chunk)
            parsed, found = _parse_frames(iter([chunk]), check=False)
            del chunk
            designations: list[str | None] = parsed.values["designation"]
            keys = [normalize(d) if d else "" for d in designations]
            for pos, line in seen.repeats(keys, offset + 2).items():
                found.setdefault(pos, []).append(
                    f"designation: {designations[pos]!r} repeats line {line} "
                    f"(same normalised key {keys[pos]})")
            warnings = _consistency(parsed, found, strict, report, offset)
            problems.update((offset + pos, msgs) for pos, msgs in found.items())
            if not problems:
                yield from _device_batches(parsed, keys, warnings)
            offset += n

    stored = catalog.add_many(session, batches(), keys_checked=True)
    if problems:
        raise ImportRejected([(pos + 2, "; ".join(msgs)) for pos, msgs in sorted(problems.items())])
    report.added, report.updated, report.unchanged = stored.added, stored.updated, stored.unchanged
    return report


def _consistency(parsed: _Columns, problems: dict[int, list[str]], strict: bool,
                 report: ImportReport, offset: int = 0) -> list[str | None]:
    """Stored warnings text per row (designation vs fields), for the rows without problems
    (``offset``: rows of the file before ``parsed``, for the report's line numbers)."""
    from partsdb.consistency import CHECKED_FIELDS, consistency_warnings

    out: list[str | None] = [None] * parsed.n
    # One reused record carrying just the fields the checker reads (partsdb.consistency says
    # which, and a test holds it to that): a Device per row cost more than the check.
    probe = Device(designation="")
    for start in range(0, parsed.n, _WRITE_ROWS):
        stop = min(parsed.n, start + _WRITE_ROWS)
        rows = zip(*[parsed.plain(name, start, stop) for name in CHECKED_FIELDS], strict=True)
        for pos, row in enumerate(rows, start):
            if pos in problems:
                continue
            probe.__dict__.update(zip(CHECKED_FIELDS, row, strict=True))
            found = consistency_warnings(probe)
            if not found:
                continue
            out[pos] = "\n".join(found)
            for w in found:
                if strict:
                    problems.setdefault(pos, []).append(f"{probe.designation}: {w} (--strict)")
                else:
                    report.warnings.append((offset + pos + 2, f"{probe.designation}: {w}"))
    return out


_WRITE_ROWS = 20_000


def _device_batches(parsed: _Columns, keys: list[str], warnings: list[str | None]
                    ) -> Iterator[Iterator[tuple[Any, ...]]]:
    """The rows of ``parsed`` as :func:`catalog.add_many` takes them, a batch at a time."""
    for start in range(0, parsed.n, _WRITE_ROWS):
        stop = min(parsed.n, start + _WRITE_ROWS)
        yield zip(keys[start:stop], *[parsed.plain(name, start, stop) for name in FIELD_NAMES],
                  warnings[start:stop], strict=True)


def _write_devices(session: Session, parsed: _Columns, keys: list[str],
                   warnings: list[str | None], report: ImportReport) -> None:
    """Hand the rows to the catalog service a batch at a time, straight from the columns."""
    stored = catalog.add_many(session, _device_batches(parsed, keys, warnings))
    report.added, report.updated, report.unchanged = stored.added, stored.updated, stored.unchanged


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
        if qty_text.endswith(".0") and qty_text[:-2].isdigit():
            qty_text = qty_text[:-2]  # "12.0", as a spreadsheet may write a whole number
        try:
            qty = check_quantity(qty_text, allow_zero=True)  # a row sets a lot: 0 allowed
        except LimitError as err:
            msgs.append(str(err))
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
        place = (normalize(designation), location.lower(), condition)  # as stock.place_key
        if place in seen and not msgs:
            msgs.append(f"the lot {designation} at {location} ({condition}) repeats line "
                        f"{seen[place]}")
        seen.setdefault(place, line)
        note = str(rec.get("note", "") or "").strip() or None
        for name, text in (("designation", designation), ("note", note)):
            problem = text_problem(name, text) if text else None
            if problem is not None:
                msgs.append(problem)
        if msgs:
            problems.append((line, "; ".join(msgs)))
        else:
            rows.append((designation, location, qty, condition, note))
    if problems:
        raise ImportRejected(problems)
    report = ImportReport()
    added, changed = stock.import_lots(session, rows, new_reason="import")
    report.added = added
    report.updated = changed
    report.unchanged = len(rows) - changed - added
    return report
