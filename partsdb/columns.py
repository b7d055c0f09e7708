"""Reading someone's own spreadsheet: header spellings, units in headers, outlines, defaults and
plausibility, in one table each.

A header is compared as a *key*: lower case, without spaces, punctuation or a unit in brackets
("Vce max (V)" -> "vcemax", unit "V"). Every device field answers to its own name and its
label (both from :data:`partsdb.device.FIELDS`) and to the extra spellings in
:data:`SPELLINGS`; the sheet's stock columns (location, quantity, condition) likewise. A test
holds the table to one field per key.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field

from partsdb.device import FIELD_BY_NAME, FIELDS
from partsdb.errors import InvalidInput
from partsdb.units import PREFIXES, UNIT_SPELLINGS, format_quantity

SHEET_STOCK_COLUMNS: tuple[str, ...] = ("location", "quantity", "condition")
"""Columns of a parts sheet that describe a lot rather than the device."""

# Spellings seen in workshop sheets and datasheet tables beyond a field's own name and label
# (common practice). Written as keys (lower case, letters and digits only).
SPELLINGS: dict[str, tuple[str, ...]] = {
    "designation": ("type", "part", "partno", "partnumber", "name", "device", "transistor",
                    "marking", "typ"),
    "kind": ("devicekind", "family"),
    "polarity": ("pol", "npnpnp", "conductivity", "channel"),
    "material": ("mat", "semiconductor", "substrate"),
    "vceo": ("vce", "vcemax", "vceomax", "uce", "uceo", "bvceo", "vceobr", "vcemaxv"),
    "vcbo": ("vcb", "vcbmax", "vcbomax", "ucb", "ucbo", "bvcbo"),
    "vebo": ("veb", "vebmax", "vebomax", "ueb", "uebo", "bvebo"),
    "ic_max": ("ic", "icmax", "imax", "collectorcurrent", "icont", "iccont"),
    "ptot": ("pd", "pc", "pmax", "ptotmax", "pdmax", "power", "dissipation", "ptot25"),
    "ptot_ref": ("ptotat", "rating", "pref", "ratedat"),
    "tj_max": ("tj", "tjmax", "tjunction", "junctiontemperature"),
    "hfe_min": ("hfe", "beta", "gain", "b", "h21e", "hfemin"),
    "hfe_max": ("hfemax", "betamax", "h21emax"),
    "hfe_ic": ("hfeic", "hfeatic", "ichfe"),
    "ft": ("fttyp", "transitionfrequency", "gbw", "fmax"),
    "vbe_on": ("vbe", "vbeon", "ube"),
    "vbe_ic": ("vbeic", "vbeatic"),
    "vce_sat": ("vcesat", "vcesatmax", "ucesat"),
    "icbo": ("icbo", "leakage", "icbomax"),
    "mode": ("fetmode", "enhdep"),
    "rth_jc": ("thetajc", "rthjcase", "rthj"),
    "vds": ("vdss", "vdsmax", "bvdss", "vdg", "vdgmax", "vdgo", "uds", "vdssmax"),
    "vgs_max": ("vgs", "vgss", "vgsmaxv", "ugs"),
    "id_max": ("id", "idcont", "draincurrent", "idmaxa", "idc"),
    "id_max_ref": ("idat", "idref", "idrating"),
    "rds_on": ("rds", "ron", "rdsonmax", "rdson25"),
    "rds_on_vgs": ("rdsonvgs", "rdsonatvgs", "vgsrdson"),
    "rds_on_id": ("rdsonid", "rdsonatid", "idrdson"),
    "vgs_th_min": ("vgsth", "vth", "vgsthmin", "vthmin", "vgsto"),
    "vgs_th_max": ("vthmax",),
    "qg": ("qgtot", "qgtotal", "gatecharge", "totalgatecharge"),
    "qgd": ("millercharge", "qgdmax"),
    "ciss": ("cin", "inputcapacitance", "cis", "cissmax"),
    "body_diode": ("diode", "intrinsicdiode", "bodydiodes"),
    "trr": ("reverserecovery", "trrmax"),
    "vgs_off_min": ("vgsoff", "vp", "vpinchoff", "pinchoff", "vgsoffmin", "vpmin"),
    "vgs_off_max": ("vpmax",),
    "idss_min": ("idss", "idssmin"),
    "idss_max": ("idssmaxa",),
    "yfs": ("gfs", "gm", "transconductance", "yfsmin", "gfsmin"),
    "yfs_id": ("gfsid", "gfsatid", "gmid"),
    "en": ("noise", "noisedensity", "voltagenoise", "vn", "ennoise"),
    "package": ("case", "outline", "pkg", "housing", "casestyle", "body"),
    "pinout": ("pins", "pinning", "leads", "pinorder", "lead"),
    "application": ("use", "usage", "function", "class"),
    "obsolete": ("eol", "discontinued"),
    "notes": ("note", "comment", "comments", "remark", "remarks", "description"),
    "low_stock": ("minstock", "reorder", "reorderlevel", "minimum", "min"),
    "location": ("drawer", "place", "bin", "box", "loc", "shelf", "storage", "where", "slot"),
    "quantity": ("qty", "pcs", "pieces", "count", "stock", "onhand", "amount", "number", "no"),
    "condition": ("state", "cond"),
}


def header_key(text: str) -> str:
    """A header as compared: lower case, letters and digits only ("Vce max" -> "vcemax")."""
    return re.sub(r"[^0-9a-z]", "", text.strip().lower())


def _build_table() -> dict[str, str]:
    table: dict[str, str] = {}
    own: list[tuple[str, tuple[str, ...]]] = [(f.name, (f.name, f.label)) for f in FIELDS]
    own += [(c, (c,)) for c in SHEET_STOCK_COLUMNS]
    for name, spellings in [*own, *SPELLINGS.items()]:
        for spelling in spellings:
            key = header_key(spelling)
            if key in table and table[key] != name:
                raise AssertionError(f"header spelling {spelling!r} names both "
                                     f"{table[key]} and {name}")
            table[key] = name
    return table


HEADER_TABLE: dict[str, str] = _build_table()
"""Header key -> field (or sheet stock column); the one table of spellings."""

KNOWN_COLUMNS: tuple[str, ...] = (*(f.name for f in FIELDS), *SHEET_STOCK_COLUMNS)

# "Ic (mA)", "Ptot [W]", "fT/MHz", "Vce, V"
_BRACKETED = re.compile(r"^(?P<name>.*?)\s*[(\[{](?P<unit>[^)\]}]*)[)\]}]\s*$")
_SLASHED = re.compile(r"^(?P<name>.*?)\s*[/,]\s*(?P<unit>[^/,]+?)\s*$")


def unit_scale(name: str, unit_text: str) -> float | None:
    """The factor a unit written for a column turns its bare numbers into the field's base
    unit ("mA" for ic_max -> 1e-3); None when the text is not a unit of that field."""
    spec = FIELD_BY_NAME.get(name)
    if spec is None or spec.kind != "quantity":
        return None
    text = unit_text.strip()
    spellings = UNIT_SPELLINGS.get(spec.unit, ())
    for prefix, factor in PREFIXES.items():
        if not text.startswith(prefix):
            continue
        rest = text[len(prefix):].strip().lower()
        if rest in spellings and (rest or prefix):
            return factor
    if spec.unit == "" and text.lower() in ("", "x", "-"):
        return 1.0
    return None


def split_header(header: str) -> tuple[str, str | None]:
    """A header and the unit written in it: "Ic (mA)" -> ("Ic", "mA"); no unit -> None.

    The trailing part counts as a unit only if it reads as a prefix and unit symbol, so
    "NPN/PNP" stays one name."""
    for pattern in (_BRACKETED, _SLASHED):
        m = pattern.match(header.strip())
        if m and m.group("name") and _looks_like_unit(m.group("unit")):
            return m.group("name"), m.group("unit").strip()
    return header.strip(), None


def _looks_like_unit(text: str) -> bool:
    text = text.strip()
    for prefix in PREFIXES:
        if text.startswith(prefix):
            rest = text[len(prefix):].strip().lower()
            if rest and any(rest in spellings for spellings in UNIT_SPELLINGS.values()):
                return True
    return text.lower() in ("°c", "degc")


@dataclass(frozen=True)
class MappedColumn:
    header: str
    """As written in the file."""
    field: str | None
    """Device field or sheet stock column; None: ignored."""
    unit: str | None = None
    """Unit for the column's bare numbers (from the header or --unit)."""
    scale: float = 1.0
    """Factor turning a bare number of this column into the field's base unit."""
    how: str = ""
    """How the header was recognised: "name", "spelling", "--map", "ignored"."""


@dataclass
class Mapping_:
    columns: list[MappedColumn] = field(default_factory=list)

    def by_field(self) -> dict[str, MappedColumn]:
        return {c.field: c for c in self.columns if c.field is not None}


def suggest(header: str, choices: Iterable[str]) -> str | None:
    """The known column closest to an unknown header (rapidfuzz), or None when nothing is near."""
    from rapidfuzz import fuzz, process, utils

    found = process.extractOne(header, list(choices), scorer=fuzz.WRatio,
                               processor=utils.default_process, score_cutoff=60)
    return found[0] if found else None


def map_headers(headers: list[str], overrides: Mapping[str, str] | None = None,
                units: Mapping[str, str] | None = None, ignore: Iterable[str] = (),
                ignore_unknown: bool = False) -> Mapping_:
    """Map every header of a sheet to a field; raise InvalidInput (one line per problem) for a
    header that maps to nothing, a field named twice or a unit that is not the field's."""
    overrides = {header_key(k): v.strip() for k, v in (overrides or {}).items()}
    ignored = {header_key(h) for h in ignore}
    units = dict(units or {})
    for name in [*overrides.values(), *units]:
        if name not in KNOWN_COLUMNS:
            near = suggest(name, KNOWN_COLUMNS)
            raise InvalidInput(f"{name!r} is not a known field (in --map/--unit)"
                               + (f"; did you mean {near!r}?" if near else "")
                               + f"; known: {', '.join(KNOWN_COLUMNS)}")
    out = Mapping_()
    problems: list[str] = []
    seen: dict[str, str] = {}
    for header in headers:
        text = str(header)
        bare, unit = split_header(text)
        key_full, key = header_key(text), header_key(bare)
        if key_full in ignored or key in ignored:
            out.columns.append(MappedColumn(text, None, how="ignored"))
            continue
        how = "--map"
        target = overrides.get(key_full) or overrides.get(key)
        if target is None:
            target = HEADER_TABLE.get(key_full)
            if target is not None:
                unit = None  # the whole header is a spelling ("Vce/V" is not; "hFE" is)
            else:
                target = HEADER_TABLE.get(key)
            how = "name" if target is not None and key in (target, header_key(target)) \
                else "spelling"
        if target is None:
            if ignore_unknown:
                out.columns.append(MappedColumn(text, None, how="ignored"))
                continue
            near = suggest(bare, [*KNOWN_COLUMNS, *HEADER_TABLE])
            near_field = HEADER_TABLE.get(header_key(near), near) if near else None
            problems.append(f"column {text!r} matches no field"
                            + (f"; did you mean {near_field!r}?" if near_field else "")
                            + f" (use --map \"{text}=FIELD\", --ignore \"{text}\" or "
                            "--ignore-unknown)")
            continue
        if target in seen:
            problems.append(f"columns {seen[target]!r} and {text!r} both name {target}; "
                            f"expected each field once (use --ignore for one of them)")
            continue
        seen[target] = text
        if target in units:
            unit = units[target]
        scale = 1.0
        if unit is not None:
            factor = unit_scale(target, unit)
            if factor is None:
                spec = FIELD_BY_NAME.get(target)
                expected = f"a unit of {spec.unit}" if spec and spec.unit else "no unit"
                problems.append(f"column {text!r}: unit {unit!r} is not valid for {target}; "
                                f"expected {expected} with an optional SI prefix")
                continue
            scale = factor
        out.columns.append(MappedColumn(text, target, unit, scale, how))
    if problems:
        problems.append("known fields: " + ", ".join(KNOWN_COLUMNS))
        raise InvalidInput("\n".join(problems))
    return out


# ---------------------------------------------------------------- outlines

_OUTLINE = re.compile(r"^(TO|SOT|SOD|SC|SOT|D|DO)\s*-?\s*(\d+)\s*-?\s*([A-Z]*)$")


def normalize_outline(text: str | None) -> str | None:
    """House form of an outline: upper case, a hyphen between family and number ("TO92" ->
    "TO-92", "to-220ab" -> "TO-220AB", "sot 23" -> "SOT-23"); other text stripped."""
    if text is None:
        return None
    clean = " ".join(text.split())
    m = _OUTLINE.match(clean.upper())
    if m is None:
        return clean or None
    family, number, suffix = m.groups()
    return f"{family}-{number}{suffix}"


# Whether a datasheet rates Ptot of a part in this outline in free air (small-signal outlines)
# or at the case (power outlines, which need a heat sink to reach it). Common practice: small
# plastic and metal-can outlines are rated at 25 °C ambient, tab and stud outlines at 25 °C case.
OUTLINE_PTOT_REF: dict[str, str] = {
    **dict.fromkeys(("TO-92", "TO-18", "TO-72", "TO-106", "TO-1", "TO-7", "TO-98", "SOT-23",
                     "SOT-323", "SOT-416", "SOT-54", "SC-70", "SOT-89", "SOT-223", "TO-39",
                     "TO-5"), "ambient"),
    **dict.fromkeys(("TO-126", "TO-220", "TO-3", "TO-66", "TO-247", "TO-218", "TO-202",
                     "TO-225", "TO-264", "TO-3P", "SOT-32", "SOT-93", "SOT-82", "TO-252",
                     "TO-263", "TO-8", "TO-36", "TO-41"), "case"),
}

SMALL_SIGNAL_LIMITS = {"ic_max": 10.0, "ptot": 2.0}
"""Values a small-signal (free-air) outline cannot plausibly carry: above 10 A or 2 W in free
air (common practice: TO-92 parts are rated up to about 1 A and 1 W)."""

BARE_LIMITS: dict[str, float] = {"ic_max": 50.0, "ptot": 300.0, "vceo": 2000.0}
"""A bare number above this in a column without a unit is more likely a smaller unit (150 meant
as mA); few discrete BJTs exceed 50 A, 300 W or 2 kV (common practice)."""

BARE_HINT_UNITS: dict[str, str] = {"ic_max": "mA", "ptot": "mW", "vceo": "mV"}


_FAMILIES: dict[str, str] = {}


def outline_family(outline: str | None) -> str | None:
    """The outline without its letter suffix ("TO-220AB" -> "TO-220"), as the table keys."""
    if not outline:
        return None
    found = _FAMILIES.get(outline)
    if found is not None:
        return found
    m = re.match(r"^([A-Z]+-\d+)", outline)
    base = m.group(1) if m else outline
    family = outline if outline in OUTLINE_PTOT_REF else base
    if len(_FAMILIES) < 10_000:
        _FAMILIES[outline] = family
    return family


def infer_ptot_ref(outline: str | None) -> str | None:
    """ptot_ref implied by the outline (:data:`OUTLINE_PTOT_REF`), or None when not known."""
    family = outline_family(outline)
    return OUTLINE_PTOT_REF.get(family) if family else None


def plausibility_warnings(package: str | None, ptot_ref: str | None, ic_max: float | None,
                          ptot: float | None) -> list[str]:
    """Values a record's outline cannot plausibly carry (a small-signal outline with over
    10 A or over 2 W in free air); plain sentences, common practice."""
    family = outline_family(package)
    if not family or OUTLINE_PTOT_REF.get(family) != "ambient":
        return []
    out = []
    if ic_max is not None and ic_max > SMALL_SIGNAL_LIMITS["ic_max"]:
        out.append(f"ic_max {format_quantity(ic_max, 'A')} is implausible for a {package} "
                   f"(small-signal outline; over {SMALL_SIGNAL_LIMITS['ic_max']:g} A, "
                   "common practice)")
    if ptot is not None and ptot > SMALL_SIGNAL_LIMITS["ptot"] and ptot_ref != "case":
        out.append(f"ptot {format_quantity(ptot, 'W')} in free air is implausible for a "
                   f"{package} (over {SMALL_SIGNAL_LIMITS['ptot']:g} W, common practice)")
    return out


def bare_warning(name: str, value: float) -> str | None:
    """The warning for a bare number with no column unit that is likely in a smaller unit."""
    limit = BARE_LIMITS.get(name)
    if limit is None or value <= limit:
        return None
    unit = FIELD_BY_NAME[name].unit
    return (f"{name}: {value:g} {unit}? if the column is in {BARE_HINT_UNITS[name]}, "
            f"use --unit {name}={BARE_HINT_UNITS[name]}")
