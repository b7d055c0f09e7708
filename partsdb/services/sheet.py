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

import csv
import io
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlalchemy.orm import Session

from partsdb.columns import (
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
    """The text of a file and a notice when a legacy encoding was assumed.

    A byte-order mark decides (UTF-8, UTF-16 LE/BE); otherwise UTF-8 if the bytes are valid
    UTF-8, else :data:`LEGACY_ENCODING` (every byte decodes), named in the notice."""
    if data.startswith(b"\xef\xbb\xbf"):
        return data[3:].decode("utf-8"), None
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return data.decode("utf-16"), None
    try:
        return data.decode("utf-8"), None
    except UnicodeDecodeError:
        return (data.decode(LEGACY_ENCODING, errors="replace"),
                f"the file is not UTF-8; read as {LEGACY_ENCODING} (Windows Western European)")


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


def _check_rows(text: str, delimiter: str) -> None:
    """Every row has as many cells as the header (RFC 4180 quoting: a quoted line break stays in
    its cell); the header names no column twice."""
    problems: list[tuple[int, str]] = []
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
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


def read_table(path: str | Path, sheet: str | None = None) -> tuple[pd.DataFrame, list[str]]:
    """A sheet as text cells (blank cells ""), and notices (encoding assumed, delimiter)."""
    import pandas as pd

    path = Path(path)
    engine = SPREADSHEET_SUFFIXES.get(path.suffix.lower())
    if engine is not None:
        return _read_workbook(path, engine, sheet), []
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise ImportRejected([(0, f"file {str(path)!r} not found")]) from None
    except OSError as err:
        raise ImportRejected([(0, f"file {str(path)!r} cannot be read ({err.strerror})")]) from None
    text, notice = decode_bytes(data)
    notices = [notice] if notice else []
    if not text.strip():
        raise ImportRejected([(0, f"file {str(path)!r} is empty")])
    delimiter = sniff_delimiter(text)
    if delimiter != ",":
        notices.append(f"cells separated by {'tab' if delimiter == chr(9) else repr(delimiter)}")
    _check_rows(text, delimiter)
    try:
        frame = pd.read_csv(io.StringIO(text), sep=delimiter, dtype=str, keep_default_na=False,
                            skipinitialspace=True)
    except (pd.errors.ParserError, pd.errors.EmptyDataError) as err:
        raise ImportRejected([(0, f"file {str(path)!r} is not a readable CSV: {err}")]) from None
    return frame, notices


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


def import_sheet(session: Session, path: str | Path | None = None,
                 options: SheetOptions | None = None, dry_run: bool = False,
                 frame: pd.DataFrame | None = None) -> SheetReport:
    """Import a parts sheet; all or nothing (ImportRejected lists every bad row by line,
    column and reason). ``dry_run`` reads and checks everything and writes nothing."""
    import numpy as np

    options = options or SheetOptions()
    notices: list[str] = []
    if frame is None:
        if path is None:
            raise ValueError("import_sheet needs a path or a frame")
        frame, notices = read_table(path, options.sheet)
    mapping = map_headers([str(c) for c in frame.columns], options.map, options.units,
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
    text = frame.rename(columns={c.header: c.field for c in mapping.columns if c.field})
    text = text[[c.field for c in mapping.columns if c.field]].astype(str)
    text = _undo_guard(text)
    assumed: dict[int, list[str]] = {}
    for name, default in ASSUMED_COLUMNS.items():
        if name not in text.columns:
            text[name] = default
            notices.append(f"no {name} column: every row taken as {name} {default}")
        else:
            cells = text[name].tolist()
            blank = [pos for pos, cell in enumerate(cells) if not cell.strip()]
            for pos in blank:
                cells[pos] = default
                assumed.setdefault(pos, []).append(f"{name} {default}")
            if blank:
                text[name] = cells
    if "package" in text.columns:
        raw = text["package"].tolist()
        outlines = {v: normalize_outline(v.strip()) or "" for v in set(raw)}
        text["package"] = [outlines[v] for v in raw]
        if "ptot_ref" not in text.columns:
            text["ptot_ref"] = ""
        refs = text["ptot_ref"].tolist()
        inferred = {o: infer_ptot_ref(o) for o in set(outlines.values())}
        for pos, (ref, outline) in enumerate(zip(refs, text["package"].tolist(), strict=True)):
            if not ref.strip() and (guess := inferred.get(outline)):
                refs[pos] = guess
                assumed.setdefault(pos, []).append(
                    f"ptot_ref {guess} ({outline}, common practice)")
        text["ptot_ref"] = refs
    scales = {c.field: c.scale for c in mapping.columns if c.field and c.scale != 1.0}
    device_columns = [c for c in text.columns if c in FIELD_BY_NAME]
    parsed, problems = _parse_frames(_chunks(text[device_columns]), scales, check=False)

    # A bare number too large for the field, in a column that names no unit: a warning.
    unitless = [name for name in ("ic_max", "ptot", "vceo")
                if name in by_field and by_field[name].unit is None]
    extra: dict[int, list[str]] = {}
    for name in unitless:
        values = parsed.values[name]
        for pos in np.flatnonzero(values > 0).tolist():
            message = bare_warning(name, float(values[pos]))
            if message and text[name].iat[pos].strip().replace(".", "", 1).isdigit():
                extra.setdefault(pos, []).append(message)

    designations: list[str | None] = parsed.values["designation"]
    keys = [normalize(d) if d else "" for d in designations]
    lots, lot_lines = _lots(text, keys, designations, problems)
    firsts = _first_rows(parsed, keys, "location" in text.columns, problems)

    warnings = _consistency(parsed, problems, options.strict, ImportReport())
    for pos, found in extra.items():
        if options.strict:
            problems.setdefault(pos, []).extend(f"{m} (--strict)" for m in found)
        elif pos not in problems:
            warnings[pos] = "\n".join([*(warnings[pos] or "").split("\n"), *found]).strip()
    if problems:
        raise ImportRejected([(pos + 2, "; ".join(msgs)) for pos, msgs in sorted(problems.items())])
    for pos in firsts:
        if warnings[pos]:
            for w in warnings[pos].split("\n"):
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

        stock.import_lots(session, lots, new_reason="receive")
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


def _lots(text: pd.DataFrame, keys: list[str], designations: list[str | None],
          problems: dict[int, list[str]]
          ) -> tuple[list[tuple[str, str, int, str, str | None]], list[int]]:
    """Lot rows (designation, location, quantity, condition, note) and their line numbers."""
    from partsdb.services import stock

    if "location" not in text.columns:
        return [], []
    rows: list[tuple[str, str, int, str, str | None]] = []
    lines: list[int] = []
    seen: dict[tuple[str, str, str], int] = {}
    locations = text["location"].tolist()
    quantities = text["quantity"].tolist() if "quantity" in text.columns else [""] * len(text)
    conditions = text["condition"].tolist() if "condition" in text.columns else [""] * len(text)
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
