"""The device record: one transistor type, its fields, and the rules a valid record obeys.

``FIELDS`` is the single table of every device field (CSV column name, unit, kind, plausible
range). The CSV importer, the CLI options, the TUI forms and the JSON output all read it, so a
field is added in one place. Values are kept in SI base units (temperatures in °C, see
:mod:`partsdb.units`); an optional field that was not given is ``None``, never 0.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Literal

from partsdb.designations import clean_designation, normalize
from partsdb.errors import InvalidInput
from partsdb.limits import MAX_LENGTH, LimitError, check_text, text_problem
from partsdb.units import UnitError, format_quantity, parse_quantity

if TYPE_CHECKING:
    import numpy as np

FieldKind = Literal["quantity", "choice", "text", "bool", "count"]


@dataclass(frozen=True)
class FieldSpec:
    """How one device field is read, checked and shown."""

    name: str
    """CSV column and JSON key."""
    label: str
    """Short label for tables and forms."""
    kind: FieldKind
    unit: str = ""
    """Unit symbol for quantities ("" for dimensionless such as hFE)."""
    choices: tuple[str, ...] = ()
    low: float | None = None
    """Smallest plausible value (inclusive)."""
    high: float | None = None
    """Largest plausible value (inclusive)."""
    required: bool = False
    help: str = ""


# Plausible ranges are wide on purpose: they catch a wrong prefix ("40 kV" for 40 V), not
# unusual parts (common practice).
FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("designation", "Designation", "text", required=True, help="as written on the part"),
    FieldSpec("kind", "Kind", "choice", choices=("bjt", "darlington"), required=True),
    FieldSpec("polarity", "Polarity", "choice", choices=("npn", "pnp"), required=True),
    FieldSpec("material", "Material", "choice", choices=("si", "ge", "other"), required=True),
    FieldSpec("vceo", "Vceo", "quantity", "V", low=0.5, high=20e3, help="collector-emitter, base open"),
    FieldSpec("vcbo", "Vcbo", "quantity", "V", low=0.5, high=20e3, help="collector-base, emitter open"),
    FieldSpec("vebo", "Vebo", "quantity", "V", low=0.1, high=100, help="emitter-base, collector open"),
    FieldSpec("ic_max", "Ic max", "quantity", "A", low=1e-4, high=2000, help="continuous collector current"),
    FieldSpec("ptot", "Ptot", "quantity", "W", low=1e-3, high=5000, help="total dissipation at 25 °C"),
    FieldSpec("ptot_ref", "Ptot ref", "choice", choices=("ambient", "case"),
              help="whether Ptot is rated in free air (ambient) or at the case"),
    FieldSpec("tj_max", "Tj max", "quantity", "°C", low=40, high=300, help="maximum junction temperature"),
    FieldSpec("hfe_min", "hFE min", "quantity", "", low=1, high=100_000),
    FieldSpec("hfe_max", "hFE max", "quantity", "", low=1, high=100_000),
    FieldSpec("hfe_ic", "hFE at Ic", "quantity", "A", low=1e-7, high=2000,
              help="test current of the hFE window"),
    FieldSpec("ft", "fT", "quantity", "Hz", low=1e3, high=100e9, help="transition frequency"),
    FieldSpec("vbe_on", "Vbe(on)", "quantity", "V", low=0.05, high=5, help="base-emitter voltage at vbe_ic"),
    FieldSpec("vbe_ic", "Vbe at Ic", "quantity", "A", low=1e-7, high=2000, help="test current of Vbe(on)"),
    FieldSpec("vce_sat", "Vce(sat)", "quantity", "V", low=1e-3, high=10),
    FieldSpec("icbo", "Icbo", "quantity", "A", low=1e-15, high=0.1, help="collector-base leakage at 25 °C"),
    FieldSpec("package", "Package", "text",
              help="outline such as TO-92, TO-18, TO-126, TO-220, TO-3, SOT-23"),
    FieldSpec("pinout", "Pinout", "text",
              help="lead order as E/B/C letters, read left to right facing the flat (marked) side, "
                   "leads down; for metal cans and SOT-23: pin 1, 2, 3"),
    FieldSpec("application", "Application", "text", help="class such as audio, rf, switching, power"),
    FieldSpec("obsolete", "Obsolete", "bool"),
    FieldSpec("notes", "Notes", "text"),
    FieldSpec("low_stock", "Low stock", "count", low=0, high=10_000_000,
              help="warn when the stock of this device falls below this count"),
    FieldSpec("reorder_to", "Reorder to", "count", low=0, high=10_000_000,
              help="stock to buy up to when at or below the low-stock count "
                   "(blank: twice the low-stock count)"),
)

FIELD_BY_NAME: dict[str, FieldSpec] = {f.name: f for f in FIELDS}
FIELD_NAMES: tuple[str, ...] = tuple(f.name for f in FIELDS)
QUANTITY_FIELDS: tuple[str, ...] = tuple(f.name for f in FIELDS if f.kind == "quantity")
COUNT_FIELDS: tuple[str, ...] = tuple(f.name for f in FIELDS if f.kind == "count")
TEXT_FIELDS: tuple[FieldSpec, ...] = tuple(f for f in FIELDS if f.kind == "text")

# Junction temperature assumed when a record has none (common practice: germanium parts were
# rated 75-90 °C, silicon 150 °C or more). Reported as assumed wherever it is used.
DEFAULT_TJ_MAX: dict[str, float] = {"ge": 85.0, "si": 150.0, "other": 150.0}


def default_tj_max(material: str | None) -> float:
    """Tj max assumed for a part of this material with none recorded (unknown: silicon's)."""
    return DEFAULT_TJ_MAX.get(material or "si", DEFAULT_TJ_MAX["si"])

# The usual words a sheet uses for a choice, per field (common practice).
CHOICE_ALIASES: dict[str, dict[str, str]] = {
    "kind": {"darl": "darlington", "transistor": "bjt", "bipolar": "bjt"},
    "polarity": {"p": "pnp", "n": "npn"},
    "material": {"germanium": "ge", "silicon": "si", "g": "ge", "s": "si"},
    "ptot_ref": {"free-air": "ambient", "free air": "ambient", "air": "ambient", "ta": "ambient",
                 "tc": "case", "heatsink": "case"},
}

TRUE_WORDS = frozenset({"yes", "y", "true", "t", "1"})
FALSE_WORDS = frozenset({"no", "n", "false", "f", "0", ""})


class InvalidRecord(InvalidInput):
    """One or more fields of a record are invalid; ``problems`` lists (field, message)."""

    def __init__(self, problems: list[tuple[str, str]]) -> None:
        self.problems = problems
        super().__init__("; ".join(msg for _, msg in problems))


@dataclass
class Device:
    """One device type with its ratings. Quantities in SI base units, temperatures in °C."""

    designation: str
    kind: str = "bjt"
    polarity: str = "npn"
    material: str = "si"
    vceo: float | None = None
    vcbo: float | None = None
    vebo: float | None = None
    ic_max: float | None = None
    ptot: float | None = None
    ptot_ref: str | None = None
    tj_max: float | None = None
    hfe_min: float | None = None
    hfe_max: float | None = None
    hfe_ic: float | None = None
    ft: float | None = None
    vbe_on: float | None = None
    vbe_ic: float | None = None
    vce_sat: float | None = None
    icbo: float | None = None
    package: str | None = None
    pinout: str | None = None
    application: str | None = None
    obsolete: bool = False
    notes: str | None = None
    low_stock: int | None = None
    reorder_to: int | None = None
    warnings: list[str] = field(default_factory=list)
    """Consistency warnings (designation vs fields), stored with the record."""

    @property
    def key(self) -> str:
        """The normalised designation, unique in the database."""
        return normalize(self.designation)

    def tj_max_or_default(self) -> tuple[float, bool]:
        """Tj max and whether it was assumed from the material (True when assumed)."""
        if self.tj_max is not None:
            return self.tj_max, False
        return default_tj_max(self.material), True

    def to_dict(self) -> dict[str, Any]:
        """Plain values keyed by the CSV column names (SI base units)."""
        return {name: getattr(self, name) for name in FIELD_NAMES}

    def display(self, name: str) -> str:
        """One field formatted for people: engineering notation, yes/no, or text."""
        spec = FIELD_BY_NAME[name]
        value = getattr(self, name)
        if value is None:
            return "—"
        if spec.kind == "quantity":
            return format_quantity(value, spec.unit)
        if spec.kind == "bool":
            return "yes" if value else "no"
        return str(value)


def parse_bool(value: object, field: str) -> bool:
    if isinstance(value, bool):
        return value
    if isinstance(value, int | float) and value in (0, 1):
        return bool(value)
    text = "" if value is None else str(value).strip().lower()
    if text in TRUE_WORDS:
        return True
    if text in FALSE_WORDS:
        return False
    raise UnitError(field, value, "yes/no, true/false or 1/0")


def _blank(value: object) -> bool:
    if value is None:
        return True
    if isinstance(value, float) and math.isnan(value):
        return True
    return isinstance(value, str) and value.strip() in ("", "—")


def parse_field(name: str, value: object) -> Any:
    """Read one raw value (text or number) into its stored form; blank -> None.

    Raises :class:`UnitError` naming the field, the value and what was expected.
    """
    spec = FIELD_BY_NAME[name]
    if spec.kind == "bool":
        return parse_bool(value, name)
    if _blank(value):
        if spec.required:
            raise UnitError(name, value, "a value (this field is required)")
        return None
    if spec.kind == "text":
        text = str(value).strip()
        return clean_designation(text) if name == "designation" else check_text(name, text)
    if spec.kind == "choice":
        text = str(value).strip().lower()
        text = CHOICE_ALIASES.get(name, {}).get(text, text)
        if text not in spec.choices:
            raise UnitError(name, value, "one of " + ", ".join(spec.choices))
        return text
    if spec.kind == "count":
        number = parse_quantity(value, "", name)
        if number != int(number) or number < 0:
            raise UnitError(name, value, "a whole number of parts, 0 or more")
        return int(number)
    number = parse_quantity(value, spec.unit, name)
    if number <= 0:
        raise UnitError(name, value, f"a positive {spec.label} ({describe_range(spec)})")
    return number


def describe_range(spec: FieldSpec) -> str:
    return f"{format_quantity(spec.low, spec.unit)} to {format_quantity(spec.high, spec.unit)}"


# numpy is imported inside the functions that need it: the CLI builds its options from FIELDS
# at start-up, and `partsdb --help` must stay light.
_PINOUTS = ("EBC", "ECB", "BEC", "BCE", "CEB", "CBE")


def _floats(column: Any, n: int) -> np.ndarray:
    import numpy as np

    if column is None:
        return np.full(n, np.nan)
    return np.array([np.nan if v is None else v for v in column], dtype=float) \
        if isinstance(column, list) else np.asarray(column, dtype=float)


def _present(column: Any, n: int) -> np.ndarray:
    import numpy as np

    if column is None:
        return np.zeros(n, dtype=bool)
    return np.array([v is not None and v == v and v != "" for v in column], dtype=bool)


def check_columns(columns: Mapping[str, Any], n: int) -> dict[int, list[tuple[str, str]]]:
    """Range and cross-field rules over parsed columns (lists or arrays, None for missing).

    Returns problems by row position. Column-wise, so a 200,000-row import checks in
    milliseconds; :func:`check_record` runs the same rules on one record.
    """
    import numpy as np

    problems: dict[int, list[tuple[str, str]]] = {}

    def flag(mask: np.ndarray, name: str, message: Any) -> None:
        for pos in np.flatnonzero(mask):
            problems.setdefault(int(pos), []).append((name, message(int(pos))))

    cols = {name: _floats(columns.get(name), n) for name in (*QUANTITY_FIELDS, *COUNT_FIELDS)
            if name in columns}
    for name, values in cols.items():
        spec = FIELD_BY_NAME[name]
        with np.errstate(invalid="ignore"):
            outside = (values < spec.low) | (values > spec.high)
        flag(outside, name, lambda i, v=values, s=spec: (
            f"{s.name}: {format_quantity(v[i], s.unit)} is outside the plausible range "
            f"{describe_range(s)}"))
    nan = np.full(n, np.nan)
    lo, hi = cols.get("hfe_min", nan), cols.get("hfe_max", nan)
    flag(lo > hi, "hfe_min", lambda i: f"hfe_min: {lo[i]:g} is above hfe_max {hi[i]:g}; "
                                       "expected min <= max")
    # A transistor's Vcbo is never below its Vceo (BVceo = BVcbo / (1+hFE)^(1/n); common practice).
    vceo, vcbo = cols.get("vceo", nan), cols.get("vcbo", nan)
    flag(vcbo < vceo, "vcbo", lambda i: f"vcbo: {format_quantity(vcbo[i], 'V')} is below vceo "
                                        f"{format_quantity(vceo[i], 'V')}; expected vcbo >= vceo")
    flag(~np.isnan(cols.get("vbe_on", nan)) & np.isnan(cols.get("vbe_ic", nan)), "vbe_ic",
         lambda i: "vbe_ic: missing; expected the test current of vbe_on")
    flag(~np.isnan(cols.get("ptot", nan)) & ~_present(columns.get("ptot_ref"), n), "ptot_ref",
         lambda i: "ptot_ref: missing; expected 'ambient' or 'case' for the Ptot rating")
    if "pinout" in columns:
        pins = np.array([v if v else "EBC" for v in columns["pinout"]], dtype=object)
        flag(~np.isin(pins, np.array(_PINOUTS, dtype=object)), "pinout", lambda i: (
            f"pinout: {columns['pinout'][i]!r} is not valid; expected the three letters E, B, C "
            "in lead order, such as EBC or ECB"))
    if "designation" in columns:
        names = columns["designation"]
        flag(np.array([not normalize(str(v or "")) for v in names], dtype=bool), "designation",
             lambda i: "designation: empty; expected the part number")
    # Lengths and characters of the text fields (limits.py), the same on both backends.
    for spec in TEXT_FIELDS:
        if spec.name not in columns:
            continue
        limit = MAX_LENGTH[spec.name]
        for pos, text in enumerate(columns[spec.name]):
            if text and (len(text) > limit or not (text.isascii() and text.isprintable())):
                try:
                    if spec.name == "designation":
                        clean_designation(text)
                        problem = None
                    else:
                        problem = text_problem(spec.name, text)
                except LimitError as err:
                    problem = str(err)
                if problem is not None:
                    problems.setdefault(pos, []).append((spec.name, problem))
    return problems


def normalize_pinout(value: Any) -> Any:
    if not value:
        return value
    return str(value).upper().replace("-", "").replace(" ", "").replace("/", "")


def check_record(values: Mapping[str, Any]) -> list[tuple[str, str]]:
    """Range and cross-field rules on one parsed record; returns (field, message) problems."""
    return check_columns({k: [v] for k, v in values.items()}, 1).get(0, [])


def parse_device(raw: Mapping[str, Any]) -> Device:
    """Build a valid :class:`Device` from raw values (text with units or numbers).

    Unknown keys are refused. Every problem is collected, then raised together as
    :class:`InvalidRecord`, so a user fixes a row in one pass.
    """
    unknown = [k for k in raw if k not in FIELD_BY_NAME]
    problems: list[tuple[str, str]] = [
        (k, f"{k}: unknown field; known fields are {', '.join(FIELD_NAMES)}") for k in unknown
    ]
    values: dict[str, Any] = {}
    for spec in FIELDS:
        if spec.name not in raw:
            if spec.required:
                problems.append((spec.name, f"{spec.name}: missing; expected "
                                 + ("one of " + ", ".join(spec.choices) if spec.choices
                                    else "a value")))
            continue
        try:
            values[spec.name] = parse_field(spec.name, raw[spec.name])
        except UnitError as err:
            problems.append((spec.name, str(err)))
    if values.get("pinout"):
        values["pinout"] = normalize_pinout(values["pinout"])
    seen = {name for name, _ in problems}
    problems.extend(p for p in check_record(values) if p[0] not in seen)
    if problems:
        raise InvalidRecord(problems)
    return Device(**values)


def replace(device: Device, **changes: Any) -> Device:
    """A copy of ``device`` with raw ``changes`` parsed and the whole record re-checked."""
    raw = device.to_dict()
    raw.update(changes)
    new = parse_device(raw)
    new.warnings = device.warnings
    return new
