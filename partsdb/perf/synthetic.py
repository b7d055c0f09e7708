"""A synthetic transistor catalog of any size, for the benchmark and for load tests.

Every row is invented; a fixed seed gives the same catalog every time. The spreads follow the
shape of a real repair-shop catalog (common practice, not measured data): mostly small-signal
silicon, a band of drivers and power parts, a few Darlingtons and germanium parts; hFE windows,
fT, packages and pinouts per class. Designations are drawn in every scheme the decoder knows
(Pro Electron, JIS C 7012 ``2S`` names, JEDEC EIA-370 ``2N`` names, the older European ``O``
names) plus invented house numbers that no scheme explains. Each designation agrees with its
record (material letter, JIS polarity letter, Pro Electron power and RF letters), so the
importer's consistency checks stay quiet, and all are unique after normalisation.

The catalog is written as text cells like a hand-kept file: a share of the quantities carry
units and SI prefixes ("100mA", "45 V"), the rest are plain numbers in base units; some optional
cells are blank; some designations are typed in lower case or with a dash or space; some choice
cells use the accepted aliases ("NPN", "silicon", "free air").

Numbers are drawn column-wise with numpy; text is rendered in chunks so a 200,000-row file never
holds every cell as a Python string at once.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from partsdb.device import FIELD_NAMES
from partsdb.perf.synthetic_fets import FET_NUMBERS, JFET_SHARE, MOSFET_SHARE, add_fets

SEED = 7_301_955
"""The default seed: the same catalog on every machine."""

CHUNK_ROWS = 20_000

# Scheme codes, in the order of ``SCHEMES``.
PRO_ELECTRON, JIS, JEDEC, LEGACY, HOUSE = range(5)
SCHEMES = ("pro-electron", "jis", "jedec", "legacy-european", "unknown")

# Share of each scheme among silicon and germanium rows (invented; chosen so that every scheme
# is well represented and each name space stays well below saturation at 200,000 rows).
SILICON_SCHEME_SHARES = (0.14, 0.26, 0.12, 0.0, 0.48)
GERMANIUM_SCHEME_SHARES = (0.25, 0.15, 0.10, 0.20, 0.30)

# Invented house prefixes: two or three letters, never starting with A, B, C, D, R (Pro Electron
# material letters) or O (the older European names), so no scheme claims them.
HOUSE_PREFIXES = ("HX", "KTN", "MQ", "NVP", "PZ", "SXT", "TQ", "WB", "XH", "ZN", "EKV", "HPT",
                  "KQ", "MV", "NX", "PWT", "SQ", "TZ", "WX", "XT", "ZK", "EH", "HW", "MZ")
HOUSE_SUFFIXES = ("", "", "", "", "A", "B", "F", "H", "L", "P", "R", "T")
JIS_SUFFIXES = ("", "", "", "", "A", "Y", "GR", "BL", "O", "R", "E", "L")
JEDEC_MIL = ("", "", "", "", "", "", "", "", "", "", "", "", "", "", "", "", "JAN", "JANTX",
             "JANTXV", "JANS")
LETTERS = np.array(list("ABCDEFGHIJKLMNOPQRSTUVWXYZ"))

NOTES = (
    "matched pair needed in the phono stage",
    "label on the drawer faded; checked with the meter",
    "pulled from a scrapped amplifier; tested good",
    "bought as a bag of 50 at the swap meet",
    "use for the tuner's local oscillator",
    "runs hot in the output stage; needs mica washer",
    "customer's spare, do not use for other jobs",
    "low noise, keep for preamp repairs",
    "check hFE before fitting; batch varied",
    "house number printed on the reel",
)


@dataclass(frozen=True)
class DeviceClass:
    """One family of parts in the synthetic catalog, with the spreads of its fields."""

    name: str
    weight: float
    material: str
    kind: str
    vceo: tuple[float, ...]
    ic_max: tuple[float, ...]
    ptot: tuple[float, float]
    """Log-uniform range, W."""
    ptot_ref: str
    ft: tuple[float, float]
    """Log-uniform range, Hz."""
    hfe: tuple[tuple[float, float], ...]
    hfe_ic: tuple[float, ...]
    tj_max: tuple[float, ...]
    packages: tuple[str, ...]
    pinouts: tuple[str, ...]
    application: str
    pro_electron_letter: str
    """Pro Electron second letter (C, F, S small-signal; D, L, U power)."""
    high_frequency: bool
    """Whether a JIS name uses the high-frequency letter (2SA, 2SC) when fT allows."""
    vbe: tuple[float, float]
    vce_sat: tuple[float, float]


CLASSES: tuple[DeviceClass, ...] = (
    DeviceClass("small audio", 0.30, "si", "bjt", (20, 25, 30, 32, 40, 45, 50, 65, 80),
                (0.1, 0.15, 0.2, 0.5, 0.8), (0.25, 0.8), "ambient", (100e6, 350e6),
                ((110, 220), (200, 450), (420, 800), (100, 300), (60, 330), (40, 160)),
                (1e-3, 2e-3, 10e-3), (150,), ("TO-92", "TO-92", "SOT-23", "TO-18"),
                ("EBC", "CBE", "ECB"), "audio", "C", False, (0.6, 0.75), (0.1, 0.6)),
    DeviceClass("small switching", 0.14, "si", "bjt", (15, 25, 30, 40, 60), (0.2, 0.5, 0.6, 0.8, 1.0),
                (0.3, 0.8), "ambient", (150e6, 500e6), ((100, 300), (75, 300), (40, 120), (35, 100)),
                (10e-3, 150e-3), (150, 175), ("TO-92", "SOT-23", "TO-18"), ("EBC", "CBE", "EBC"),
                "switching", "S", True, (0.6, 0.75), (0.1, 0.4)),
    DeviceClass("small rf", 0.08, "si", "bjt", (12, 15, 20, 25, 30), (0.02, 0.025, 0.05, 0.1),
                (0.15, 0.5), "ambient", (600e6, 8e9), ((40, 250), (60, 200), (25, 150)),
                (5e-3, 10e-3), (150,), ("SOT-23", "TO-92", "TO-72"), ("BEC", "EBC", "ECB"), "rf",
                "F", True, (0.65, 0.8), (0.1, 0.4)),
    DeviceClass("driver", 0.12, "si", "bjt", (45, 60, 80, 100, 120, 160, 200, 250, 300),
                (0.5, 1.0, 1.5, 2.0, 3.0), (8.0, 25.0), "case", (10e6, 200e6),
                ((40, 250), (63, 160), (100, 250), (40, 160)), (0.15, 0.1, 0.5), (150,),
                ("TO-126", "TO-126", "TO-202"), ("ECB", "ECB", "BCE"), "audio", "D", False,
                (0.6, 0.8), (0.3, 0.8)),
    DeviceClass("power audio", 0.12, "si", "bjt", (60, 80, 100, 120, 140, 160, 200, 230, 250),
                (3, 4, 6, 8, 10, 12, 15, 16), (40.0, 200.0), "case", (2e6, 30e6),
                ((20, 70), (25, 100), (40, 160), (55, 160), (15, 60)), (0.5, 1.0, 2.0, 3.0, 4.0),
                (150,), ("TO-220", "TO-220", "TO-3P", "TO-3", "TO-247"), ("BCE", "BCE", "EBC"),
                "audio", "D", False, (0.8, 1.2), (0.5, 1.5)),
    DeviceClass("power switching", 0.08, "si", "bjt", (300, 400, 450, 600, 700, 800, 1500),
                (2, 4, 5, 8, 10, 12, 15), (40.0, 150.0), "case", (2e6, 20e6),
                ((10, 40), (8, 40), (5, 30), (15, 60)), (0.5, 1.0, 2.0, 5.0), (150,),
                ("TO-220", "TO-3P", "TO-247", "TO-3"), ("BCE",), "switching", "U", True,
                (0.8, 1.2), (0.5, 1.5)),
    DeviceClass("rf power", 0.02, "si", "bjt", (18, 20, 25, 30, 35, 36), (0.5, 1.0, 2.0, 4.0, 6.0),
                (15.0, 100.0), "case", (100e6, 1e9), ((10, 80), (20, 100), (15, 120)),
                (0.1, 0.25, 0.5), (200,), ("TO-39", "TO-220"), ("EBC", "BCE"), "rf", "L", True,
                (0.7, 0.9), (0.3, 1.0)),
    DeviceClass("darlington power", 0.05, "si", "darlington", (60, 80, 100, 120),
                (4, 5, 8, 10, 12), (50.0, 150.0), "case", (1e6, 20e6),
                ((750, 20000), (1000, 20000), (1000, 10000)), (3.0, 4.0, 5.0), (150,),
                ("TO-220", "TO-3", "TO-247"), ("BCE",), "switching", "U", False, (1.2, 2.5),
                (1.5, 4.0)),
    DeviceClass("darlington small", 0.02, "si", "darlington", (30, 40, 60, 80), (0.5, 0.8, 1.0),
                (0.5, 0.8), "ambient", (100e6, 250e6), ((5000, 50000), (10000, 70000), (4000, 40000)),
                (10e-3, 100e-3), (150,), ("TO-92",), ("EBC", "CBE"), "audio", "C", False,
                (1.2, 1.6), (0.8, 1.5)),
    DeviceClass("germanium small", 0.05, "ge", "bjt", (12, 15, 18, 20, 24, 30, 32),
                (0.01, 0.05, 0.1, 0.125, 0.15, 0.25), (0.05, 0.2), "ambient", (0.3e6, 20e6),
                ((30, 90), (50, 130), (60, 140), (25, 75), (70, 160)), (0.5e-3, 1e-3, 2e-3),
                (75, 85, 90), ("TO-1", "TO-5", "TO-18"), ("EBC", "ECB"), "audio", "C", False,
                (0.15, 0.35), (0.1, 0.5)),
    DeviceClass("germanium power", 0.02, "ge", "bjt", (20, 30, 32, 40, 60, 80), (3.0, 5.0, 10.0, 15.0),
                (10.0, 90.0), "case", (0.1e6, 1e6), ((20, 60), (30, 100), (40, 120)),
                (0.5, 1.0, 2.0), (90, 100), ("TO-3", "TO-66"), ("EBC",), "audio", "D", False,
                (0.2, 0.5), (0.2, 0.8)),
)

# Share of non-blank quantity cells written with units, and of blank optional cells, per field.
UNIT_SHARE = 0.3
BLANK_SHARE: dict[str, float] = {
    "vcbo": 0.10, "vebo": 0.15, "ptot": 0.03, "tj_max": 0.15, "hfe_min": 0.05, "hfe_max": 0.15,
    "hfe_ic": 0.20, "ft": 0.10, "vbe": 0.40, "vce_sat": 0.30, "icbo": 0.40, "package": 0.05,
    "pinout": 0.20, "application": 0.10,
}
UNITS: dict[str, str] = {"vceo": "V", "vcbo": "V", "vebo": "V", "ic_max": "A", "ptot": "W",
                         "tj_max": "°C", "hfe_ic": "A", "ft": "Hz", "vbe_on": "V", "vbe_ic": "A",
                         "vce_sat": "V", "icbo": "A"}
_PREFIXES = {-12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}


@dataclass
class Catalog:
    """The drawn catalog: per-row numbers (base units, NaN blank) and the designations."""

    designation: np.ndarray
    """Canonical (normalised) names."""
    written: np.ndarray
    """The names as typed in the file (some lower case, some with a dash or space)."""
    scheme: np.ndarray
    cls: np.ndarray
    polarity: np.ndarray
    numbers: dict[str, np.ndarray]
    text: dict[str, np.ndarray]
    fallback_names: int
    """Rows whose scheme's name space ran out and that got a house number instead."""

    def __len__(self) -> int:
        return int(self.designation.shape[0])


def _sig2(values: np.ndarray) -> np.ndarray:
    """Round to two significant figures (datasheet-like values)."""
    exp = np.floor(np.log10(values))
    scale = 10.0 ** (exp - 1)
    return np.round(values / scale) * scale


def _loguniform(rng: np.random.Generator, lo: float, hi: float, size: int) -> np.ndarray:
    return _sig2(np.exp(rng.uniform(np.log(lo), np.log(hi), size)))


def _pick(rng: np.random.Generator, choices: tuple[Any, ...], size: int) -> np.ndarray:
    return np.asarray(choices)[rng.integers(0, len(choices), size)]


def _pick_text(rng: np.random.Generator, choices: tuple[str, ...], size: int) -> np.ndarray:
    """Like :func:`_pick`, as an object array sharing the few string objects (8 bytes a cell)."""
    table = np.empty(len(choices), dtype=object)
    table[:] = choices
    return table[rng.integers(0, len(choices), size)]


def _numbered(prefix: np.ndarray, numbers: np.ndarray, suffix: np.ndarray,
              fmt: str = "%d") -> np.ndarray:
    return np.char.add(np.char.add(prefix.astype(str), np.char.mod(fmt, numbers)), suffix.astype(str))


def _names(rng: np.random.Generator, scheme: np.ndarray, cls: np.ndarray, polarity: np.ndarray,
           ft: np.ndarray) -> np.ndarray:
    """One candidate name per row, in the row's scheme, agreeing with the row's record."""
    n = scheme.shape[0]
    out = np.empty(n, dtype="<U16")
    material = np.array([c.material for c in CLASSES])[cls]

    rows = np.flatnonzero(scheme == PRO_ELECTRON)
    if rows.size:
        m = rows.size
        first = np.where(material[rows] == "ge", "A", "B")
        second = np.array([c.pro_electron_letter for c in CLASSES])[cls[rows]]
        # RF letters need fT >= 10 MHz (the consistency heuristic); germanium parts that fast
        # take F, the rest of their class C.
        fast = ft[rows] >= 10e6
        second = np.where((second == "C") & (material[rows] == "ge") & fast, "F", second)
        consumer = rng.random(m) < 0.6
        serial = np.where(consumer, np.char.mod("%03d", rng.integers(100, 1000, m)),
                          np.char.add(LETTERS[rng.integers(0, 26, m)],
                                      np.char.mod("%02d", rng.integers(0, 100, m))))
        suffix = _pick(rng, ("", "", "A", "B", "C"), m)
        out[rows] = np.char.add(np.char.add(np.char.add(first, second), serial), suffix)

    rows = np.flatnonzero(scheme == JIS)
    if rows.size:
        m = rows.size
        # JIS C 7012: A/B are PNP, C/D NPN; A and C high-frequency (needs fT >= 1 MHz here).
        hf = np.array([c.high_frequency for c in CLASSES])[cls[rows]] & ~(ft[rows] < 1e6)
        pnp = polarity[rows] == "pnp"
        letter = np.where(pnp, np.where(hf, "A", "B"), np.where(hf, "C", "D"))
        serial = np.where(rng.random(m) < 0.3, rng.integers(11, 1000, m), rng.integers(1000, 6000, m))
        out[rows] = _numbered(np.char.add("2S", letter), serial, _pick(rng, JIS_SUFFIXES, m))

    rows = np.flatnonzero(scheme == JEDEC)
    if rows.size:
        m = rows.size
        prefix = np.char.add(_pick(rng, JEDEC_MIL, m), "2N")
        out[rows] = _numbered(prefix, rng.integers(100, 8000, m), _pick(rng, ("", "", "A", "B", "C"), m))

    rows = np.flatnonzero(scheme == LEGACY)
    if rows.size:
        m = rows.size
        out[rows] = _numbered(np.full(m, "OC"), rng.integers(1, 2000, m),
                              _pick(rng, ("", "", "A", "B", "C", "D"), m))

    rows = np.flatnonzero(scheme == HOUSE)
    if rows.size:
        m = rows.size
        out[rows] = _numbered(_pick(rng, HOUSE_PREFIXES, m), rng.integers(10, 100_000, m),
                              _pick(rng, HOUSE_SUFFIXES, m))
    return out


def _unique_names(rng: np.random.Generator, scheme: np.ndarray, cls: np.ndarray,
                  polarity: np.ndarray, ft: np.ndarray) -> tuple[np.ndarray, int]:
    """Names unique after normalisation: redraw repeats, then fall back to numbered house names."""
    names = _names(rng, scheme, cls, polarity, ft)
    repeat = pd.Series(names).duplicated().to_numpy()
    taken = set(names[~repeat].tolist())
    rows = np.flatnonzero(repeat)
    # Only the repeats are redrawn, and checked against the names already taken; the loop runs
    # over those few rows, not the catalog.
    for _ in range(80):
        if not rows.size:
            break
        again = []
        for i, name in zip(rows.tolist(), _names(rng, scheme[rows], cls[rows], polarity[rows],
                                                ft[rows]).tolist(), strict=True):
            if name in taken:
                again.append(i)
            else:
                taken.add(name)
                names[i] = name
        rows = np.array(again, dtype=np.intp)
    # "QV" starts no scheme and no other house prefix; the row number makes each unique.
    names[rows] = np.char.add("QV", np.char.mod("%07d", rows))
    scheme[rows] = HOUSE
    return names, int(rows.size)


def draw_catalog(n: int, seed: int = SEED, mosfet_share: float = 0.0,
                 jfet_share: float = 0.0) -> Catalog:
    """Draw ``n`` devices (numbers and designations); same ``n`` and ``seed``, same catalog.

    With the shares above 0 that part of the silicon rows become MOSFETs and JFETs
    (:mod:`partsdb.perf.synthetic_fets`); the bench's catalog is drawn with
    :data:`MOSFET_SHARE` and :data:`JFET_SHARE`."""
    if n < 1:
        raise ValueError(f"n: {n!r} is not valid; expected 1 or more devices")
    rng = np.random.default_rng(seed)
    weights = np.array([c.weight for c in CLASSES])
    cls = rng.choice(len(CLASSES), size=n, p=weights / weights.sum())
    is_ge = np.array([c.material == "ge" for c in CLASSES])[cls]
    polarity = np.where(rng.random(n) < np.where(is_ge, 0.85, 0.4), "pnp", "npn")

    num: dict[str, np.ndarray] = {name: np.full(n, np.nan) for name in (
        "vceo", "vcbo", "vebo", "ic_max", "ptot", "tj_max", "hfe_min", "hfe_max", "hfe_ic", "ft",
        "vbe_on", "vbe_ic", "vce_sat", "icbo")}
    text: dict[str, np.ndarray] = {name: np.full(n, "", dtype=object) for name in (
        "kind", "material", "ptot_ref", "package", "pinout", "application")}
    for c, spec in enumerate(CLASSES):
        rows = np.flatnonzero(cls == c)
        m = rows.size
        if not m:
            continue
        num["vceo"][rows] = _pick(rng, spec.vceo, m)
        num["ic_max"][rows] = _pick(rng, spec.ic_max, m)
        num["ptot"][rows] = _loguniform(rng, *spec.ptot, m)
        num["ft"][rows] = _loguniform(rng, *spec.ft, m)
        window = rng.integers(0, len(spec.hfe), m)
        num["hfe_min"][rows] = np.array([w[0] for w in spec.hfe])[window]
        num["hfe_max"][rows] = np.array([w[1] for w in spec.hfe])[window]
        num["hfe_ic"][rows] = _pick(rng, spec.hfe_ic, m)
        num["tj_max"][rows] = _pick(rng, spec.tj_max, m)
        num["vbe_on"][rows] = np.round(rng.uniform(*spec.vbe, m), 2)
        num["vce_sat"][rows] = np.round(rng.uniform(*spec.vce_sat, m), 2)
        text["kind"][rows] = spec.kind
        text["material"][rows] = spec.material
        text["ptot_ref"][rows] = spec.ptot_ref
        text["package"][rows] = _pick_text(rng, spec.packages, m)
        text["pinout"][rows] = _pick_text(rng, spec.pinouts, m)
        text["application"][rows] = spec.application
    # Vcbo >= Vceo always (common practice: BVceo = BVcbo / (1 + hFE)^(1/n)).
    factor = _pick(rng, (1.0, 1.2, 1.25, 1.5, 1.6, 2.0), n)
    num["vcbo"] = np.maximum(num["vceo"], _sig2(num["vceo"] * factor))
    num["vebo"] = np.where(is_ge, _pick(rng, (6.0, 10.0, 12.0, 20.0, 25.0), n),
                           _pick(rng, (5.0, 6.0, 7.0, 8.0), n))
    num["vbe_ic"] = num["hfe_ic"].copy()
    num["icbo"] = np.where(is_ge, _loguniform(rng, 1e-6, 2e-4, n), _loguniform(rng, 1e-9, 1e-6, n))

    for name, share in BLANK_SHARE.items():
        blank = rng.random(n) < share
        if name == "vbe":  # Vbe(on) needs its test current: both go together
            num["vbe_on"][blank] = np.nan
            num["vbe_ic"][blank] = np.nan
        elif name in num:
            num[name][blank] = np.nan
        else:
            text[name][blank] = ""
    num["hfe_max"][np.isnan(num["hfe_min"])] = np.nan

    shares = np.where(is_ge[:, None], np.array(GERMANIUM_SCHEME_SHARES), np.array(SILICON_SCHEME_SHARES))
    scheme = (rng.random(n)[:, None] > np.cumsum(shares, axis=1)).sum(axis=1)
    names, fallback = _unique_names(rng, scheme, cls, polarity, num["ft"])
    polarity, names = add_fets(seed, n, num, text, polarity, names, mosfet_share, jfet_share)

    written = names.astype("<U18")
    lower = rng.random(n) < 0.05
    written[lower] = np.char.lower(names[lower])
    # Some typed with a separator after the first two characters ("BC-547B", "2S C1815").
    sep = (rng.random(n) < 0.05) & ~lower & ~np.char.startswith(names, "JAN")
    rows = np.flatnonzero(sep)
    glue = _pick(rng, ("-", " "), rows.size)
    written[rows] = np.char.add(np.char.add(names[rows].astype("<U2"), glue), _tail(names[rows]))
    return Catalog(names, written, scheme, cls, polarity, num, text, fallback)


def _tail(names: np.ndarray) -> np.ndarray:
    return np.array([s[2:] for s in names.tolist()], dtype="<U16")


def _render_quantity(rng: np.random.Generator, values: np.ndarray, unit: str) -> np.ndarray:
    """Text cells: blank for NaN, base-unit numbers, or (a share) with prefix and unit."""
    out = np.full(values.shape[0], "", dtype=object)
    known = ~np.isnan(values)
    plain = known.copy()
    if unit:
        styled = known & (rng.random(values.shape[0]) < UNIT_SHARE)
        plain &= ~styled
        rows = np.flatnonzero(styled)
        v = values[rows]
        if unit == "°C":
            exp3 = np.zeros(rows.size, dtype=int)
        else:
            exp3 = np.clip((np.floor(np.log10(v) / 3) * 3).astype(int), -12, 9)
        mant = np.char.mod("%.4g", v / 10.0 ** exp3)
        prefix = np.array([_PREFIXES[int(e)] for e in range(-12, 12, 3)])[(exp3 + 12) // 3]
        space = np.where(rng.random(rows.size) < 0.5, " ", "")
        out[rows] = np.char.add(np.char.add(np.char.add(mant, space), prefix), unit).astype(object)
    out[plain] = np.char.mod("%.6g", values[plain]).astype(object)
    return out


def _choice_text(rng: np.random.Generator, values: np.ndarray, aliases: dict[str, str],
                 upper_share: float) -> np.ndarray:
    out = values.astype(object)
    upper = rng.random(values.shape[0]) < upper_share
    out[upper] = np.char.upper(values[upper].astype(str)).astype(object)
    for canonical, alias in aliases.items():
        rows = np.flatnonzero((values == canonical) & (rng.random(values.shape[0]) < 0.05))
        out[rows] = alias
    return out


def catalog_chunks(catalog: Catalog, seed: int = SEED, chunk_rows: int = CHUNK_ROWS
                   ) -> Iterator[pd.DataFrame]:
    """The catalog as frames of text cells, ``chunk_rows`` at a time, columns in FIELDS order."""
    rng = np.random.default_rng(seed + 1)
    n = len(catalog)
    for start in range(0, n, chunk_rows):
        sl = slice(start, min(n, start + chunk_rows))
        m = sl.stop - sl.start
        cols: dict[str, Any] = {"designation": catalog.written[sl].astype(object)}
        cols["kind"] = _choice_text(rng, catalog.text["kind"][sl], {"darlington": "darl"}, 0.05)
        cols["polarity"] = _choice_text(rng, catalog.polarity[sl], {}, 0.3)
        cols["material"] = _choice_text(rng, catalog.text["material"][sl],
                                        {"si": "silicon", "ge": "germanium"}, 0.1)
        for name in ("vceo", "vcbo", "vebo", "ic_max", "ptot"):
            cols[name] = _render_quantity(rng, catalog.numbers[name][sl], UNITS[name])
        cols["ptot_ref"] = _choice_text(rng, catalog.text["ptot_ref"][sl], {"ambient": "free air"}, 0.0)
        cols["tj_max"] = _render_quantity(rng, catalog.numbers["tj_max"][sl], "°C")
        for name in ("hfe_min", "hfe_max"):
            cols[name] = _render_quantity(rng, catalog.numbers[name][sl], "")
        for name in ("hfe_ic", "ft", "vbe_on", "vbe_ic", "vce_sat", "icbo"):
            cols[name] = _render_quantity(rng, catalog.numbers[name][sl], UNITS[name])
        for name in ("package", "pinout", "application", "mode", "id_max_ref", "body_diode"):
            cols[name] = catalog.text[name][sl].astype(object)
        for name in FET_NUMBERS:
            cols[name] = _render_signed(rng, catalog.numbers[name][sl], FET_UNITS[name])
        is_ge = np.array([c.material == "ge" for c in CLASSES])[catalog.cls[sl]]
        obsolete = rng.random(m) < np.where(is_ge, 0.9, 0.15)
        cols["obsolete"] = np.where(obsolete, "yes", np.where(rng.random(m) < 0.5, "no", "")).astype(object)
        notes = np.full(m, "", dtype=object)
        has_note = np.flatnonzero(rng.random(m) < 0.08)
        notes[has_note] = _pick(rng, NOTES, has_note.size).astype(object)
        cols["notes"] = notes
        low = np.full(m, "", dtype=object)
        has_low = np.flatnonzero(rng.random(m) < 0.15)
        low[has_low] = rng.integers(1, 26, has_low.size).astype(str).astype(object)
        cols["low_stock"] = low
        cols["reorder_to"] = np.full(m, "", dtype=object)  # blank: twice the low-stock count
        blank = np.full(m, "", dtype=object)
        yield pd.DataFrame({name: cols.get(name, blank) for name in FIELD_NAMES})


def _render_signed(rng: np.random.Generator, values: np.ndarray, unit: str) -> np.ndarray:
    """:func:`_render_quantity` for a field that may be negative (a threshold or cut-off)."""
    out = _render_quantity(rng, np.abs(values), unit)
    negative = np.flatnonzero(values < 0)
    out[negative] = np.char.add("-", out[negative].astype(str)).astype(object)
    return out


FET_UNITS: dict[str, str] = {
    "vds": "V", "vgs_max": "V", "id_max": "A", "rds_on": "Ω", "rds_on_vgs": "V", "rds_on_id": "A",
    "vgs_th_min": "V", "vgs_th_max": "V", "qg": "C", "qgd": "C", "ciss": "F", "trr": "s",
    "vgs_off_min": "V", "vgs_off_max": "V", "idss_min": "A", "idss_max": "A", "yfs": "S",
    "yfs_id": "A", "en": "V/√Hz"}


def synthetic_frame(n: int, seed: int = SEED, mosfet_share: float = MOSFET_SHARE,
                    jfet_share: float = JFET_SHARE) -> pd.DataFrame:
    """The whole synthetic catalog as one frame of text cells (for small ``n``), with FETs."""
    catalog = draw_catalog(n, seed, mosfet_share, jfet_share)
    return pd.concat(list(catalog_chunks(catalog, seed)), ignore_index=True)


def write_catalog_csv(path: str | Path, n: int, seed: int = SEED,
                      on_rows: Any = None) -> Catalog:
    """Write the synthetic catalog of ``n`` rows (with FETs) as a CSV; ``on_rows(count)``
    reports progress."""
    catalog = draw_catalog(n, seed, MOSFET_SHARE, JFET_SHARE)
    with open(path, "w", encoding="utf-8", newline="") as fh:
        for i, frame in enumerate(catalog_chunks(catalog, seed)):
            frame.to_csv(fh, index=False, header=(i == 0), lineterminator="\n")
            if on_rows is not None:
                on_rows(len(frame))
    return catalog
