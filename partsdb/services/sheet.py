"""Import of someone's own parts sheet: devices and, when the sheet has them, drawers and counts.

One file, one transaction, all or nothing. The headers are mapped to fields by
:mod:`partsdb.columns` (spellings, units in headers, --map/--unit/--ignore); missing kind and
material, and a missing ptot_ref that the outline implies, are filled in and reported as
assumed; outlines are normalised; implausible values are warnings (bad rows with ``strict``).
A designation on several rows (one per drawer) is one device with several lots.

The file is read whole: a CSV of any usual delimiter and encoding (:func:`read_table`), or the
first (or a named) sheet of an .xlsx/.ods workbook through pandas.
"""

from __future__ import annotations

import codecs
import csv
import itertools
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlalchemy.orm import Session

from partsdb.columns import (
    BARE_LIMITS,
    SHEET_STOCK_COLUMNS,
    MappedColumn,
    bare_warning,
    infer_ptot_ref,
    map_headers,
    normalize_outline,
)
from partsdb.designations import normalize
from partsdb.device import FIELD_BY_NAME, FIELD_NAMES
from partsdb.errors import EnvironmentProblem, InvalidInput
from partsdb.limits import LimitError, check_quantity
from partsdb.services import catalog
from partsdb.services.exchange import (
    CHUNK_ROWS,
    ImportRejected,
    ImportReport,
    _Columns,
    _consistency,
    _parse_frames,
    _write_devices,
)
from partsdb.units import UnitError

if TYPE_CHECKING:
    import pandas as pd

SPREADSHEET_SUFFIXES = {".xlsx": "openpyxl", ".xlsm": "openpyxl", ".ods": "odf"}
DELIMITERS = ",;\t|"
LEGACY_ENCODING = "cp1252"
"""Read when a file is not valid UTF-8 (Windows Western European, what older spreadsheet
programs write on such systems; common practice)."""

REQUIRED = ("designation", "polarity")
BARE_FIELDS = tuple(BARE_LIMITS)
PREVIEW_ROWS = 8
ASSUMED_COLUMNS = {"kind": "bjt", "material": "si"}


@dataclass
class SheetOptions:
    map: dict[str, str] = field(default_factory=dict)
    """header -> field (--map)."""
    units: dict[str, str] = field(default_factory=dict)
    """field -> unit for the column's bare numbers (--unit)."""
    ignore: list[str] = field(default_factory=list)
    ignore_unknown: bool = False
    strict: bool = False
    sheet: str | None = None


@dataclass
class SheetReport:
    added: list[dict[str, Any]] = field(default_factory=list)
    updated: list[dict[str, Any]] = field(default_factory=list)
    unchanged: list[dict[str, Any]] = field(default_factory=list)
    warnings: list[dict[str, Any]] = field(default_factory=list)
    assumed: list[dict[str, Any]] = field(default_factory=list)
    notices: list[str] = field(default_factory=list)
    columns: list[MappedColumn] = field(default_factory=list)
    dry_run: bool = False
    preview: list[dict[str, Any]] = field(default_factory=list)
    """The first devices as they will be stored (field -> value, SI base units)."""

    def counts(self, what: str) -> tuple[int, int, int]:
        return tuple(sum(1 for r in rows if r["what"] == what)  # type: ignore[return-value]
                     for rows in (self.added, self.updated, self.unchanged))

    def summary(self) -> str:
        d, lots = self.counts("device"), self.counts("lot")
        text = f"devices: {d[0]} added, {d[1]} updated, {d[2]} unchanged"
        if any(lots):
            text += f"; lots: {lots[0]} added, {lots[1]} updated, {lots[2]} unchanged"
        if self.warnings:
            text += f"; {len(self.warnings)} warning(s)"
        if self.assumed:
            text += f"; {len(self.assumed)} row(s) with assumed values"
        return text + (" (dry run: nothing was written)" if self.dry_run else "")

    def to_json(self) -> dict[str, Any]:
        return {"added": self.added, "updated": self.updated, "unchanged": self.unchanged,
                "warnings": self.warnings, "assumed": self.assumed, "errors": [],
                "notices": self.notices, "dry_run": self.dry_run,
                "columns": [{"header": c.header, "field": c.field, "unit": c.unit}
                            for c in self.columns]}


# ---------------------------------------------------------------- reading

def decode_bytes(data: bytes) -> tuple[str, str | None]:
    """The text of a file and a notice when a legacy encoding was assumed (see
    :func:`detect_encoding`)."""
    encoding, notice = _encoding_of(data[:4], [data])
    return data.decode(encoding, errors="replace").removeprefix("\ufeff"), notice


def _encoding_of(head: bytes, blocks: Iterable[bytes]) -> tuple[str, str | None]:
    if head.startswith(b"\xef\xbb\xbf"):
        return "utf-8-sig", None
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        return "utf-16", None
    decoder = codecs.getincrementaldecoder("utf-8")()
    try:
        for block in blocks:
            decoder.decode(block)
        decoder.decode(b"", final=True)
    except UnicodeDecodeError:
        return LEGACY_ENCODING, (f"the file is not UTF-8; read as {LEGACY_ENCODING} "
                                 "(Windows Western European)")
    return "utf-8", None


def detect_encoding(path: Path) -> tuple[str, str | None]:
    """The encoding of a text file: a byte-order mark decides (UTF-8, UTF-16 LE/BE); otherwise
    UTF-8 if every byte sequence is valid UTF-8 (checked a block at a time), else
    :data:`LEGACY_ENCODING` (every byte decodes), named in the notice."""
    with path.open("rb") as handle:
        head = handle.read(4)
        handle.seek(0)
        return _encoding_of(head, iter(lambda: handle.read(1 << 20), b""))


def sniff_delimiter(text: str) -> str:
    """The delimiter of a CSV text (one of , ; tab |), by csv.Sniffer on the first lines;
    a comma when it cannot tell."""
    sample = "\n".join(text.splitlines()[:50])
    try:
        return csv.Sniffer().sniff(sample, delimiters=DELIMITERS).delimiter
    except csv.Error:
        header = text.split("\n", 1)[0]
        counts = {d: header.count(d) for d in DELIMITERS}
        best = max(counts, key=lambda d: counts[d])
        return best if counts[best] else ","


def _check_rows(path: Path, encoding: str, delimiter: str) -> None:
    """Every row has as many cells as the header (RFC 4180 quoting: a quoted line break stays in
    its cell); read as a stream, never the whole file at once."""
    problems: list[tuple[int, str]] = []
    with path.open(encoding=encoding, errors="replace", newline="") as handle:
        reader = csv.reader(handle, delimiter=delimiter)
        header: list[str] | None = None
        start = 1
        for row in reader:
            line, start = start, reader.line_num + 1
            if not row:
                continue
            if header is None:
                header = row
                continue
            if len(row) != len(header):
                problems.append((line, f"{len(row)} cell(s) where the header has {len(header)}; "
                                       f"expected one cell per column (delimiter {delimiter!r}; "
                                       "quote a cell that holds it)"))
                if len(problems) > 200:
                    break
    if problems:
        raise ImportRejected(problems)


def read_table(path: str | Path, sheet: str | None = None
               ) -> tuple[Iterator[pd.DataFrame], list[str]]:
    """A sheet as frames of text cells (blank cells ""), :data:`CHUNK_ROWS` rows at a time, and
    notices (encoding assumed, delimiter). A workbook is one frame."""
    import pandas as pd

    path = Path(path)
    engine = SPREADSHEET_SUFFIXES.get(path.suffix.lower())
    if engine is not None:
        return iter([_read_workbook(path, engine, sheet)]), []
    try:
        encoding, notice = detect_encoding(path)
        with path.open(encoding=encoding, errors="replace", newline="") as handle:
            head = handle.read(64 * 1024)
    except FileNotFoundError:
        raise ImportRejected([(0, f"file {str(path)!r} not found")]) from None
    except OSError as err:
        raise ImportRejected([(0, f"file {str(path)!r} cannot be read ({err.strerror})")]) from None
    notices = [notice] if notice else []
    if not head.strip():
        raise ImportRejected([(0, f"file {str(path)!r} is empty")])
    delimiter = sniff_delimiter(head.removeprefix("\ufeff"))
    if delimiter != ",":
        notices.append(f"cells separated by {'tab' if delimiter == chr(9) else repr(delimiter)}")
    _check_rows(path, encoding, delimiter)

    def frames() -> Iterator[pd.DataFrame]:
        try:
            reader = pd.read_csv(path, sep=delimiter, dtype=str, keep_default_na=False,
                                 skipinitialspace=True, encoding=encoding,
                                 encoding_errors="replace", chunksize=CHUNK_ROWS)
            with reader:
                first = True
                for frame in reader:
                    first = False
                    yield frame
                if first:
                    header = pd.read_csv(path, sep=delimiter, dtype=str, nrows=0,
                                         encoding=encoding, encoding_errors="replace")
                    yield pd.DataFrame(columns=list(header.columns), dtype=str)
        except (pd.errors.ParserError, pd.errors.EmptyDataError) as err:
            raise ImportRejected([(0, f"file {str(path)!r} is not a readable CSV: "
                                      f"{err}")]) from None

    return frames(), notices


def _read_workbook(path: Path, engine: str, sheet: str | None) -> pd.DataFrame:
    import importlib.util

    import pandas as pd

    module = "openpyxl" if engine == "openpyxl" else "odf"
    if importlib.util.find_spec(module) is None:
        raise EnvironmentProblem(
            f"reading {path.suffix} files needs the optional extra: "
            "pip install 'partsdb-drawers[spreadsheets]' (or save the sheet as CSV)")
    if not path.is_file():
        raise ImportRejected([(0, f"file {str(path)!r} not found")])
    try:
        frame = pd.read_excel(path, sheet_name=sheet if sheet is not None else 0, dtype=str,
                              keep_default_na=False, engine=engine)
    except ValueError as err:  # an unknown sheet name
        raise InvalidInput(f"--sheet: {sheet!r} not found in {path.name} ({err})") from None
    except Exception as err:
        raise ImportRejected([(0, f"file {str(path)!r} is not a readable workbook: "
                                  f"{type(err).__name__}")]) from None
    frame = frame.fillna("")
    return frame.map(_workbook_cell)


def _workbook_cell(cell: Any) -> str:
    """A workbook cell as text: whole numbers stored as floats lose their ".0"."""
    text = str(cell)
    if text.endswith(".0") and text[:-2].lstrip("-").isdigit():
        return text[:-2]
    return text


# ---------------------------------------------------------------- import

def _chunks(frame: pd.DataFrame) -> Iterator[pd.DataFrame]:
    if len(frame) == 0:
        yield frame
    for start in range(0, len(frame), CHUNK_ROWS):
        yield frame.iloc[start:start + CHUNK_ROWS]


class _Prepared:
    """Turns each frame of the sheet's text cells into a frame of device fields (mapped,
    defaults filled, outlines normalised), keeping what is not a device field (the lot columns)
    and what was assumed or looks like a unit slip, by row position in the file."""

    def __init__(self, mapping: list[MappedColumn], notices: list[str]) -> None:
        self.mapping = mapping
        self.renames = {c.header: c.field for c in mapping if c.field}
        self.fields = [c.field for c in mapping if c.field]
        self.unitless = [c.field for c in mapping
                         if c.field in BARE_FIELDS and c.unit is None]
        self.notices = notices
        self.assumed: dict[int, list[str]] = {}
        self.extra: dict[int, list[str]] = {}
        self.stock: dict[str, list[str]] = {
            name: [] for name in SHEET_STOCK_COLUMNS if name in self.fields}
        self.offset = 0
        self._outlines: dict[str, str] = {}

    def frames(self, raw_frames: Iterator[pd.DataFrame]) -> Iterator[pd.DataFrame]:
        for raw in raw_frames:
            text = self.prepare(raw)
            self.offset += len(text)
            yield text
            del raw, text

    def prepare(self, raw: pd.DataFrame) -> pd.DataFrame:
        text = raw.rename(columns=self.renames)[self.fields].astype(str)
        text = _undo_guard(text)
        at = self.offset
        for name in self.stock:
            self.stock[name].extend(text[name].tolist())
        for name, default in ASSUMED_COLUMNS.items():
            if name not in text.columns:
                text[name] = default
                if at == 0:
                    self.notices.append(f"no {name} column: every row taken as {name} {default}")
                continue
            cells = text[name].tolist()
            blank = [pos for pos, cell in enumerate(cells) if not cell.strip()]
            for pos in blank:
                cells[pos] = default
                self.assumed.setdefault(at + pos, []).append(f"{name} {default}")
            if blank:
                text[name] = cells
        if "package" in text.columns:
            raw_outlines = text["package"].tolist()
            for v in set(raw_outlines) - set(self._outlines):
                self._outlines[v] = normalize_outline(v.strip()) or ""
            outlines = [self._outlines[v] for v in raw_outlines]
            text["package"] = outlines
            refs = text["ptot_ref"].tolist() if "ptot_ref" in text.columns else [""] * len(text)
            inferred = {o: infer_ptot_ref(o) for o in set(outlines)}
            for pos, (ref, outline) in enumerate(zip(refs, outlines, strict=True)):
                if not ref.strip() and (guess := inferred.get(outline)):
                    refs[pos] = guess
                    self.assumed.setdefault(at + pos, []).append(
                        f"ptot_ref {guess} ({outline}, common practice)")
            text["ptot_ref"] = refs
        for name in self.unitless:
            # A bare number too large for the field in a column that names no unit.
            import pandas as pd

            numbers = pd.to_numeric(text[name], errors="coerce")
            for pos in (numbers > BARE_LIMITS[name]).to_numpy().nonzero()[0].tolist():
                message = bare_warning(name, float(numbers.iat[pos]))
                if message:
                    self.extra.setdefault(at + pos, []).append(message)
        return text[[c for c in text.columns if c in FIELD_BY_NAME]]


def import_sheet(session: Session, path: str | Path | None = None,
                 options: SheetOptions | None = None, dry_run: bool = False,
                 frame: pd.DataFrame | None = None) -> SheetReport:
    """Import a parts sheet; all or nothing (ImportRejected lists every bad row by line,
    column and reason). ``dry_run`` reads and checks everything and writes nothing."""
    options = options or SheetOptions()
    notices: list[str] = []
    if frame is None:
        if path is None:
            raise ValueError("import_sheet needs a path or a frame")
        raw_frames, notices = read_table(path, options.sheet)
    else:
        raw_frames = _chunks(frame)
    first = next(raw_frames)
    mapping = map_headers([str(c) for c in first.columns], options.map, options.units,
                          options.ignore, options.ignore_unknown)
    report = SheetReport(notices=notices, columns=mapping.columns, dry_run=dry_run)
    by_field = mapping.by_field()
    missing = [f for f in REQUIRED if f not in by_field]
    if missing:
        raise ImportRejected([(1, f"missing required column(s) {', '.join(missing)}; the "
                                  "sheet needs a column for each (see --map)")])
    if "quantity" in by_field and "location" not in by_field:
        raise ImportRejected([(1, "a quantity column needs a location column (drawer or place "
                                  "path) beside it")])
    prep = _Prepared(mapping.columns, notices)
    scales = {c.field: c.scale for c in mapping.columns if c.field and c.scale != 1.0}
    parsed, problems = _parse_frames(prep.frames(itertools.chain([first], raw_frames)), scales,
                                     check=False)
    del first
    assumed, extra = prep.assumed, prep.extra

    designations: list[str | None] = parsed.values["designation"]
    keys = [normalize(d) if d else "" for d in designations]
    lots, lot_lines = _lots(prep.stock, parsed.n, keys, designations, problems)
    firsts = _first_rows(parsed, keys, "location" in prep.stock, problems)

    warnings = _consistency(parsed, problems, options.strict, ImportReport())
    for pos, found in extra.items():
        if options.strict:
            problems.setdefault(pos, []).extend(f"{m} (--strict)" for m in found)
        elif pos not in problems:
            warnings[pos] = "\n".join([*(warnings[pos] or "").split("\n"), *found]).strip()
    if problems:  # one entry per reason, so each names its own column
        raise ImportRejected([(pos + 2, msg) for pos, msgs in sorted(problems.items())
                              for msg in msgs])
    for pos in firsts:
        stored = warnings[pos]
        if stored:
            for w in stored.split("\n"):
                report.warnings.append({"line": pos + 2, "designation": designations[pos],
                                        "message": w})
    for pos, what in sorted(assumed.items()):
        report.assumed.append({"line": pos + 2, "designation": designations[pos],
                               "assumed": what})

    unique = _select(parsed, firsts)
    unique_keys = [keys[i] for i in firsts]
    unique_warnings = [warnings[i] for i in firsts]
    head = min(PREVIEW_ROWS, unique.n)
    values = {name: unique.plain(name, 0, head) for name in FIELD_NAMES}
    report.preview = [{"line": firsts[i] + 2, **{k: v[i] for k, v in values.items()}}
                      for i in range(head)]
    _plan_devices(session, unique, unique_keys, unique_warnings, firsts, report)
    _plan_lots(session, lots, lot_lines, report)
    if dry_run:
        return report
    _write_devices(session, unique, unique_keys, unique_warnings, ImportReport())
    if lots:
        from partsdb.services import stock

        stock.import_lots(session, lots, new_reason="import")
    return report


def _undo_guard(frame: pd.DataFrame) -> pd.DataFrame:
    from partsdb.csvsafe import GUARDED_PATTERN

    for col in frame.columns:
        cells = frame[col]
        # one C-speed scan of the joined column, as exchange._tidy does
        if len(cells) == 0 or "\x00'" not in "\x00" + "\x00".join(cells.tolist()):
            continue
        guarded = cells.str.match(GUARDED_PATTERN)
        frame[col] = cells.where(~guarded, cells.str[1:])
    return frame


def _first_rows(parsed: _Columns, keys: list[str], has_location: bool,
                problems: dict[int, list[str]]) -> list[int]:
    """Positions of each designation's first row; a later row of the same designation must be
    another lot of it (a location column) and must not contradict the first row's values."""
    first: dict[str, int] = {}
    out: list[int] = []
    for pos, key in enumerate(keys):
        if not key:
            continue
        if key not in first:
            first[key] = pos
            out.append(pos)
            continue
        one = first[key]
        if not has_location:
            problems.setdefault(pos, []).append(
                f"designation: {parsed.values['designation'][pos]!r} repeats line {one + 2} "
                f"(same normalised key {key})")
            continue
        for name in FIELD_NAMES:
            a = parsed.plain(name, one, one + 1)[0]
            b = parsed.plain(name, pos, pos + 1)[0]
            if b is None or a is None or catalog._same(a, b):
                continue
            problems.setdefault(pos, []).append(
                f"{name}: {b!r} contradicts line {one + 2} ({a!r}) for the same designation")
    return out


def _select(parsed: _Columns, rows: list[int]) -> _Columns:
    import numpy as np

    if len(rows) == parsed.n:
        return parsed
    out = _Columns()
    index = np.asarray(rows, dtype=np.int64)
    for name, col in parsed.values.items():
        out.values[name] = col[index] if isinstance(col, np.ndarray) else [col[i] for i in rows]
    out.n = len(rows)
    return out


def _lots(columns: dict[str, list[str]], n: int, keys: list[str],
          designations: list[str | None], problems: dict[int, list[str]]
          ) -> tuple[list[tuple[str, str, int, str, str | None]], list[int]]:
    """Lot rows (designation, location, quantity, condition, note) and their line numbers."""
    from partsdb.services import stock

    if "location" not in columns:
        return [], []
    rows: list[tuple[str, str, int, str, str | None]] = []
    lines: list[int] = []
    seen: dict[tuple[str, str, str], int] = {}
    locations = columns["location"]
    quantities = columns.get("quantity") or [""] * n
    conditions = columns.get("condition") or [""] * n
    for pos, (place, qty_text, cond) in enumerate(zip(locations, quantities, conditions,
                                                      strict=True)):
        msgs: list[str] = []
        place = place.strip()
        qty_text = qty_text.strip()
        if not place:
            if qty_text:
                msgs.append(f"location: blank; expected a place path for quantity {qty_text}")
            if msgs:
                problems.setdefault(pos, []).extend(msgs)
            continue
        if qty_text.endswith(".0") and qty_text[:-2].isdigit():
            qty_text = qty_text[:-2]
        qty = 0
        try:
            qty = check_quantity(qty_text or "0", allow_zero=True)
        except LimitError as err:
            msgs.append(str(err))
        condition = cond.strip().lower() or "new"
        if condition not in stock.CONDITIONS:
            msgs.append(f"condition: {condition!r} is not valid; expected one of "
                        + ", ".join(stock.CONDITIONS))
        try:
            place = stock.normalize_path(place)
        except stock.StockError as err:
            msgs.append(str(err))
        lot_key = (keys[pos], place.lower(), condition)
        if lot_key in seen and not msgs:
            msgs.append(f"location: the lot {designations[pos]} at {place} ({condition}) "
                        f"repeats line {seen[lot_key]}")
        seen.setdefault(lot_key, pos + 2)
        if msgs:
            problems.setdefault(pos, []).extend(msgs)
        elif designations[pos]:
            rows.append((str(designations[pos]), place, qty, condition, None))
            lines.append(pos + 2)
    return rows, lines


def _plan_devices(session: Session, parsed: _Columns, keys: list[str],
                  warnings: list[str | None], rows: list[int], report: SheetReport) -> None:
    """Sort the devices into added / updated (with each changing field, old -> new) /
    unchanged against what is stored; reads only."""
    stored = catalog._stored_rows(session, keys) if catalog.count_devices(session) else {}
    if not stored:  # every device is new: no field values to compare
        names: list[Any] = parsed.values["designation"]
        report.added.extend({"line": row + 2, "what": "device", "designation": name}
                            for row, name in zip(rows, names, strict=True))
        return
    for start in range(0, parsed.n, 20_000):
        stop = min(parsed.n, start + 20_000)
        cols = {name: parsed.plain(name, start, stop) for name in FIELD_NAMES}
        for i in range(start, stop):
            key = keys[i]
            line = rows[i] + 2
            designation = cols["designation"][i - start]
            if key not in stored:
                report.added.append({"line": line, "what": "device", "designation": designation})
                continue
            old = stored[key][1]
            changes = {name: [_json(old.get(name)), _json(cols[name][i - start])]
                       for name in FIELD_NAMES
                       if not catalog._same(old.get(name), cols[name][i - start])}
            if (old.get("warnings") or None) != (warnings[i] or None) and not changes:
                changes["warnings"] = [old.get("warnings"), warnings[i]]
            entry = {"line": line, "what": "device", "designation": designation}
            if changes:
                report.updated.append({**entry, "changes": changes})
            else:
                report.unchanged.append(entry)


def _json(value: Any) -> Any:
    return value


def _plan_lots(session: Session, lots: list[tuple[str, str, int, str, str | None]],
               lines: list[int], report: SheetReport) -> list[int | None]:
    from partsdb.services import stock

    if not lots:
        return []
    held = stock.plan_lots(session, lots)
    for (designation, place, qty, condition, _note), line, now in zip(lots, lines, held,
                                                                       strict=True):
        entry = {"line": line, "what": "lot", "designation": designation, "location": place,
                 "condition": condition}
        if now is None:
            report.added.append({**entry, "quantity": qty})
        elif now != qty:
            report.updated.append({**entry, "changes": {"quantity": [now, qty]}})
        else:
            report.unchanged.append(entry)
    return held


def error_rows(problems: list[tuple[int, str]]) -> list[dict[str, Any]]:
    """Refusal problems as JSON rows: one per reason, with its line and (when the reason names
    one) its column."""
    from partsdb.columns import KNOWN_COLUMNS

    out: list[dict[str, Any]] = []
    for line, reason in problems:
        column = reason.split(":", 1)[0].strip()
        out.append({"line": line, "column": column if column in KNOWN_COLUMNS else None,
                    "message": reason})
    return out


def parse_pairs(values: Mapping[str, str] | list[str], option: str) -> dict[str, str]:
    """"A=B" option values as a dict; one clear line for a value without "="."""
    if isinstance(values, Mapping):
        return dict(values)
    out: dict[str, str] = {}
    for value in values:
        left, sep, right = value.partition("=")
        if not sep or not left.strip() or not right.strip():
            raise InvalidInput(f"{option}: {value!r} is not valid; expected COLUMN=FIELD "
                               "(for --unit: FIELD=UNIT)")
        out[left.strip()] = right.strip()
    return out


__all__ = ["SheetOptions", "SheetReport", "UnitError", "import_sheet", "read_table"]
