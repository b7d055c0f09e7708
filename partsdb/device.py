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

FieldKind = Literal["quantity", "choice", "text", "bool", "flag", "count"]
"""``flag`` is a yes/no that may be unknown (blank: None); ``bool`` is never unknown."""
Sign = Literal["positive", "magnitude", "signed"]

BIPOLAR_KINDS: frozenset[str] = frozenset({"bjt", "darlington"})
MOSFET_KINDS: frozenset[str] = frozenset({"mosfet"})
JFET_KINDS: frozenset[str] = frozenset({"jfet"})
FET_KINDS: frozenset[str] = MOSFET_KINDS | JFET_KINDS
KINDS: tuple[str, ...] = ("bjt", "darlington", "mosfet", "jfet")


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
    """Smallest plausible value (inclusive; of the magnitude for a signed field)."""
    high: float | None = None
    """Largest plausible value (inclusive; of the magnitude for a signed field)."""
    required: bool = False
    help: str = ""
    kinds: frozenset[str] | None = None
    """The device kinds the field belongs to (None: every kind). A value on another kind is
    refused, so a bipolar rating never sits unseen on a FET record and vice versa."""
    sign: Sign = "positive"
    """positive: 0 and below refused; magnitude: a minus sign as a P-channel datasheet writes it
    is accepted and dropped (stored as the magnitude); signed: kept with its sign (a threshold or
    cut-off voltage, whose sign follows the channel), 0 refused."""


# Plausible ranges are wide on purpose: they catch a wrong prefix ("40 kV" for 40 V), not
# unusual parts (common practice).
_B, _M, _J, _F = BIPOLAR_KINDS, MOSFET_KINDS, JFET_KINDS, FET_KINDS
FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("designation", "Designation", "text", required=True, help="as written on the part"),
    FieldSpec("kind", "Kind", "choice", choices=KINDS, required=True,
              help="bjt, darlington, mosfet or jfet"),
    FieldSpec("polarity", "Polarity", "choice", choices=("npn", "pnp", "n", "p"), required=True,
              help="npn or pnp for a bipolar part; n or p (the channel) for a FET"),
    FieldSpec("material", "Material", "choice", choices=("si", "ge", "other"), required=True,
              help="si, ge or other (SiC, GaN and other compounds)"),
    FieldSpec("mode", "Mode", "choice", choices=("enhancement", "depletion"), kinds=_M,
              help="MOSFET mode (blank on a MOSFET: enhancement; a JFET is depletion-mode)"),
    FieldSpec("vceo", "Vceo", "quantity", "V", low=0.5, high=20e3, kinds=_B,
              help="collector-emitter, base open"),
    FieldSpec("vcbo", "Vcbo", "quantity", "V", low=0.5, high=20e3, kinds=_B,
              help="collector-base, emitter open"),
    FieldSpec("vebo", "Vebo", "quantity", "V", low=0.1, high=100, kinds=_B,
              help="emitter-base, collector open"),
    FieldSpec("ic_max", "Ic max", "quantity", "A", low=1e-4, high=2000, kinds=_B,
              help="continuous collector current"),
    FieldSpec("ptot", "Ptot", "quantity", "W", low=1e-3, high=5000, help="total dissipation at 25 °C"),
    FieldSpec("ptot_ref", "Ptot ref", "choice", choices=("ambient", "case"),
              help="whether Ptot is rated in free air (ambient) or at the case"),
    FieldSpec("tj_max", "Tj max", "quantity", "°C", low=40, high=300, help="maximum junction temperature"),
    FieldSpec("hfe_min", "hFE min", "quantity", "", low=1, high=100_000, kinds=_B),
    FieldSpec("hfe_max", "hFE max", "quantity", "", low=1, high=100_000, kinds=_B),
    FieldSpec("hfe_ic", "hFE at Ic", "quantity", "A", low=1e-7, high=2000, kinds=_B,
              help="test current of the hFE window"),
    FieldSpec("ft", "fT", "quantity", "Hz", low=1e3, high=100e9, kinds=_B,
              help="transition frequency"),
    FieldSpec("vbe_on", "Vbe(on)", "quantity", "V", low=0.05, high=5, kinds=_B,
              help="base-emitter voltage at vbe_ic"),
    FieldSpec("vbe_ic", "Vbe at Ic", "quantity", "A", low=1e-7, high=2000, kinds=_B,
              help="test current of Vbe(on)"),
    FieldSpec("vce_sat", "Vce(sat)", "quantity", "V", low=1e-3, high=10, kinds=_B),
    FieldSpec("icbo", "Icbo", "quantity", "A", low=1e-15, high=0.1, kinds=_B,
              help="collector-base leakage at 25 °C"),
    FieldSpec("rth_jc", "Rth j-c", "quantity", "K/W", low=0.01, high=500,
              help="thermal resistance, junction to case (where the datasheet gives it)"),
    FieldSpec("vds", "Vds", "quantity", "V", low=1, high=20e3, kinds=_F, sign="magnitude",
              help="drain-source voltage rating (a JFET: Vds or Vdg, whichever is given)"),
    FieldSpec("vgs_max", "Vgs max", "quantity", "V", low=0.5, high=200, kinds=_F,
              sign="magnitude", help="gate-source voltage rating, either sign (±)"),
    FieldSpec("id_max", "Id max", "quantity", "A", low=1e-5, high=2000, kinds=_F,
              sign="magnitude", help="continuous drain current at 25 °C (see id_max_ref)"),
    FieldSpec("id_max_ref", "Id max ref", "choice", choices=("ambient", "case"), kinds=_F,
              help="whether Id max is stated at 25 °C case or ambient (blank: as ptot_ref)"),
    FieldSpec("rds_on", "Rds(on)", "quantity", "Ω", low=1e-4, high=1e7, kinds=_M,
              help="drain-source on-resistance (max) at rds_on_vgs and rds_on_id"),
    FieldSpec("rds_on_vgs", "Rds(on) at Vgs", "quantity", "V", low=0.5, high=100, kinds=_M,
              sign="magnitude", help="gate-source voltage Rds(on) is specified at"),
    FieldSpec("rds_on_id", "Rds(on) at Id", "quantity", "A", low=1e-6, high=2000, kinds=_M,
              sign="magnitude", help="drain current Rds(on) is specified at"),
    FieldSpec("vgs_th_min", "Vgs(th) min", "quantity", "V", low=0.05, high=30, kinds=_M,
              sign="signed", help="gate threshold voltage, min, with its sign "
                                  "(N-channel enhancement positive)"),
    FieldSpec("vgs_th_max", "Vgs(th) max", "quantity", "V", low=0.05, high=30, kinds=_M,
              sign="signed", help="gate threshold voltage, max, with its sign"),
    FieldSpec("qg", "Qg", "quantity", "C", low=1e-12, high=1e-5, kinds=_M,
              help="total gate charge"),
    FieldSpec("qgd", "Qgd", "quantity", "C", low=1e-13, high=1e-5, kinds=_M,
              help="gate-drain (Miller) charge"),
    FieldSpec("ciss", "Ciss", "quantity", "F", low=1e-13, high=1e-6, kinds=_F,
              help="input capacitance"),
    FieldSpec("body_diode", "Body diode", "flag", kinds=_M,
              help="yes / no: whether the MOSFET has a usable body (drain-source) diode"),
    FieldSpec("trr", "trr", "quantity", "s", low=1e-10, high=1e-3, kinds=_M,
              help="body-diode reverse-recovery time"),
    FieldSpec("vgs_off_min", "Vgs(off) min", "quantity", "V", low=0.05, high=30, kinds=_F,
              sign="signed", help="gate-source cut-off voltage, min, with its sign "
                                  "(N-channel negative)"),
    FieldSpec("vgs_off_max", "Vgs(off) max", "quantity", "V", low=0.05, high=30, kinds=_F,
              sign="signed", help="gate-source cut-off voltage, max, with its sign"),
    FieldSpec("idss_min", "Idss min", "quantity", "A", low=1e-8, high=100, kinds=_F,
              sign="magnitude", help="zero-gate-voltage drain current, min"),
    FieldSpec("idss_max", "Idss max", "quantity", "A", low=1e-8, high=100, kinds=_F,
              sign="magnitude", help="zero-gate-voltage drain current, max"),
    FieldSpec("yfs", "yfs (gfs)", "quantity", "S", low=1e-6, high=1000, kinds=_F,
              help="forward transfer admittance (gfs), min, at yfs_id"),
    FieldSpec("yfs_id", "yfs at Id", "quantity", "A", low=1e-7, high=2000, kinds=_F,
              sign="magnitude", help="drain current yfs is specified at"),
    FieldSpec("en", "en", "quantity", "V/√Hz", low=1e-10, high=1e-5, kinds=_F,
              help="input voltage-noise density (typ.), such as 2 nV/√Hz"),
    FieldSpec("package", "Package", "text",
              help="outline such as TO-92, TO-18, TO-126, TO-220, TO-3, SOT-23"),
    FieldSpec("pinout", "Pinout", "text",
              help="lead order as E/B/C letters (a FET: G/D/S; a dual-gate FET: two G, gate 1 "
                   "first), read left to right facing the flat (marked) side, leads down; for "
                   "metal cans and SOT-23: pin 1, 2, 3"),
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
    "kind": {"darl": "darlington", "transistor": "bjt", "bipolar": "bjt", "mos": "mosfet",
             "mos-fet": "mosfet", "igfet": "mosfet", "j-fet": "jfet"},
    "mode": {"enh": "enhancement", "enhancement-mode": "enhancement", "dep": "depletion",
             "depl": "depletion", "depletion-mode": "depletion"},
    # "n" and "p" are the channel of a FET; on a bipolar record they are read as npn and pnp
    # (settle_columns), as they always were.
    "polarity": {"n-channel": "n", "n channel": "n", "nch": "n", "n-ch": "n", "n-chan": "n",
                 "p-channel": "p", "p channel": "p", "pch": "p", "p-ch": "p", "p-chan": "p"},
    "material": {"germanium": "ge", "silicon": "si", "g": "ge", "s": "si", "sic": "other",
                 "gan": "other"},
    "ptot_ref": {"free-air": "ambient", "free air": "ambient", "air": "ambient", "ta": "ambient",
                 "tc": "case", "heatsink": "case"},
}
CHOICE_ALIASES["id_max_ref"] = CHOICE_ALIASES["ptot_ref"]

POLARITY_WORDS: dict[str, str] = {"npn": "NPN", "pnp": "PNP", "n": "N-channel", "p": "P-channel"}
_KIND_WORDS: dict[frozenset[str], str] = {BIPOLAR_KINDS: "bipolar", MOSFET_KINDS: "MOSFET",
                                          JFET_KINDS: "JFET", FET_KINDS: "FET"}


def is_fet(kind: str | None) -> bool:
    """Whether a record of this kind is a field-effect transistor (MOSFET or JFET)."""
    return kind in FET_KINDS


def applies(spec: FieldSpec, kind: str | None) -> bool:
    """Whether the field belongs to a record of this kind."""
    return spec.kinds is None or (kind or "bjt") in spec.kinds


def fields_for(kind: str | None) -> tuple[FieldSpec, ...]:
    """The fields a record of this kind may carry, in FIELDS order (forms, tables)."""
    return tuple(spec for spec in FIELDS if applies(spec, kind))

TRUE_WORDS = frozenset({"yes", "y", "true", "t", "1"})
FALSE_WORDS = frozenset({"no", "n", "false", "f", "0", ""})


class NotBipolar(InvalidInput):
    """A FET record given to something that handles bipolar transistors only (exit 2)."""

    def __init__(self, device: Device, what: str) -> None:
        super().__init__(f"{device.designation}: not a bipolar part ({device.polarity_text} "
                         f"{device.kind}); {what} handles bipolar transistors only")


def require_bipolar(device: Device, what: str) -> None:
    """Refuse a FET where only a bipolar transistor makes sense (bias stage, SPICE card)."""
    if is_fet(device.kind):
        raise NotBipolar(device, what)


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
    mode: str | None = None
    """MOSFET only: enhancement or depletion."""
    rth_jc: float | None = None
    vds: float | None = None
    vgs_max: float | None = None
    id_max: float | None = None
    id_max_ref: str | None = None
    rds_on: float | None = None
    rds_on_vgs: float | None = None
    rds_on_id: float | None = None
    vgs_th_min: float | None = None
    vgs_th_max: float | None = None
    qg: float | None = None
    qgd: float | None = None
    ciss: float | None = None
    body_diode: bool | None = None
    trr: float | None = None
    vgs_off_min: float | None = None
    vgs_off_max: float | None = None
    idss_min: float | None = None
    idss_max: float | None = None
    yfs: float | None = None
    yfs_id: float | None = None
    en: float | None = None
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
    def is_fet(self) -> bool:
        return is_fet(self.kind)

    @property
    def polarity_text(self) -> str:
        """NPN, PNP, N-channel or P-channel."""
        return POLARITY_WORDS.get(self.polarity, self.polarity)

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
            # A gate rating holds for either sign: shown as the datasheet prints it.
            return ("±" if name == "vgs_max" else "") + format_quantity(value, spec.unit)
        if spec.kind in ("bool", "flag"):
            return "yes" if value else "no"
        if name == "polarity":
            return POLARITY_WORDS.get(value, value)
        return str(value)


# The short type word of a list row (NPN, PNP; NMOS, PMOS; NJFET, PJFET): the kind and the
# channel at a glance; the detail view spells them out.
_TYPE_WORDS: dict[tuple[str, str], str] = {("mosfet", "n"): "NMOS", ("mosfet", "p"): "PMOS",
                                           ("jfet", "n"): "NJFET", ("jfet", "p"): "PJFET"}


def speed_cell(device: Device) -> str:
    """The list's last figure: fT of a bipolar part, Qg of a MOSFET, yfs of a JFET."""
    name = {"mosfet": "qg", "jfet": "yfs"}.get(device.kind, "ft")
    return device.display(name).replace(" ", "")


def type_word(device: Device) -> str:
    """NPN / PNP for a bipolar part, NMOS / PMOS / NJFET / PJFET for a FET."""
    return _TYPE_WORDS.get((device.kind, device.polarity), device.polarity.upper())


def rating_cells(device: Device) -> tuple[str, str, str]:
    """The kind-dependent cells of a catalog list: voltage rating, current rating, and the
    figure matched first: bipolar Vceo, Ic max, the hFE window; MOSFET Vds, Id max, Rds(on);
    JFET Vds, the Idss window (and Id max when there is no window)."""
    def window(lo: float | None, hi: float | None, unit: str) -> str:
        if lo is None or hi is None:
            return cell("idss_min" if hi is None else "idss_max")
        low, high = format_quantity(lo, unit).split(" "), format_quantity(hi, unit).split(" ")
        # "2.6-6.5mA" when both ends share the prefix, else "500µA-6.5mA".
        return ("".join(low) if low[-1] != high[-1] else low[0]) + "-" + "".join(high)

    def cell(name: str) -> str:
        return device.display(name).replace(" ", "")

    if device.kind == "mosfet" and device.mode != "depletion":
        return cell("vds"), cell("id_max"), cell("rds_on")
    if device.kind in FET_KINDS:  # a JFET, or a depletion MOSFET: chosen by its Idss window
        return cell("vds"), cell("id_max"), window(device.idss_min, device.idss_max, "A")
    lo, hi = device.hfe_min, device.hfe_max
    hfe = ("—" if lo is None and hi is None else f"{lo:g}+" if hi is None
           else f"≤{hi:g}" if lo is None else f"{lo:g}-{hi:g}")
    return cell("vceo"), cell("ic_max"), hfe


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
    if spec.kind == "flag":
        return None if _blank(value) else parse_bool(value, name)
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
    if spec.sign == "magnitude" and isinstance(value, str):
        value = strip_plus_minus(value)
    number = parse_quantity(value, spec.unit, name)
    if spec.sign == "magnitude":
        number = abs(number)
    if number == 0 and spec.sign == "signed":
        raise UnitError(name, value, f"a {spec.label} other than 0, with its sign "
                                     f"({describe_range(spec)})")
    if number <= 0 and spec.sign != "signed":
        raise UnitError(name, value, f"a positive {spec.label} ({describe_range(spec)})")
    return number


def strip_plus_minus(text: str) -> str:
    """"±20 V" (or "+/-20 V") as a datasheet writes a rating of either sign: "20 V"."""
    t = text.strip()
    for mark in ("±", "+/-", "+-"):
        if t.startswith(mark):
            rest = t[len(mark):].strip()
            # "±-20 V" says two things: left as it is, to be refused.
            return text if rest.startswith(("+", "-", "±")) else rest
    return text


def describe_range(spec: FieldSpec) -> str:
    return f"{format_quantity(spec.low, spec.unit)} to {format_quantity(spec.high, spec.unit)}"


# numpy is imported inside the functions that need it: the CLI builds its options from FIELDS
# at start-up, and `partsdb --help` must stay light.
_PINOUTS = ("EBC", "ECB", "BEC", "BCE", "CEB", "CBE")
# A FET's three leads in any order, and a dual-gate FET's four (two gates, gate 1 first).
_FET_PINOUTS = ("GDS", "GSD", "DGS", "DSG", "SGD", "SDG",
                *sorted({"".join(p) for p in __import__("itertools").permutations("GGDS")}))


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
        size = np.abs(values) if spec.sign == "signed" else values
        with np.errstate(invalid="ignore"):
            outside = (size < spec.low) | (size > spec.high)
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
    kinds = _words(columns.get("kind"), n, "bjt")
    fet = np.isin(kinds, np.array(sorted(FET_KINDS), dtype=object))
    if "pinout" in columns:
        pins = np.array([v if v else "" for v in columns["pinout"]], dtype=object)
        blank = pins == ""
        flag(~blank & ~fet & ~np.isin(pins, np.array(_PINOUTS, dtype=object)), "pinout", lambda i: (
            f"pinout: {columns['pinout'][i]!r} is not valid; expected the three letters E, B, C "
            "in lead order, such as EBC or ECB"))
        flag(~blank & fet & ~np.isin(pins, np.array(_FET_PINOUTS, dtype=object)), "pinout",
             lambda i: (f"pinout: {columns['pinout'][i]!r} is not valid for a FET; expected the "
                        "letters G, D, S in lead order, such as GDS or SGD (a dual-gate FET: "
                        "two G, such as SGGD)"))
    from partsdb.kind_rules import check_kind_rules

    check_kind_rules(columns, n, kinds, fet, cols, flag)
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


def _words(column: Any, n: int, default: str | None) -> np.ndarray:
    import numpy as np

    if column is None:
        return np.full(n, default, dtype=object)
    return np.array([default if v is None or v != v or v == "" else v for v in column],
                    dtype=object)


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
    if str(raw.get("kind", "")).strip().lower() in FET_KINDS and \
            str(raw.get("material") or "").strip() == "":
        # a field-effect part is silicon unless said otherwise (germanium FETs were never
        # made; SiC and GaN parts are entered as 'other'): common practice
        raw = {**raw, "material": "si"}
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
    if "kind" in values:
        from partsdb.kind_rules import settle_columns

        cols = {k: [v] for k, v in values.items()}
        settle_columns(cols, 1)
        values.update({k: v[0] for k, v in cols.items()})
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
