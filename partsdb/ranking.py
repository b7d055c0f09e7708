"""The substitution engine: rank the catalog's transistors as substitutes for a requirement.

Pure domain (numpy only). The catalog is held column-wise (:class:`CatalogColumns`); the hard
constraints (polarity, kind) are boolean masks, every check and score is an array operation over
the compatible rows, and the readable details (:class:`Check`, :class:`Flag`) are built only for
the rows returned, their sentences written when first read. :func:`rank` is the entry point; it
takes data already loaded.

Speed on large catalogs: a group's rows repeat few distinct values per check, so after its
first ranking each group keeps a table of its distinct value tuples per check and a code per
row (:func:`_group_scores`); a ranking then computes each check once per distinct tuple and
gathers score and verdict to the rows, bit for bit what the row-by-row :func:`_evaluate` gives
(tests compare both, and both with :func:`assess` on each device).

Checks, one per parameter and candidate (status ``ok`` / ``marginal`` / ``under-rated`` /
``unknown``):

* **Ratings** (vceo, vcbo, ic_max, ptot). Without a circuit stress the need is the original's
  rating and a lower rating is ``under-rated``. With a stress (``--vce-peak`` for vceo and vcbo,
  ``--ic-peak`` for ic_max, ``--power`` for ptot) the stress is the need, graded by the rule of
  :func:`partsdb.derating.grade`: at most factor x rating ``ok``, up to the rating
  ``marginal``, above it ``under-rated``; being below the original's rating is then only a flag.
  Ptot is compared as the power allowed at the ambient: linear derating to Tj max for a free-air
  rating, the thermal chain with the heat sink for a case rating (:mod:`partsdb.thermal`).
* **tj_max**. With a power stress the junction temperature is estimated, Tj = Ta + P x Rth, and
  graded against the policy's Tj limit (ok), Tj max (marginal), above (under-rated). Without
  one, a lower Tj max than the original's is under-rated.
* **ft**. The need is the original's f_T or, with ``--freq f``, hFE min x f: above f_beta the
  gain falls as f_T / f, so a stage needing gain G at f needs f_T >= G x f (gain-bandwidth,
  textbook: |hfe| = hfe0 / (1 + j f / f_beta), f_T = hfe0 x f_beta).
* **hfe**. Windows compared on a log scale: no overlap, or a minimum below half the needed
  minimum, is ``marginal`` (common practice); a minimum above three times the needed maximum is
  flagged as an instability risk (common practice).
* **package**, **pinout**, **material**: same is ``ok``; a different outline, lead order or
  material needs work at the bench and is ``marginal`` (with what to do in the note).
* A value missing on either side is ``unknown`` and lowers the candidate's confidence figure;
  an unknown Vceo, Ic max or Ptot against a known need makes the verdict at least marginal
  (the part cannot be confirmed), so missing data is never silently ok.

Sub-scores (0..1, monotone non-decreasing in the candidate's headroom on every rating):

* rating with a stress, headroom h = rating / stress, policy factor f:
  h < 1: 0.3 h; 1 <= h < 1/f: 0.3 + 0.4 (h - 1) / (1/f - 1); h >= 1/f: 0.7 + 0.3 min(1, h f - 1)
  (full marks at twice the policy's limit);
* rating without a stress, h = offered / original: h < 1: 0.3 h; else 0.7 + 0.3 min(1, h - 1);
* tj_max: the same on the temperature rise above the ambient (no stress: above 25 °C);
* hfe: 1 - (log gap between the windows + log shortfall of the minimum) / ln 10, clipped to 0..1;
* package / pinout / material: 1 same, 0.3 other outline, 0.5 other lead order, 0.2 ge <-> si,
  0.4 other material change;
* unknown offered value: 0.25 (rating) or 0.4 (fit); no need at all: 0.5 for every candidate;
* stock: 1 in the drawers, 0 not; history: 1 worked before, 0 failed before, 0.5 no record.

Score = 100 x sum(w_i s_i) / sum(w_i). Default weights (override in the config file's
``[weights]`` table, see :mod:`partsdb.services.config`):

    vceo 20, vcbo 5, ic_max 15, ptot 15, tj_max 5, ft 10, hfe 10,
    package 8, pinout 4, material 8, stock 10, history 10

Verdict: the worst check (``suitable`` / ``marginal`` / ``under-rated``; ``incompatible`` only
for rejected rows). Order: verdict class, then score (higher first), then the normalised
designation (the catalog's row order), so ties are broken deterministically.

Known limit of the model: Rth is derived from the rating, Rth = (Tj max - 25) / Ptot, so at the
same Ptot a higher Tj max implies a higher Rth; with a power stress a higher Tj max alone can
raise the estimated Tj (a fact of the rating model, not a scoring choice).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field, fields, replace
from functools import cached_property
from typing import Any

import numpy as np

from partsdb.cautions import SAFETY_CAUTIONS
from partsdb.derating import Policy
from partsdb.designations import normalize
from partsdb.device import DEFAULT_TJ_MAX, Device
from partsdb.errors import InvalidInput
from partsdb.thermal import (
    DEFAULT_CASE_TO_SINK,
    FREE_AIR_CASE_TO_AMBIENT,
    allowed_power,
    case_to_ambient,
    chain_power,
    derated_power,
    free_air_case_to_ambient,
    rth_from_rating,
    thermal_path,
)

POLARITIES: tuple[str, ...] = ("npn", "pnp")
KINDS: tuple[str, ...] = ("bjt", "darlington")
MATERIALS: tuple[str, ...] = ("si", "ge", "other")

OK, MARGINAL, UNDER, UNKNOWN = 0, 1, 2, 3
STATUS_NAMES: tuple[str, ...] = ("ok", "marginal", "under-rated", "unknown")
VERDICTS: tuple[str, ...] = ("suitable", "marginal", "under-rated", "incompatible")

PARAMETERS: tuple[str, ...] = ("vceo", "vcbo", "ic_max", "ptot", "tj_max", "ft", "hfe",
                               "package", "pinout", "material")
RATINGS: tuple[str, ...] = ("vceo", "vcbo", "ic_max", "ptot", "tj_max", "ft")
# An unknown value on these, against a known need, means the part cannot be confirmed.
PRIMARY: tuple[str, ...] = ("vceo", "ic_max", "ptot")

UNIT: dict[str, str] = {"vceo": "V", "vcbo": "V", "ic_max": "A", "ptot": "W", "tj_max": "°C",
                        "ft": "Hz", "hfe": "", "package": "", "pinout": "", "material": ""}
LABEL: dict[str, str] = {"vceo": "Vceo", "vcbo": "Vcbo", "ic_max": "Ic max", "ptot": "Ptot",
                         "tj_max": "Tj max", "ft": "fT", "hfe": "hFE", "package": "package",
                         "pinout": "pinout", "material": "material"}

# hFE thresholds (common practice): a minimum below half the needed minimum is "well below";
# a minimum above three times the needed maximum is "much higher gain".
HFE_LOW_FACTOR = 2.0
HFE_HIGH_FACTOR = 3.0
# A part more than ten times faster than needed may oscillate (common practice).
FT_FAST_FACTOR = 10.0

SUB_UNKNOWN_RATING = 0.25
SUB_UNKNOWN_FIT = 0.4
SUB_NO_NEED = 0.5


class SpecError(InvalidInput):
    """A requirement, stress or weight that cannot be used; the message names field and value."""


# ----------------------------------------------------------------------------- inputs

def outline_key(package: str | None) -> str | None:
    """Outline compared without case, spaces, dashes or dots: "to-92" == "TO92"."""
    if not package:
        return None
    key = "".join(ch for ch in package.upper() if ch not in " -._")
    return key or None


def _check_positive(name: str, value: float | None) -> None:
    if value is None:
        return
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value) \
            or value <= 0:
        raise SpecError(f"{name}: {value!r} is not valid; expected a positive number")


@dataclass(frozen=True)
class Requirement:
    """What a substitute must offer: the original's record or a spec given directly (SI units)."""

    polarity: str
    kind: str = "bjt"
    material: str | None = None
    vceo: float | None = None
    vcbo: float | None = None
    ic_max: float | None = None
    ptot: float | None = None
    ptot_ref: str | None = None
    tj_max: float | None = None
    hfe_min: float | None = None
    hfe_max: float | None = None
    ft: float | None = None
    package: str | None = None
    pinout: str | None = None
    designation: str | None = None
    """The original part, when known (it is excluded from its own list)."""
    source: str = "given"
    """stored (the original's record), given (options only) or mixed (record + overrides)."""

    def __post_init__(self) -> None:
        if self.polarity not in POLARITIES:
            raise SpecError(f"polarity: {self.polarity!r} is not valid; expected npn or pnp")
        if self.kind not in KINDS:
            raise SpecError(f"kind: {self.kind!r} is not valid; expected bjt or darlington")
        if self.material is not None and self.material not in MATERIALS:
            raise SpecError(f"material: {self.material!r} is not valid; expected si, ge or other")
        if self.ptot_ref is not None and self.ptot_ref not in ("ambient", "case"):
            raise SpecError(f"ptot_ref: {self.ptot_ref!r} is not valid; expected ambient or case")
        for name in ("vceo", "vcbo", "ic_max", "ptot", "hfe_min", "hfe_max", "ft"):
            _check_positive(name, getattr(self, name))
        if self.tj_max is not None and not (isinstance(self.tj_max, int | float)
                                            and math.isfinite(self.tj_max) and self.tj_max > 25):
            raise SpecError(f"tj_max: {self.tj_max!r} is not valid; expected a temperature above "
                            "25 °C")
        if self.hfe_min is not None and self.hfe_max is not None and self.hfe_min > self.hfe_max:
            raise SpecError(f"hfe: {self.hfe_min:g}..{self.hfe_max:g} is not valid; expected the "
                            "low end first, such as 60..180")
        if self.pinout is not None:
            pin = self.pinout.upper().replace("-", "").replace(" ", "")
            if len(pin) != 3 or sorted(pin) != ["B", "C", "E"]:
                raise SpecError(f"pinout: {self.pinout!r} is not valid; expected the three "
                                "letters E, B, C in lead order, such as EBC")
            object.__setattr__(self, "pinout", pin)
        if self.source not in ("stored", "given", "mixed"):
            raise SpecError(f"source: {self.source!r}; expected stored, given or mixed")

    @property
    def key(self) -> str | None:
        return normalize(self.designation) if self.designation else None

    @classmethod
    def from_device(cls, device: Device) -> Requirement:
        """Like-for-like: the original's own record is the requirement."""
        return cls(polarity=device.polarity, kind=device.kind, material=device.material,
                   vceo=device.vceo, vcbo=device.vcbo, ic_max=device.ic_max, ptot=device.ptot,
                   ptot_ref=device.ptot_ref, tj_max=device.tj_max, hfe_min=device.hfe_min,
                   hfe_max=device.hfe_max, ft=device.ft, package=device.package,
                   pinout=device.pinout, designation=device.designation, source="stored")

    def overridden(self, **given: Any) -> Requirement:
        """This requirement with the given (non-None) values replacing the stored ones."""
        changes = {k: v for k, v in given.items() if v is not None}
        unknown = set(changes) - {f.name for f in fields(self)}
        if unknown:
            raise SpecError(f"unknown requirement field(s): {', '.join(sorted(unknown))}")
        if not changes:
            return self
        # A window is given as a whole: --hfe 60..180 replaces both ends.
        source = "mixed" if self.source in ("stored", "mixed") else "given"
        return replace(self, **changes, source=source)

    def to_json(self) -> dict[str, Any]:
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class Stress:
    """What the circuit does to the part (None: not given). SI units, temperatures in °C."""

    vce_peak: float | None = None
    ic_peak: float | None = None
    power: float | None = None
    """Dissipation in the part, W."""
    ambient: float = 25.0
    freq: float | None = None
    """Highest signal frequency the stage must amplify, Hz."""
    heatsink: float | None = None
    """Sink-to-ambient thermal resistance for case-rated parts, K/W (None: no sink)."""

    def __post_init__(self) -> None:
        for name in ("vce_peak", "ic_peak", "power", "freq"):
            _check_positive(name, getattr(self, name))
        if isinstance(self.ambient, bool) or not isinstance(self.ambient, int | float) \
                or not math.isfinite(self.ambient) or not -80 <= self.ambient <= 250:
            raise SpecError(f"ambient: {self.ambient!r} is not valid; expected a temperature in °C "
                            "between -80 and 250")
        if self.heatsink is not None and not (isinstance(self.heatsink, int | float)
                                              and math.isfinite(self.heatsink)
                                              and self.heatsink >= 0):
            raise SpecError(f"heatsink: {self.heatsink!r} is not valid; expected a thermal "
                            "resistance in K/W, 0 or more")

    @property
    def given(self) -> bool:
        return any(v is not None for v in (self.vce_peak, self.ic_peak, self.power, self.freq))

    def to_json(self) -> dict[str, Any]:
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class Weights:
    """Relative weight of each criterion in the score (>= 0; at least one above 0)."""

    vceo: float = 20.0
    vcbo: float = 5.0
    ic_max: float = 15.0
    ptot: float = 15.0
    tj_max: float = 5.0
    ft: float = 10.0
    hfe: float = 10.0
    package: float = 8.0
    pinout: float = 4.0
    material: float = 8.0
    stock: float = 10.0
    history: float = 10.0

    def __post_init__(self) -> None:
        for f in fields(self):
            v = getattr(self, f.name)
            if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v) \
                    or v < 0:
                raise SpecError(f"weights.{f.name}: {v!r} is not valid; expected a number >= 0")
        if self.total() <= 0:
            raise SpecError("weights: every weight is 0; expected at least one above 0")

    def total(self) -> float:
        return self._total

    def as_dict(self) -> dict[str, float]:
        return dict(self._by_name)

    @cached_property
    def _by_name(self) -> dict[str, float]:
        return {f.name: float(getattr(self, f.name)) for f in fields(self)}

    @cached_property
    def _total(self) -> float:
        return float(sum(getattr(self, f.name) for f in fields(self)))

    @classmethod
    def from_mapping(cls, data: Mapping[str, Any], where: str = "weights") -> Weights:
        known = {f.name for f in fields(cls)}
        unknown = sorted(set(data) - known)
        if unknown:
            raise SpecError(f"{where}: unknown key(s) {', '.join(unknown)}; known keys are "
                            + ", ".join(sorted(known)))
        return cls(**dict(data))


DEFAULT_WEIGHTS = Weights()


@dataclass(frozen=True)
class PastSwaps:
    """What the swap log says about one substitute for this original."""

    worked: int = 0
    failed: int = 0
    jobs: tuple[str, ...] = ()


# ----------------------------------------------------------------------------- catalog

def _codes(values: Iterable[str | None], table: Sequence[str]) -> np.ndarray:
    lookup = {name: i for i, name in enumerate(table)}
    return np.fromiter((lookup.get(v, -1) if v is not None else -1 for v in values),
                       dtype=np.int8)


def _floats(values: Iterable[float | None], n: int) -> np.ndarray:
    return np.fromiter((np.nan if v is None else v for v in values), dtype=float, count=n)


@dataclass(eq=False)
class CatalogColumns:
    """The catalog as columns, one row per device (any row order).

    Codes index :data:`POLARITIES`, :data:`KINDS`, :data:`MATERIALS`; ``package`` and ``pinout``
    index ``packages`` / ``pinouts`` (-1 unknown). Missing numbers are NaN. Derived columns and
    the per-(polarity, kind) groups are computed on first use and kept with the object, so keep
    one instance per catalog version (the service caches it).
    """

    designation: np.ndarray
    key: np.ndarray
    polarity: np.ndarray
    kind: np.ndarray
    material: np.ndarray
    vceo: np.ndarray
    vcbo: np.ndarray
    ic_max: np.ndarray
    ptot: np.ndarray
    case_rated: np.ndarray
    """True when Ptot is a case rating (``ptot_ref == "case"``)."""
    tj_max: np.ndarray
    hfe_min: np.ndarray
    hfe_max: np.ndarray
    ft: np.ndarray
    package: np.ndarray
    pinout: np.ndarray
    packages: tuple[str, ...] = ()
    """Outline display names by code (the first spelling seen)."""
    pinouts: tuple[str, ...] = ()
    _groups: dict[tuple[int, int], tuple[np.ndarray, CatalogColumns]] = field(
        default_factory=dict, repr=False)
    _memo: dict[Any, Any] = field(default_factory=dict, repr=False)
    """Tables derived from these rows for the ranking (see :func:`_group_blocks`)."""

    @property
    def size(self) -> int:
        return int(self.polarity.shape[0])

    @classmethod
    def from_values(cls, designation: Sequence[str], key: Sequence[str] | None,
                    polarity: Sequence[str], kind: Sequence[str], material: Sequence[str | None],
                    numbers: Mapping[str, Any], ptot_ref: Sequence[str | None],
                    package: Sequence[str | None], pinout: Sequence[str | None],
                    sort: bool = True) -> CatalogColumns:
        """Build from plain sequences (``numbers``: vceo, vcbo, ic_max, ptot, tj_max, hfe_min,
        hfe_max, ft as arrays or sequences with None/NaN for missing)."""
        n = len(designation)
        keys = list(key) if key is not None else [normalize(d) for d in designation]
        order: np.ndarray | None = None
        if sort and any(keys[i] > keys[i + 1] for i in range(n - 1)):
            # Sorted by key only so that tables and tests read in a stable order.
            order = np.array(sorted(range(n), key=keys.__getitem__), dtype=np.intp)

        def arr(values: Any, dtype: Any = object) -> np.ndarray:
            a = np.asarray(values, dtype=dtype) if not isinstance(values, np.ndarray) else values
            return a[order] if order is not None else a

        pkg_names: dict[str, str] = {}
        pkg_codes: dict[str, int] = {}
        pkg_list = []
        for p in package:
            k = outline_key(p)
            if k is not None and k not in pkg_codes:
                pkg_codes[k] = len(pkg_codes)
                pkg_names[k] = str(p)
            pkg_list.append(pkg_codes.get(k, -1) if k is not None else -1)
        pins: dict[str, int] = {}
        pin_list = []
        for p in pinout:
            if p:
                pins.setdefault(p, len(pins))
                pin_list.append(pins[p])
            else:
                pin_list.append(-1)
        num = {name: arr(_floats(numbers[name], n) if not isinstance(numbers[name], np.ndarray)
                         else numbers[name].astype(float))
               for name in ("vceo", "vcbo", "ic_max", "ptot", "tj_max", "hfe_min", "hfe_max",
                            "ft")}
        return cls(
            designation=arr(list(designation)), key=arr(keys),
            polarity=arr(_codes(polarity, POLARITIES)), kind=arr(_codes(kind, KINDS)),
            material=arr(_codes(material, MATERIALS)),
            case_rated=arr(np.fromiter((r == "case" for r in ptot_ref), dtype=bool, count=n)),
            package=arr(np.array(pkg_list, dtype=np.int32)),
            pinout=arr(np.array(pin_list, dtype=np.int16)),
            packages=tuple(pkg_names[k] for k in pkg_codes), pinouts=tuple(pins), **num)

    @classmethod
    def from_devices(cls, devices: Sequence[Device]) -> CatalogColumns:
        def col(name: str) -> list[Any]:
            return [getattr(d, name) for d in devices]

        return cls.from_values(col("designation"), [d.key for d in devices], col("polarity"),
                               col("kind"), col("material"),
                               {name: col(name) for name in ("vceo", "vcbo", "ic_max", "ptot",
                                                             "tj_max", "hfe_min", "hfe_max",
                                                             "ft")},
                               col("ptot_ref"), col("package"), col("pinout"))

    def take(self, rows: np.ndarray) -> CatalogColumns:
        """The given rows as a catalog of their own (same outline and pinout tables)."""
        view = CatalogColumns(
            designation=self.designation[rows], key=self.key[rows],
            polarity=self.polarity[rows], kind=self.kind[rows], material=self.material[rows],
            vceo=self.vceo[rows], vcbo=self.vcbo[rows], ic_max=self.ic_max[rows],
            ptot=self.ptot[rows], case_rated=self.case_rated[rows], tj_max=self.tj_max[rows],
            hfe_min=self.hfe_min[rows], hfe_max=self.hfe_max[rows], ft=self.ft[rows],
            package=self.package[rows], pinout=self.pinout[rows], packages=self.packages,
            pinouts=self.pinouts)
        # The tie-break order stays the whole catalog's when it is known (cached_property lives
        # in __dict__); otherwise the view ranks its own keys, in the same relative order.
        if "key_rank" in self.__dict__:
            view.__dict__["key_rank"] = self.key_rank[rows]
        return view

    def group(self, polarity: str, kind: str) -> tuple[np.ndarray, CatalogColumns]:
        """(rows, their columns) of one polarity and kind: the hard constraints, kept.

        Gathering a dozen columns costs more than every check together, so each group is
        gathered once per catalog and reused by every ranking.
        """
        code = (POLARITIES.index(polarity), KINDS.index(kind))
        hit = self._groups.get(code)
        if hit is None:
            rows = np.flatnonzero((self.polarity == code[0]) & (self.kind == code[1]))
            # A catalog read as one group already is that group: no copy.
            hit = (rows, self if rows.shape[0] == self.size else self.take(rows))
            self._groups[code] = hit
        return hit

    def rejected(self, polarity: str, kind: str) -> np.ndarray:
        code = (POLARITIES.index(polarity), KINDS.index(kind))
        return np.flatnonzero((self.polarity != code[0]) | (self.kind != code[1]))

    # Derived columns, computed once per catalog and reused by every ranking.
    @cached_property
    def index(self) -> dict[str, int]:
        """Normalised key -> row."""
        return {k: i for i, k in enumerate(self.key.tolist())}

    def index_of(self, designation: str | None) -> int | None:
        return None if not designation else self.index.get(normalize(designation))

    @cached_property
    def key_rank(self) -> np.ndarray:
        """Position of each row in normalised-designation order (the tie-break)."""
        order = np.argsort(np.array(self.key.tolist(), dtype=str), kind="stable")
        out = np.empty(self.size, dtype=np.int64)
        out[order] = np.arange(self.size)
        return out

    @cached_property
    def tj_effective(self) -> np.ndarray:
        """Tj max, or the material's default where the record has none (flagged as assumed)."""
        defaults = np.array([DEFAULT_TJ_MAX["si"], DEFAULT_TJ_MAX["ge"], DEFAULT_TJ_MAX["other"],
                             150.0])
        return np.where(np.isnan(self.tj_max), defaults[self.material], self.tj_max)

    @cached_property
    def free_air(self) -> np.ndarray:
        """Case-to-ambient K/W of each row's outline standing in free air (for case ratings)."""
        table = np.array([free_air_case_to_ambient(p)[0] for p in self.packages]
                         + [free_air_case_to_ambient(None)[0]])
        return table[self.package]

    @cached_property
    def rating_thermal(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray,
                                      np.ndarray]:
        """What the thermal checks read of the recorded ratings alone: Rth junction-to-reference
        of every row (from its Ptot and effective Tj max), then the case-rated rows with their
        Ptot, Tj max, that Rth and their outline's free-air case-to-ambient figure."""
        rth = np.asarray(rth_from_rating(self.ptot, self.tj_effective), dtype=float)
        case = np.flatnonzero(self.case_rated)
        return (rth, case, self.ptot[case], self.tj_effective[case], rth[case],
                self.free_air[case])

    @cached_property
    def case_free_air(self) -> np.ndarray:
        """:attr:`free_air` where Ptot is a case rating, NaN elsewhere: all the thermal checks
        read of the outline, so rows differing only in it share their distinct tuple."""
        return np.where(self.case_rated, self.free_air, np.nan)

    @cached_property
    def log_hfe(self) -> tuple[np.ndarray, np.ndarray]:
        lo = self.hfe_min
        hi = np.where(np.isnan(self.hfe_max), lo, self.hfe_max)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.log(lo), np.log(hi)

    def devices_at(self, rows: np.ndarray) -> list[dict[str, Any]]:
        """:meth:`device_at` of each of ``rows``, read column by column (the same values)."""
        rows = np.asarray(rows, dtype=np.intp).reshape(-1)

        def names(codes: np.ndarray, table: Sequence[str]) -> list[str | None]:
            n = len(table)
            return [table[c] if 0 <= c < n else None for c in codes[rows].tolist()]

        columns = [self.designation[rows].tolist(), self.key[rows].tolist(),
                   names(self.polarity, POLARITIES), names(self.kind, KINDS),
                   names(self.material, MATERIALS),
                   *([None if v != v else v for v in getattr(self, n)[rows].astype(float).tolist()]
                     for n in _DEVICE_NUMBERS),
                   ["case" if c else "ambient" for c in self.case_rated[rows].tolist()],
                   names(self.package, self.packages), names(self.pinout, self.pinouts)]
        return [dict(zip(_DEVICE_KEYS, values, strict=True)) for values in zip(*columns, strict=True)]

    def device_at(self, i: int) -> dict[str, Any]:
        """The row as plain values (for details and reports)."""
        return {
            "designation": str(self.designation[i]), "key": str(self.key[i]),
            "polarity": _name(POLARITIES, self.polarity[i]), "kind": _name(KINDS, self.kind[i]),
            "material": _name(MATERIALS, self.material[i]),
            **{n: _num(getattr(self, n)[i]) for n in _DEVICE_NUMBERS},
            "ptot_ref": "case" if self.case_rated[i] else "ambient",
            "package": self.packages[self.package[i]] if self.package[i] >= 0 else None,
            "pinout": self.pinouts[self.pinout[i]] if self.pinout[i] >= 0 else None,
        }


_DEVICE_NUMBERS = ("vceo", "vcbo", "ic_max", "ptot", "tj_max", "hfe_min", "hfe_max", "ft")
_DEVICE_KEYS = ("designation", "key", "polarity", "kind", "material", *_DEVICE_NUMBERS,
                "ptot_ref", "package", "pinout")
"""The keys of :meth:`CatalogColumns.device_at`, in its order."""


def _name(table: Sequence[str], code: Any) -> str | None:
    c = int(code)
    return table[c] if 0 <= c < len(table) else None


def _num(value: Any) -> float | None:
    v = float(value)
    return None if math.isnan(v) else v


# ----------------------------------------------------------------------------- grading

def grade_codes(stress: Any, rating: Any, factor: Any) -> np.ndarray:
    """:func:`partsdb.derating.grade` as status codes (OK, MARGINAL, UNDER, UNKNOWN).

    The same comparisons (ok when stress <= factor x rating, marginal when stress <= rating,
    over otherwise, unknown on NaN) without building string arrays, which cost about 10 ms per
    100,000 rows; a test checks both agree element by element.
    """
    r = np.asarray(rating, dtype=float)
    if isinstance(stress, float) and not math.isnan(stress):
        # One stress for every row (a ranking): the same comparisons, fewer array calls.
        out = np.full(r.shape, UNDER, dtype=np.int8)
        out[stress <= r] = MARGINAL
        out[stress <= factor * r] = OK
        out[np.isnan(r)] = UNKNOWN
        return out
    s = np.asarray(stress, dtype=float)
    out = np.full(np.broadcast(s, r).shape, UNDER, dtype=np.int8)
    out[s <= r] = MARGINAL
    out[s <= factor * r] = OK
    out[np.isnan(s) | np.isnan(r)] = UNKNOWN
    return out


@functools.lru_cache(maxsize=64)
def _segments(xs: tuple[float, ...], ys: tuple[float, ...]
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Break points, and per segment index (as ``searchsorted(xs, h, "right")`` numbers them)
    its slope, start and start value; the last index is the flat part from the last point."""
    xs_a = np.array(xs, dtype=float)
    slope = [0.0] + [(ys[j + 1] - ys[j]) / (xs[j + 1] - xs[j]) for j in range(len(xs) - 1)]
    return xs_a, np.array([*slope, 0.0]), np.array([xs[0], *xs]), np.array([ys[0], *ys])


def _piecewise(h: np.ndarray, xs: Sequence[float], ys: Sequence[float]) -> np.ndarray:
    """The broken line through (xs, ys), flat outside, as closed-form array arithmetic.

    Bit for bit what ``np.interp(h, xs, ys)`` returns (numpy's own formula per segment:
    slope x (h - x_j) + y_j with slope = (y_j+1 - y_j) / (x_j+1 - x_j); y_j at a break point;
    NaN stays NaN): h is clipped to the line's ends, each element's segment found by one
    binary search over the break points, and the formula taken with that segment's values.
    A test checks both agree.
    """
    xs_a, slope, x0, y0 = _segments(tuple(xs), tuple(ys))
    h = np.clip(np.asarray(h, dtype=float), xs_a[0], xs_a[-1])  # NaN stays NaN
    seg = np.searchsorted(xs_a, h, side="right")  # NaN sorts last: the flat end, then NaN
    out = slope.take(seg)
    out *= h - x0.take(seg)
    out += y0.take(seg)
    return out


def headroom_score_stressed(h: np.ndarray, factor: Any) -> np.ndarray:
    """Sub-score of headroom h = rating / stress under a policy factor (see module docstring).

    Continuous and piecewise linear in h: 0 at 0, 0.3 at the rating, 0.7 at the policy's limit
    (h = 1/f), 1.0 at twice the limit.
    """
    if np.ndim(factor) == 0:
        inv = 1.0 / float(factor)
        if inv > 1.0:
            return _piecewise(h, (0.0, 1.0, inv, 2.0 * inv), (0.0, 0.3, 0.7, 1.0))
        return headroom_score_plain(h)
    inv = 1.0 / np.asarray(factor, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mid = 0.3 + 0.4 * np.where(inv > 1, (h - 1.0) / (inv - 1.0), 1.0)
    # (clips as two ufuncs: the same values, NaN kept, cheaper per call than np.clip)
    top = 0.7 + 0.3 * np.minimum(np.maximum(h / inv - 1.0, 0.0), 1.0)
    return np.where(h < 1.0, 0.3 * np.minimum(np.maximum(h, 0.0), 1.0),
                    np.where(h < inv, mid, top))


def headroom_score_plain(h: np.ndarray) -> np.ndarray:
    """Sub-score of headroom h = offered / original's rating (no stress).

    0.3 h below the rating, then a step to 0.7 at the rating and 0.3 more up to twice it.
    """
    out = _piecewise(h, (0.0, 1.0, 2.0), (0.0, 0.3, 0.6))
    out[h >= 1.0] += 0.4
    return out


@dataclass
class _Column:
    """One check over the evaluated rows (arrays aligned with the row selection)."""

    need: Any
    """Scalar or array (NaN: no need)."""
    offered: np.ndarray
    status: np.ndarray
    sub: np.ndarray
    ratio: np.ndarray | None = None
    basis: str = ""
    """How the need was set (for notes): rating, stress, freq, ..."""


def _none_array(n: int) -> np.ndarray:
    return np.full(n, np.nan)


def _rating_column(offered: np.ndarray, original: float | None, stress: float | None,
                   factor: float) -> _Column:
    n = offered.shape[0]
    with np.errstate(invalid="ignore", divide="ignore"):
        if stress is not None:
            h = offered / stress
            status = grade_codes(stress, offered, factor)
            sub = headroom_score_stressed(h, factor)
            basis = "stress"
            need: float = stress
        elif original is not None:
            h = offered / original
            status = np.where(offered >= original, OK, UNDER).astype(np.int8)
            sub = headroom_score_plain(h)
            basis = "original"
            need = original
        else:
            return _Column(np.nan, offered, np.full(n, UNKNOWN, np.int8), np.full(n, SUB_NO_NEED),
                           None, "none")
    unknown = np.isnan(offered)
    status[unknown] = UNKNOWN
    sub = np.where(unknown, SUB_UNKNOWN_RATING, sub)
    return _Column(need, offered, status, sub, h, basis)


@dataclass
class _Evaluation:
    rows: np.ndarray
    columns: dict[str, _Column]
    stock: np.ndarray
    history: np.ndarray
    score: np.ndarray
    verdict: np.ndarray
    allowed_power: np.ndarray
    tj_estimate: np.ndarray | None


def _requirement_power(req: Requirement, stress: Stress) -> tuple[float | None, float | None]:
    """The original's allowed power at the ambient in the same mounting, and its Tj max used."""
    if req.ptot is None:
        return None, None
    tj = req.tj_max if req.tj_max is not None else DEFAULT_TJ_MAX.get(req.material or "si", 150.0)
    ref = req.ptot_ref or "ambient"
    free_air, _ = free_air_case_to_ambient(req.package)
    rth = thermal_path(req.ptot, tj, ref, stress.heatsink, DEFAULT_CASE_TO_SINK, free_air)
    return float(allowed_power(req.ptot, tj, ref, stress.ambient, rth)), tj


_VERDICT_OF = np.array([0, 1, 2, 0], dtype=np.int8)
"""Verdict contribution of a status code: ok 0, marginal 1, under-rated 2, unknown 0."""


def _columns(cat: CatalogColumns, req: Requirement, stress: Stress, policy: Policy,
             names: Sequence[str] = PARAMETERS
             ) -> tuple[dict[str, _Column], np.ndarray | None, np.ndarray | None]:
    """The checks ``names`` over every row of ``cat``: (columns, allowed power, Tj estimate).

    Each check depends only on its own row, so the same function serves the rows returned
    (details) and the distinct value tuples of a large group (:func:`_group_scores`).
    """
    n = cat.size
    cols: dict[str, _Column] = {}
    if "vceo" in names:
        cols["vceo"] = _rating_column(cat.vceo, req.vceo, stress.vce_peak, policy.voltage)
    if "vcbo" in names:
        # Vcb is Vce minus Vbe: the Vce peak bounds it, so it is the stress on Vcbo too.
        cols["vcbo"] = _rating_column(cat.vcbo, req.vcbo, stress.vce_peak, policy.voltage)
    if "ic_max" in names:
        cols["ic_max"] = _rating_column(cat.ic_max, req.ic_max, stress.ic_peak, policy.current)

    allowed: np.ndarray | None = None
    tj_est: np.ndarray | None = None
    if "ptot" in names or "tj_max" in names:
        # Power allowed at the ambient in this mounting: free-air ratings derate linearly, case
        # ratings go through Rth j-c + c-s + s-a (thermal.py); the two groups are computed apart
        # so the reference is a scalar, not a string array.
        # (thermal_path and allowed_power, taken apart so the parts that read only the
        # ratings are computed once per catalog: CatalogColumns.rating_thermal)
        rth, case, ptot_c, tj_c, rth_c, free_air_c = cat.rating_thermal
        allowed = np.asarray(derated_power(cat.ptot, cat.tj_effective, stress.ambient),
                             dtype=float)
        if case.shape[0]:
            rc = rth_c + case_to_ambient(stress.heatsink, DEFAULT_CASE_TO_SINK, free_air_c)
            rth = rth.copy()
            rth[case] = rc
            allowed[case] = chain_power(ptot_c, tj_c, stress.ambient, rc)
        req_power, _ = _requirement_power(req, stress)
        cols["ptot"] = _rating_column(allowed, req_power, stress.power, policy.power)

        tj = cat.tj_max
        if stress.power is not None:
            ta = stress.ambient
            tj_est = ta + stress.power * rth
            limit = np.asarray(policy.tj_limit(tj), dtype=float)
            status = np.full(n, UNDER, np.int8)
            status[tj_est <= tj] = MARGINAL
            status[tj_est <= limit] = OK
            with np.errstate(invalid="ignore", divide="ignore"):
                h = (tj - ta) / (tj_est - ta)
                factor = np.minimum(np.maximum((limit - ta) / (tj - ta), 1e-6), 1.0)
                sub = headroom_score_stressed(h, factor)
            unknown = np.isnan(tj) | np.isnan(tj_est)
            status[unknown] = UNKNOWN
            cols["tj_max"] = _Column(tj_est, tj, status,
                                     np.where(unknown, SUB_UNKNOWN_RATING, sub), h, "stress")
        elif req.tj_max is not None:
            col = _rating_column(tj - 25.0, req.tj_max - 25.0, None, 1.0)
            col.need, col.offered = req.tj_max, tj
            cols["tj_max"] = col
        else:
            cols["tj_max"] = _Column(np.nan, tj, np.full(n, UNKNOWN, np.int8),
                                     np.full(n, SUB_NO_NEED), None, "none")

    if "ft" in names:
        ft_need: float | None
        if stress.freq is not None and req.hfe_min is not None:
            ft_need, basis = req.hfe_min * stress.freq, "gain-bandwidth"
        else:
            ft_need, basis = req.ft, "original"
        col = _rating_column(cat.ft, ft_need, None, 1.0)
        if col.basis != "none":
            col.basis = basis
        cols["ft"] = col

    if "hfe" in names:
        cols["hfe"] = _hfe_column(cat, req)
    if "package" in names:
        cols["package"] = _fit_column(cat.package, _package_code(cat, req.package), 0.3)
    if "pinout" in names:
        cols["pinout"] = _fit_column(cat.pinout, _pinout_code(cat, req.pinout), 0.5)
    if "material" in names:
        mat_need = MATERIALS.index(req.material) if req.material in MATERIALS else -1
        mat = cat.material
        mcol = _fit_column(mat, mat_need, 0.4)
        if mat_need in (0, 1):
            # Germanium <-> silicon changes Vbe by about 0.4 V: the stage's bias must be
            # re-checked.
            mcol.sub = np.where(mat == 1 - mat_need, 0.2, mcol.sub)
        cols["material"] = mcol
    return cols, allowed, tj_est


def _verdict_part(cols: Mapping[str, _Column], n: int) -> np.ndarray:
    """Worst status of the given checks as a verdict code; an unknown primary rating against a
    known need counts as marginal (the part cannot be confirmed)."""
    verdict = np.zeros(n, np.int8)
    for name, col in cols.items():
        np.maximum(verdict, _VERDICT_OF[col.status], out=verdict)
        if name in PRIMARY and col.basis != "none":
            np.maximum(verdict, (col.status == UNKNOWN).view(np.int8), out=verdict)
    return verdict


def _extras(weights: Weights, stock: np.ndarray, hist: np.ndarray) -> np.ndarray:
    """The stock and history part of the weighted sum (added after the checks, in this order)."""
    w = weights.as_dict()
    return w["stock"] * stock + w["history"] * hist


def _evaluate(cat: CatalogColumns, rows: np.ndarray, req: Requirement, stress: Stress,
              policy: Policy, weights: Weights, stock_qty: np.ndarray | None,
              history_score: np.ndarray | None) -> _Evaluation:
    """Every check and score over ``cat`` (whose rows are the global ``rows``).

    The straightforward evaluation, row by row in array form; the rows returned are always
    detailed from it, and :func:`_group_scores` must agree with it exactly (tested).
    """
    n = rows.shape[0]
    cols, allowed, tj_est = _columns(cat, req, stress, policy)
    stock = np.zeros(n) if stock_qty is None else (stock_qty[rows] > 0).astype(float)
    hist = np.full(n, 0.5) if history_score is None else history_score[rows]

    w = weights.as_dict()
    total = np.zeros(n)
    for name in PARAMETERS:
        if w[name]:
            total += w[name] * cols[name].sub
    total += _extras(weights, stock, hist)
    score = 100.0 * total / weights.total()
    verdict = _verdict_part(cols, n)
    assert allowed is not None
    return _Evaluation(rows, cols, stock_qty[rows] if stock_qty is not None else np.zeros(n, int),
                       hist, score, verdict, allowed, tj_est)


# The large-group path. A group's rows repeat few distinct values per check (ratings are
# rounded, outlines and lead orders few): 105,000 rows of the bench catalog hold about 2,100
# distinct (Vceo, Vcbo, Ic max) triples and 1,700 thermal tuples. Each check is computed once
# per distinct tuple and gathered to the rows by a code cached with the group, so a ranking
# costs a handful of gathers over the group instead of a hundred array operations.
_BLOCKS: tuple[tuple[tuple[str, ...], tuple[str, ...]], ...] = (
    (("vceo", "vcbo", "ic_max"), ("vceo", "vcbo", "ic_max")),
    (("ptot", "tj_max", "tj_effective", "case_rated", "case_free_air"), ("ptot", "tj_max")),
    (("ft",), ("ft",)),
    (("hfe_min", "hfe_max"), ("hfe",)),
    (("package",), ("package",)),
    (("pinout",), ("pinout",)),
    (("material",), ("material",)),
)
"""(fields a block's checks read, the checks): the first block's checks lead PARAMETERS, so
their partial sum is taken per distinct tuple in the same order as :func:`_evaluate`."""

KERNEL_MIN_ROWS = 4096
"""Groups smaller than this are evaluated directly (a distinct-value table would not pay)."""
KERNEL_AFTER_USES = 1
"""A group is evaluated directly this many times before its tables are built: building them
costs several rankings' worth, and a one-off ranking (one CLI call) never reuses them."""


@dataclass
class _Block:
    codes: np.ndarray
    """Distinct-tuple index of every row of the group."""
    table: CatalogColumns
    """One row per distinct tuple (the block's fields are exact; other fields are any row's)."""


def _factorize_fields(cat: CatalogColumns, fields_: Sequence[str]) -> _Block:
    """Distinct tuples of ``fields_`` over the rows: a code per row and one row per tuple."""
    joint: np.ndarray | None = None
    for name in fields_:
        values = np.asarray(getattr(cat, name))
        if values.dtype.kind in "iub":
            # Small codes (outline, lead order, material, case flag): offset, no sort needed.
            inverse = values.astype(np.int64) - int(values.min(initial=0))
            size = int(inverse.max(initial=0)) + 1
        else:
            # return_index makes numpy sort stably, which is the faster sort on these columns.
            uniq, first, inverse = np.unique(values, return_index=True, return_inverse=True)
            if len(fields_) == 1:
                return _Block(inverse.astype(np.intp).reshape(-1), cat.take(first))
            size = len(uniq)  # NaNs fold into one value
        joint = inverse.astype(np.int64) if joint is None else joint * size + inverse
    assert joint is not None
    _, first, codes = np.unique(joint, return_index=True, return_inverse=True)
    return _Block(codes.astype(np.intp).reshape(-1), cat.take(first))


_VERDICT_JOINT_FROM = 3
"""Blocks from this index on (the gain window and the three fits) share one verdict code:
their distinct combinations are few (hundreds in a group of 100,000 rows)."""


@dataclass
class _Joint:
    codes: np.ndarray
    """Combination index of every row of the group."""
    parts: list[np.ndarray]
    """Per combination, its code in each of the joined blocks."""
    order: np.ndarray
    """The group's positions by combination (ascending within each): the rows of
    combination c are ``order[start[c]:start[c + 1]]``."""
    start: np.ndarray


def _group_blocks(cat: CatalogColumns) -> tuple[list[_Block], _Joint]:
    hit = cat._memo.get("blocks")
    if hit is None:
        blocks = [_factorize_fields(cat, f) for f, _ in _BLOCKS]
        joint = np.zeros(cat.size, dtype=np.int64)
        for block in blocks[_VERDICT_JOINT_FROM:]:
            joint = joint * block.table.size + block.codes
        _, first, codes = np.unique(joint, return_index=True, return_inverse=True)
        codes = codes.astype(np.intp).reshape(-1)
        start = np.zeros(first.shape[0] + 1, np.intp)
        np.cumsum(np.bincount(codes, minlength=first.shape[0]), out=start[1:])
        hit = (blocks, _Joint(codes, [b.codes[first] for b in blocks[_VERDICT_JOINT_FROM:]],
                              np.argsort(codes, kind="stable"), start))
        cat._memo["blocks"] = hit
    return hit


@dataclass
class _Scores:
    """Score and verdict of every row of a group, and how to detail some of them."""

    score: np.ndarray
    verdict: np.ndarray
    detail: Callable[[np.ndarray], _Evaluation]
    """The full evaluation of the given positions (equal to :func:`_evaluate` on them)."""
    positions: np.ndarray | None = None
    """The group positions that ``score`` and ``verdict`` cover, ascending (None: every row);
    rows left out cannot be among the best ``limit`` (see :func:`_group_scores`)."""


_FAST = "clip"
"""Gather mode: every code is in range by construction, and numpy's bounds-checking default
("raise") makes each gather over the group about 1.6 times slower."""


def _split_columns(cat: CatalogColumns, b: int, block: _Block, req: Requirement,
                   stress: Stress, policy: Policy, names: Sequence[str]) -> dict[str, _Column]:
    """The single-field checks ``names`` over a block's table, each computed once per distinct
    value of its own field and gathered to the table's tuples (the same values, element by
    element): a triple table repeats each rating many times."""
    splits = cat._memo.get(("splits", b))
    if splits is None:
        # Depends on the rows only, so it is kept with the group like the blocks.
        splits = {name: _factorize_fields(block.table, (name,)) for name in names}
        cat._memo[("splits", b)] = splits
    cols: dict[str, _Column] = {}
    for name in names:
        part = splits[name]
        col = _columns(part.table, req, stress, policy, (name,))[0][name]
        at = part.codes
        cols[name] = _Column(col.need[at] if isinstance(col.need, np.ndarray) else col.need,
                             col.offered[at], col.status[at], col.sub[at],
                             None if col.ratio is None else col.ratio[at], col.basis)
    return cols


def _group_scores(cat: CatalogColumns, rows: np.ndarray, req: Requirement, stress: Stress,
                  policy: Policy, weights: Weights, stock_qty: np.ndarray | None,
                  history_score: np.ndarray | None, limit: int | None = None,
                  keep: np.ndarray | None = None, exclude: int | None = None) -> _Scores:
    """Score and verdict of the rows of ``cat``, equal bit for bit to :func:`_evaluate`'s.

    The same check functions run on each block's distinct tuples; the weighted sum is then
    gathered and added up in the order of PARAMETERS, exactly as :func:`_evaluate` adds it.

    With ``limit`` (and the rows that may be returned: ``keep``, not ``exclude``), only the rows
    that can be among the best ``limit`` are scored: the verdict class orders first, so when
    the better classes hold ``limit`` returnable rows or more, no row of a worse class can be
    returned, and its score is not computed (:attr:`_Scores.positions`).
    """
    n = rows.shape[0]

    def direct(top: np.ndarray) -> _Evaluation:
        return _evaluate(cat.take(top), rows[top], req, stress, policy, weights, stock_qty,
                         history_score)

    uses = cat._memo.get("uses", 0)
    if n < KERNEL_MIN_ROWS or ("blocks" not in cat._memo and uses < KERNEL_AFTER_USES):
        cat._memo["uses"] = uses + 1
        ev = _evaluate(cat, rows, req, stress, policy, weights, stock_qty, history_score)
        return _Scores(ev.score, ev.verdict, direct)
    w = weights.as_dict()
    blocks, joint = _group_blocks(cat)
    joint_v = np.zeros(len(joint.parts[0]), np.int8)
    computed: list[tuple[_Block, dict[str, _Column], np.ndarray | None, np.ndarray | None]] = []
    part_vs: list[np.ndarray] = []
    for b, ((fields_, names), block) in enumerate(zip(_BLOCKS, blocks, strict=True)):
        if len(names) > 1 and fields_ == names:
            # Checks that each read only their own field (the rating triple).
            cols, allowed, tj_est = _split_columns(cat, b, block, req, stress, policy, names), \
                None, None
        else:
            cols, allowed, tj_est = _columns(block.table, req, stress, policy, names)
        computed.append((block, cols, allowed, tj_est))
        part_v = _verdict_part(cols, block.table.size)
        if b >= _VERDICT_JOINT_FROM:
            np.maximum(joint_v, part_v[joint.parts[b - _VERDICT_JOINT_FROM]], out=joint_v)
        else:
            part_vs.append(part_v)

    def verdict_at(at: np.ndarray) -> np.ndarray:
        out = joint_v.take(joint.codes.take(at))
        for block, part_v in zip(blocks, part_vs, strict=False):
            np.maximum(out, part_v.take(block.codes.take(at)), out=out)
        return out

    def returnable(within: np.ndarray, worst: int, exclude_verdict: int) -> int:
        count = within.shape[0] if keep is None else int(np.count_nonzero(keep[within]))
        if exclude is not None and exclude_verdict <= worst and (keep is None or keep[exclude]):
            count -= 1
        return count

    positions: np.ndarray | None = None
    verdict: np.ndarray | None = None
    scored_verdict: np.ndarray | None = None
    if limit is not None:
        # The best verdict classes holding ``limit`` returnable rows are all that can be
        # returned (verdict codes are 0, 1, 2; a worse class sorts after every better row).
        # The suitable rows first, found through the joint checks (few rows pass them all)
        # before the ratings are read: the whole verdict is then seldom needed.
        ex_v = -1 if exclude is None else int(verdict_at(np.array([exclude]))[0])
        # The rows of the combinations that pass, read off the group's rows by combination
        # (no pass over the whole group), then the other blocks on those rows only.
        ok = np.flatnonzero(joint_v == 0)
        lo, count = joint.start[ok], joint.start[ok + 1] - joint.start[ok]
        total = int(count.sum())
        ends = np.cumsum(count)
        within = joint.order.take(np.repeat(lo - (ends - count), count) + np.arange(total))
        for block, part_v in zip(blocks, part_vs, strict=False):
            within = within[part_v.take(block.codes.take(within)) == 0]
        within.sort(kind="stable")  # ascending runs, one per combination: merged, not sorted
        if returnable(within, 0, ex_v) >= limit:
            positions = within
            scored_verdict = np.zeros(within.shape[0], np.int8)
    if positions is None:
        verdict = np.empty(n, np.int8)
        vbuffer = np.empty(n, np.int8)
        for block, part_v in zip(blocks, part_vs, strict=False):
            np.take(part_v, block.codes, out=vbuffer, mode=_FAST)
            if block is blocks[0]:
                verdict[:] = vbuffer
            else:
                np.maximum(verdict, vbuffer, out=verdict)
        np.take(joint_v, joint.codes, out=vbuffer, mode=_FAST)
        np.maximum(verdict, vbuffer, out=verdict)
        if limit is not None:
            within = np.flatnonzero(verdict <= 1)
            if returnable(within, 1, ex_v) >= limit:
                positions = within
        scored_verdict = verdict if positions is None else verdict.take(positions)
    assert scored_verdict is not None
    m = n if positions is None else positions.shape[0]

    def codes_of(block: _Block) -> np.ndarray:
        return block.codes if positions is None else block.codes.take(positions)

    total = np.empty(m)
    buffer = np.empty(m)
    for b, ((_, names), (block, cols, _a, _t)) in enumerate(zip(_BLOCKS, computed, strict=True)):
        if b == 0:
            # The leading checks: their running sum from zero, per distinct tuple.
            lead = np.zeros(block.table.size)
            for name in names:
                if w[name]:
                    lead += w[name] * cols[name].sub
            np.take(lead, codes_of(block), out=total, mode=_FAST)
            continue
        if not any(w[name] for name in names):
            continue
        codes = codes_of(block)
        for name in names:
            if w[name]:
                np.take(w[name] * cols[name].sub, codes, out=buffer, mode=_FAST)
                total += buffer
    scored_rows = rows if positions is None else rows.take(positions)
    in_stock = np.zeros(m, bool) if stock_qty is None else \
        stock_qty.take(scored_rows, mode=_FAST) > 0
    if history_score is None:
        # stock is 0 or 1 and history 0.5 here: the two possible sums, taken as _extras does.
        pair = _extras(weights, np.array([0.0, 1.0]), np.full(2, 0.5))
        total += np.where(in_stock, pair[1], pair[0])
    else:
        total += _extras(weights, in_stock.astype(float), history_score.take(scored_rows))
    total *= 100.0
    total /= weights.total()
    score = total

    def gathered(top: np.ndarray) -> _Evaluation:
        # The rows returned, gathered from the distinct-tuple checks already computed.
        cols: dict[str, _Column] = {}
        allowed: np.ndarray | None = None
        tj_est: np.ndarray | None = None
        for block, bcols, b_allowed, b_tj in computed:
            at = block.codes[top]
            for name, col in bcols.items():
                cols[name] = _Column(col.need[at] if isinstance(col.need, np.ndarray)
                                     else col.need, col.offered[at], col.status[at],
                                     col.sub[at], None if col.ratio is None else col.ratio[at],
                                     col.basis)
            if b_allowed is not None:
                allowed = b_allowed[at]
                tj_est = None if b_tj is None else b_tj[at]
        assert allowed is not None
        grows = rows[top]
        k = grows.shape[0]
        sub = top if positions is None else np.searchsorted(positions, top)
        return _Evaluation(grows, cols, stock_qty[grows] if stock_qty is not None
                           else np.zeros(k, int),
                           np.full(k, 0.5) if history_score is None else history_score[grows],
                           score[sub], scored_verdict[sub], allowed, tj_est)

    return _Scores(score, scored_verdict, gathered, positions)


def _package_code(cat: CatalogColumns, package: str | None) -> int:
    k = outline_key(package)
    if k is None:
        return -1
    for i, p in enumerate(cat.packages):
        if outline_key(p) == k:
            return i
    return -2  # known, but no row has it


def _pinout_code(cat: CatalogColumns, pinout: str | None) -> int:
    if not pinout:
        return -1
    return cat.pinouts.index(pinout) if pinout in cat.pinouts else -2


def _fit_column(codes: np.ndarray, need: int, other: float) -> _Column:
    n = codes.shape[0]
    if need == -1:
        return _Column(np.nan, codes, np.full(n, UNKNOWN, np.int8), np.full(n, SUB_NO_NEED),
                       None, "none")
    same = codes == need
    unknown = codes < 0
    status = (~same).view(np.int8).copy()  # OK 0 / MARGINAL 1
    status[unknown] = UNKNOWN
    sub = np.where(same, 1.0, other)
    sub[unknown] = SUB_UNKNOWN_FIT
    return _Column(float(need), codes, status, sub, None, "original")


def _hfe_column(cat: CatalogColumns, req: Requirement) -> _Column:
    n = cat.size
    lo, hi = cat.log_hfe
    if req.hfe_min is None:
        return _Column(np.nan, cat.hfe_min, np.full(n, UNKNOWN, np.int8),
                       np.full(n, SUB_NO_NEED), None, "none")
    need_lo = math.log(req.hfe_min)
    need_hi = math.log(req.hfe_max if req.hfe_max is not None else req.hfe_min)
    gap = np.maximum(0.0, np.maximum(need_lo - hi, lo - need_hi))
    short = np.maximum(0.0, need_lo - lo)
    status = ((gap > 0) | (short > math.log(HFE_LOW_FACTOR))).view(np.int8).copy()
    sub = np.minimum(np.maximum(1.0 - (gap + short) / math.log(10.0), 0.0), 1.0)
    unknown = np.isnan(lo)
    status[unknown] = UNKNOWN
    sub = np.where(unknown, SUB_UNKNOWN_RATING, sub)
    with np.errstate(invalid="ignore"):
        ratio = np.exp(lo - need_lo)
    return _Column(req.hfe_min, cat.hfe_min, status, sub, ratio, "original")


# ----------------------------------------------------------------------------- results

Sentence = str | tuple[Callable[..., str], tuple[Any, ...]]
"""A sentence, or how to write it: (function, arguments), called when the sentence is read."""


class _WrittenWhenRead:
    """A text attribute given as a :data:`Sentence`: written on first read, then kept (in the
    slot named like the attribute with a leading underscore)."""

    def __set_name__(self, owner: type, name: str) -> None:
        self.slot = "_" + name

    def __get__(self, obj: Any, objtype: type | None = None) -> str:
        if obj is None:
            return self  # type: ignore[return-value]
        text = getattr(obj, self.slot)
        if not isinstance(text, str):
            write, args = text
            text = write(*args)
            setattr(obj, self.slot, text)
        return text


class Check:
    """One parameter of one candidate against the need.

    The note (a sentence for the technician) is written when it is first read: a ranking
    returns the checks of every candidate, and most notes are never shown (the table shows
    the problems of the first few; JSON and the job sheets read them all)."""

    __slots__ = ("_note", "need", "offered", "parameter", "ratio", "status")

    def __init__(self, parameter: str, need: float | None, offered: float | None,
                 ratio: float | None, status: str, note: Sentence = "") -> None:
        self.parameter = parameter
        self.need = need
        self.offered = offered
        self.ratio = ratio
        """offered / need: 1.0 just meets it (tj_max: temperature rise available / used)."""
        self.status = status
        self._note = note

    note = _WrittenWhenRead()

    def _fields(self) -> tuple[Any, ...]:
        return (self.parameter, self.need, self.offered, self.ratio, self.status, self.note)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Check) and self._fields() == other._fields()

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        return ("Check(parameter={!r}, need={!r}, offered={!r}, ratio={!r}, status={!r}, "
                "note={!r})".format(*self._fields()))

    def to_json(self) -> dict[str, Any]:
        return {"parameter": self.parameter, "need": self.need, "offered": self.offered,
                "ratio": self.ratio, "status": self.status, "note": self.note}


class Flag:
    """Something the technician should know about a candidate (``code``) and what to do.

    Like :attr:`Check.note`, the message may be written when first read."""

    __slots__ = ("_message", "code")

    def __init__(self, code: str, message: Sentence) -> None:
        self.code = code
        self._message = message

    message = _WrittenWhenRead()

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Flag) and (self.code, self.message) == (other.code, other.message)

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        return f"Flag(code={self.code!r}, message={self.message!r})"

    def to_json(self) -> dict[str, str]:
        return {"code": self.code, "message": self.message}


@dataclass
class Candidate:
    designation: str
    key: str
    score: float
    verdict: str
    in_stock: int
    locations: list[str]
    checks: list[Check]
    flags: list[Flag]
    confidence: float
    """Share of the applicable checks whose values are known on both sides (0..1)."""
    subscores: dict[str, float]
    device: dict[str, Any] = field(default_factory=dict)

    def check(self, parameter: str) -> Check:
        return next(c for c in self.checks if c.parameter == parameter)

    def flag_codes(self) -> list[str]:
        return [f.code for f in self.flags]

    def to_json(self) -> dict[str, Any]:
        return {"designation": self.designation, "score": round(self.score, 1),
                "verdict": self.verdict, "in_stock": self.in_stock,
                "locations": list(self.locations), "confidence": round(self.confidence, 2),
                "checks": [c.to_json() for c in self.checks],
                "flags": [f.to_json() for f in self.flags],
                "subscores": {k: round(v, 3) for k, v in self.subscores.items()},
                "device": self.device}


@dataclass
class RankResult:
    requirement: Requirement
    stress: Stress
    policy: Policy
    weights: Weights
    candidates: list[Candidate]
    considered: int
    """Rows in the catalog."""
    compatible: int
    """Rows passing the hard constraints (and the in-stock filter), the original excluded."""
    cautions: tuple[str, ...] = SAFETY_CAUTIONS
    notes: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        return {
            "requirement": self.requirement.to_json(),
            "stress": self.stress.to_json(),
            "policy": {"name": self.policy.name, "factors": self.policy.factors(),
                       "source": self.policy.source, "description": self.policy.description},
            "weights": self.weights.as_dict(),
            "considered": self.considered,
            "compatible": self.compatible,
            "candidates": [c.to_json() for c in self.candidates],
            "notes": list(self.notes),
            "cautions": list(self.cautions),
        }


# ----------------------------------------------------------------------------- ranking

def hard_mask(cat: CatalogColumns, req: Requirement) -> np.ndarray:
    """Rows of the same polarity and kind (the hard constraints)."""
    return (cat.polarity == POLARITIES.index(req.polarity)) & (cat.kind == KINDS.index(req.kind))


def history_scores(cat: CatalogColumns, history: Mapping[str, PastSwaps] | None
                   ) -> np.ndarray | None:
    """History sub-score per row: 1 worked before, 0 failed before, 0.5 otherwise or mixed."""
    if not history:
        return None
    out = np.full(cat.size, 0.5)
    for key, past in history.items():
        i = cat.index_of(key)
        if i is None:
            continue
        if past.worked and not past.failed:
            out[i] = 1.0
        elif past.failed and not past.worked:
            out[i] = 0.0
    return out


_KEY_SORT_MAX = 2048
"""Pools up to this size are ordered by comparing their keys; larger ones use key_rank."""


def _top(score: np.ndarray, verdict: np.ndarray, cat: CatalogColumns, limit: int,
         exclude: int | None = None, keep: np.ndarray | None = None,
         at: np.ndarray | None = None) -> np.ndarray:
    """Positions of the best ``limit`` rows: verdict class, then score, then normalised key.

    ``exclude`` is a position left out (the original itself); ``keep``, when given, marks the
    rows that may be returned; ``at``, when given, is the row of ``cat`` at each position
    (``score`` covering only those rows). Only the rows tied at the cut are compared by key, so the
    tie-break costs nothing on a catalog of distinct scores.
    """
    n = score.shape[0]
    if n == 0 or limit <= 0:
        return np.zeros(0, dtype=np.intp)
    comp = verdict * 1000.0 - score
    if exclude is not None:
        comp[exclude] = np.inf
    if keep is not None:
        comp[~keep] = np.inf
    pool: np.ndarray | None = None
    if n > 64 * limit:
        # A cut read off a strided sample: every row at or below it is in the pool, so when
        # the pool holds at least ``limit`` rows the best ``limit`` (and every tie at the last
        # one) are in it, whatever the sample; otherwise the full selection below decides.
        step = max(1, n // 2048)
        sample = comp[::step]
        j = min(sample.shape[0] - 1, 4 * limit // step + 1)
        cut = np.partition(sample, j)[j]
        if np.isfinite(cut):
            candidates = np.flatnonzero(comp <= cut)
            if limit <= candidates.shape[0] <= 64 * limit:
                pool = candidates
    if pool is None and n > limit:
        part = np.argpartition(comp, limit - 1)[:limit]
        cut = comp[part].max()
        pool = np.flatnonzero(comp <= cut)  # every tie at the cut, so the tie-break is exact
    elif pool is None:
        pool = np.arange(n)
    pool = pool[np.isfinite(comp[pool])]
    # The pool holds every row that can be among the best (rounding in ``comp`` is monotone);
    # within it the order is exact: verdict, then score, then key. (``comp`` alone would merge
    # scores a few units in the last place apart: 2000 - 39.5 == 2000 - 39.50000000000001.)
    verdicts, scores = verdict[pool], score[pool]
    if pool.shape[0] <= _KEY_SORT_MAX:
        # Keys are unique and compare as key_rank orders them (code point order), so a small
        # pool needs no rank of the whole group (an argsort of every key, read cold).
        keys = cat.key[pool if at is None else at[pool]].tolist()
        vs, ss = verdicts.tolist(), scores.tolist()
        order = sorted(range(pool.shape[0]), key=lambda j: (vs[j], -ss[j], keys[j]))[:limit]
        return pool[np.array(order, dtype=np.intp)]
    ranks = cat.key_rank[pool if at is None else at[pool]]
    return pool[np.lexsort((ranks, -scores, verdicts))[:limit]]


def rank(catalog: CatalogColumns, requirement: Requirement, stress: Stress | None = None,
         policy: Policy | None = None, weights: Weights | None = None,
         stock_qty: np.ndarray | None = None, *, history: Mapping[str, PastSwaps] | None = None,
         locations: Mapping[str, Sequence[str]] | None = None, limit: int = 15,
         in_stock_only: bool = False, show_rejected: bool = False,
         considered: int | None = None) -> RankResult:
    """Rank the catalog's rows as substitutes for ``requirement`` (data already loaded).

    ``stock_qty`` is aligned with the catalog rows; ``history`` maps a substitute's normalised
    key to what the swap log says about it for this original; ``locations`` maps keys to drawer
    paths (used only for the rows returned). With ``show_rejected`` the best ``limit`` rows of
    the wrong polarity or kind follow, with verdict ``incompatible`` and the reason.

    ``catalog`` may hold only the requirement's polarity and kind (all a ranking without
    ``show_rejected`` reads); ``considered`` is then the whole catalog's row count, reported
    as :attr:`RankResult.considered` (default: ``catalog.size``).

    Score and verdict of every compatible row come from :func:`_group_scores`; the rows
    returned are detailed from the same checks (:meth:`_Scores.detail`).
    """
    from partsdb.derating import BUILTIN_POLICIES, DEFAULT_POLICY

    stress = stress or Stress()
    policy = policy or BUILTIN_POLICIES[DEFAULT_POLICY]
    weights = weights or DEFAULT_WEIGHTS
    if isinstance(limit, bool) or not isinstance(limit, int) or limit < 1:
        raise SpecError(f"limit: {limit!r} is not valid; expected a whole number above 0")
    if stock_qty is not None and stock_qty.shape[0] != catalog.size:
        raise SpecError(f"stock_qty: {stock_qty.shape[0]} rows for a catalog of {catalog.size}")
    original = catalog.index_of(requirement.designation)
    hist = history_scores(catalog, history)
    rows, view = catalog.group(requirement.polarity, requirement.kind)
    keep: np.ndarray | None = None
    if in_stock_only:
        # The group's cached tables stay in use: rows out of stock are masked, not dropped.
        keep = stock_qty.take(rows) > 0 if stock_qty is not None else \
            np.zeros(rows.shape[0], dtype=bool)
    # The original itself is left out of its own list (by position, without a gather).
    exclude: int | None = None
    if original is not None:
        at = int(np.searchsorted(rows, original))
        if at < rows.shape[0] and rows[at] == original:
            exclude = at
    scored = _group_scores(view, rows, requirement, stress, policy, weights, stock_qty, hist,
                           limit, keep, exclude)
    at = scored.positions
    if at is None:
        top = _top(scored.score, scored.verdict, view, limit, exclude, keep)
    else:
        # Only the rows that can be returned were scored: select among them, by their place in
        # the group (keys, tie-break), then map back to group positions.
        sub_exclude: int | None = None
        if exclude is not None:
            j = int(np.searchsorted(at, exclude))
            if j < at.shape[0] and at[j] == exclude:
                sub_exclude = j
        top = at[_top(scored.score, scored.verdict, view, limit, sub_exclude,
                      None if keep is None else keep[at], at)]
    ev = scored.detail(top)
    candidates = _candidates(catalog, ev, None, requirement, stress, policy, history, locations)
    compatible = int(rows.shape[0]) if keep is None else int(np.count_nonzero(keep))
    if exclude is not None and (keep is None or keep[exclude]):
        compatible -= 1
    result = RankResult(requirement, stress, policy, weights, candidates,
                        catalog.size if considered is None else considered, compatible)
    if show_rejected:
        rrows = catalog.rejected(requirement.polarity, requirement.kind)
        if in_stock_only:
            rrows = rrows[stock_qty[rrows] > 0] if stock_qty is not None else rrows[:0]
        rview = catalog.take(rrows)
        rev = _evaluate(rview, rrows, requirement, stress, policy, weights, stock_qty, hist)
        rtop = _top(rev.score, np.zeros_like(rev.verdict), rview, limit)
        reasons = []
        for i in rrows.take(rtop).tolist():
            why = []
            pol, kind = _name(POLARITIES, catalog.polarity[i]), _name(KINDS, catalog.kind[i])
            if pol != requirement.polarity:
                why.append(f"polarity {pol or 'unknown'}, need {requirement.polarity}")
            if kind != requirement.kind:
                why.append(f"kind {kind or 'unknown'}, need {requirement.kind}")
            reasons.append("; ".join(why))
        result.candidates += _candidates(catalog, rev, rtop, requirement, stress, policy, history,
                                         locations, reasons)
    return result


# ----------------------------------------------------------------------------- details

_SI_STEPS: tuple[tuple[float, str], ...] = (
    (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"),
    (1e-12, "p"))


_SI_THRESHOLDS: tuple[tuple[float, str, float], ...] = tuple(
    (scale, prefix, scale * 0.9995) for scale, prefix in _SI_STEPS[:-1])
"""(scale, prefix, smallest magnitude shown with it): 999.5 rounds up to the next prefix."""


def _fmt(value: float | None, unit: str) -> str:
    """Engineering notation with an SI prefix ("150 mW", "2 MHz"), 3 significant digits.

    Written out here because the details of every returned row are formatted on each ranking
    and the general formatter (quantiphy) costs about 0.1 ms a call.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if unit in ("", "°C", "K/W"):
        return f"{value:.3g} {unit}".strip()
    magnitude = abs(value)
    for scale, prefix, threshold in _SI_THRESHOLDS:
        if magnitude >= threshold:
            return f"{value / scale:.3g} {prefix}{unit}"
    return f"{value / 1e-12:.3g} p{unit}"  # the smallest step takes the rest (NaN is above)


def _pct(x: float) -> str:
    return f"{100 * x:.0f} %"


def lead_mapping(original: str, substitute: str) -> str:
    """Which substitute lead goes to which board pad when the lead orders differ.

    The board's pads 1 2 3 carry the original's leads in order; each pad takes the substitute
    lead with the same function.
    """
    parts = []
    for pad, function in enumerate(original, start=1):
        lead = substitute.index(function) + 1
        parts.append(f"pad {pad} ({function}) gets lead {lead}")
    return (f"re-form leads: original {' '.join(original)} -> pads 1 2 3; substitute leads 1 2 3 "
            f"are {' '.join(substitute)}, so " + ", ".join(parts))


_FITS: tuple[str, ...] = ("package", "pinout", "material")
_AT: dict[str, int] = {name: j for j, name in enumerate(PARAMETERS)}


def _floats_or_none(values: np.ndarray) -> list[float | None]:
    return [None if v != v else v for v in values.astype(float).tolist()]  # NaN: None


def _candidates(cat: CatalogColumns, ev: _Evaluation, at: np.ndarray | None, req: Requirement,
                stress: Stress, policy: Policy, history: Mapping[str, PastSwaps] | None,
                locations: Mapping[str, Sequence[str]] | None,
                rejected: Sequence[str] | None = None) -> list[Candidate]:
    """The rows at positions ``at`` of the evaluation (None: all, in order), in that order, as
    readable candidates.

    Read column by column (one gather per check for all the rows, then plain Python values);
    ``rejected`` gives, per row, why it is not a substitute (verdict ``incompatible``).
    """
    if at is None:
        def pick(values: np.ndarray) -> np.ndarray:
            return values
    else:
        at = np.asarray(at, dtype=np.intp).reshape(-1)

        def pick(values: np.ndarray) -> np.ndarray:
            return values.take(at)
    grows = pick(ev.rows)
    k = grows.shape[0]
    if k == 0:
        return []
    devs = cat.devices_at(grows)
    checks: list[list[Check]] = [[] for _ in range(k)]
    applicable, known = [0] * k, [0] * k
    unknown: list[list[str]] = [[] for _ in range(k)]
    needs: dict[str, list[float | None]] = {}
    for name in PARAMETERS:
        col = ev.columns[name]
        status = [STATUS_NAMES[c] for c in pick(col.status).tolist()]
        if name in _FITS:
            need_text = getattr(req, name)
            for j in range(k):
                off_text = devs[j][name]
                checks[j].append(Check(name, None, None, None, status[j],
                                       (_fit_note, (name, need_text, off_text, status[j]))))
                if need_text is not None:
                    applicable[j] += 1
                    known[j] += off_text is not None
                    if status[j] == "unknown":
                        unknown[j].append(name)
            continue
        if isinstance(col.need, np.ndarray):
            need_at = _floats_or_none(pick(col.need))
        else:
            need_at = [None if col.need is None else _num(col.need)] * k
        needs[name] = need_at
        offered = _floats_or_none(pick(col.offered))
        ratios: list[float | None] = [None] * k if col.ratio is None else [
            v if math.isfinite(v) else None for v in pick(col.ratio).astype(float).tolist()]
        basis = col.basis
        for j in range(k):
            need, off = need_at[j], offered[j]
            if need is not None:
                applicable[j] += 1
                known[j] += off is not None
                if status[j] == "unknown":
                    unknown[j].append(name)
            checks[j].append(Check(name, need, off, ratios[j], status[j],
                                   (_rating_note, (name, basis, need, off, req, stress, policy,
                                                   devs[j]))))

    subs = {name: pick(ev.columns[name].sub).astype(float).tolist() for name in PARAMETERS}
    stock = pick(ev.stock).tolist()
    hist = pick(ev.history).astype(float).tolist()
    score = pick(ev.score).astype(float).tolist()
    verdict = pick(ev.verdict).tolist()
    case_rated = cat.case_rated.take(grows).tolist()
    free_air = cat.free_air.take(grows).astype(float).tolist()
    tj_eff = cat.tj_effective.take(grows).astype(float).tolist()
    allowed = pick(ev.allowed_power).astype(float).tolist()
    out = []
    for j in range(k):
        dev = devs[j]
        key = dev["key"]
        flags: list[Flag] = []
        if rejected is not None:
            flags.append(Flag("incompatible", f"not a substitute: {rejected[j]}"))
        _flags(flags, checks[j], dev, req, stress, needs["ft"][j], case_rated[j], free_air[j],
               allowed[j], tj_eff[j])
        past = (history or {}).get(key)
        if past is not None and (past.worked or past.failed):
            jobs = f" (jobs {', '.join(past.jobs)})" if past.jobs else ""
            if past.worked:
                flags.append(Flag("worked-before",
                                  f"used for {req.designation} before and worked {past.worked} "
                                  f"time(s){jobs}: score bonus"))
            if past.failed:
                flags.append(Flag("failed-before",
                                  f"used for {req.designation} before and failed {past.failed} "
                                  f"time(s){jobs}: score penalty; read the swap log notes"))
        if unknown[j]:
            flags.append(Flag("unknown-data", "no value to compare for " + ", ".join(unknown[j])
                              + ": check the datasheet"))
        row_subs = {name: subs[name][j] for name in PARAMETERS}
        row_subs["stock"] = float(stock[j] > 0)
        row_subs["history"] = hist[j]
        qty = int(stock[j])
        out.append(Candidate(
            dev["designation"], key, score[j],
            VERDICTS[3] if rejected is not None else VERDICTS[verdict[j]], qty,
            list((locations or {}).get(key, [])) if qty > 0 else [], checks[j], flags,
            known[j] / applicable[j] if applicable[j] else 1.0, row_subs, dev))
    return out


def _fit_note(name: str, need: str | None, offered: str | None, status: str) -> str:
    if need is None:
        return "no requirement given"
    if offered is None:
        return f"not in the record (need {need})"
    if status == "ok":
        return f"same ({offered})"
    if name == "package":
        return (f"other outline: {offered} for {need}; mechanical and thermal adaptation "
                "(mounting, heat sink, lead spacing)")
    if name == "pinout":
        return lead_mapping(need, offered)
    if {need, offered} == {"ge", "si"}:
        return (f"material {need} -> {offered}: Vbe about "
                + ("0.6-0.7 V instead of 0.2-0.3 V" if offered == "si" else
                   "0.2-0.3 V instead of 0.6-0.7 V")
                + "; re-check the bias (partsdb bias)")
    return f"material {need} -> {offered}: re-check the bias (partsdb bias)"


_POLICY_FACTOR = {"vceo": "voltage", "vcbo": "voltage", "ic_max": "current", "ptot": "power"}
_STRESS_NAME = {"vceo": "Vce peak", "vcbo": "Vce peak", "ic_max": "Ic peak", "ptot": "dissipation"}


def _rating_note(name: str, basis: str, need: float | None, offered: float | None,
                 req: Requirement, stress: Stress, policy: Policy, dev: dict[str, Any]) -> str:
    unit = UNIT[name]
    if need is None:
        return "no requirement (the original's value is unknown and no stress given)"
    if offered is None:
        return f"not in the record (need {_fmt(need, unit)})"
    if name == "tj_max" and basis == "stress":
        limit = float(policy.tj_limit(offered))
        return (f"Tj estimated {need:.0f} °C at {_fmt(stress.power, 'W')} and "
                f"{stress.ambient:g} °C ambient; {policy.name} allows {limit:.0f} °C, "
                f"Tj max {offered:.0f} °C")
    if name == "tj_max":
        return f"Tj max {offered:.0f} °C against the original's {need:.0f} °C"
    if name == "hfe":
        win = (f"{req.hfe_min:g}..{req.hfe_max:g}" if req.hfe_max is not None
               else f"{req.hfe_min:g}")
        cand = (f"{dev['hfe_min']:g}..{dev['hfe_max']:g}" if dev["hfe_max"] is not None
                else f"{dev['hfe_min']:g}")
        return f"window {cand} against {win} (log scale)"
    if name == "ft":
        if basis == "gain-bandwidth":
            return (f"fT {_fmt(offered, 'Hz')} against hFE min x f = {req.hfe_min:g} x "
                    f"{_fmt(stress.freq, 'Hz')} = {_fmt(need, 'Hz')} (gain-bandwidth, "
                    "textbook: gain falls as fT/f above f_beta)")
        return (f"fT {_fmt(offered, 'Hz')} against the original's {_fmt(need, 'Hz')}"
                + (" (no hFE min known, so --freq was not used)"
                   if stress.freq is not None else ""))
    if basis == "stress":
        factor = getattr(policy, _POLICY_FACTOR[name])
        what = _STRESS_NAME[name]
        rating = "allowed power" if name == "ptot" else LABEL[name]
        return (f"{what} {_fmt(need, unit)} is {_pct(need / offered)} of {rating} "
                f"{_fmt(offered, unit)}; {policy.name} allows {_pct(factor)}")
    if name == "ptot":
        return (f"allowed power at {stress.ambient:g} °C {_fmt(offered, 'W')} against the "
                f"original's {_fmt(need, 'W')} in the same mounting")
    return f"{LABEL[name]} {_fmt(offered, unit)} against the original's {_fmt(need, unit)}"


_TABLED_OUTLINES = frozenset(outline_key(k) for k in FREE_AIR_CASE_TO_AMBIENT)
"""Outlines with a free-air case-to-ambient figure in partsdb.thermal (others are assumed)."""


def _below_original(name: str, offered: float, original: float) -> str:
    return (f"{LABEL[name]} {_fmt(offered, UNIT[name])} is below the original's "
            f"{_fmt(original, UNIT[name])} (fine for the stated stress only)")


def _case_rating_message(dev: dict[str, Any], stress: Stress, free_air: float,
                         allowed: float) -> str:
    sink = (f"heat sink {stress.heatsink:g} K/W + {DEFAULT_CASE_TO_SINK:g} K/W case-to-sink"
            if stress.heatsink is not None else
            f"no heat sink: {free_air:g} K/W case-to-ambient in free air "
            f"for {dev['package'] or 'an unknown outline'}"
            + ("" if outline_key(dev["package"]) in _TABLED_OUTLINES else " (assumed)"))
    return (f"Ptot {_fmt(dev['ptot'], 'W')} is a case rating; converted through the "
            f"thermal chain ({sink}) to {_fmt(allowed, 'W')} at {stress.ambient:g} °C")


def _much_faster(ft: float) -> str:
    return (f"fT {_fmt(ft, 'Hz')} is over {FT_FAST_FACTOR:g}x the need: it may oscillate; keep "
            "leads short, add a base stopper if needed (common practice)")


def _flags(flags: list[Flag], checks: list[Check], dev: dict[str, Any], req: Requirement,
           stress: Stress, ft_need: float | None, case_rated: bool, free_air: float,
           allowed: float, tj_effective: float) -> None:
    """The flags of one candidate, after its checks (in PARAMETERS order); messages that need
    number formatting are written when read."""
    for name, stressed in (("vceo", stress.vce_peak), ("vcbo", stress.vce_peak),
                           ("ic_max", stress.ic_peak)):
        original = getattr(req, name)
        offered = dev[name]
        if stressed is not None and original is not None and offered is not None \
                and offered < original:
            flags.append(Flag("below-original", (_below_original, (name, offered, original))))
    for name, code in (("material", "material-change"), ("package", "other-outline"),
                       ("pinout", "re-form-leads")):
        check = checks[_AT[name]]
        if check.status == "marginal":
            flags.append(Flag(code, (getattr, (check, "note"))))
    if case_rated and dev["ptot"] is not None:
        flags.append(Flag("case-rating-converted",
                          (_case_rating_message, (dev, stress, free_air, allowed))))
    if dev["tj_max"] is None and dev["ptot"] is not None:
        flags.append(Flag("tj-assumed", f"Tj max not in the record: {tj_effective:g} °C "
                                        f"assumed for {dev['material']} to derate Ptot"))
    if req.hfe_min is not None and dev["hfe_min"] is not None:
        need_hi = req.hfe_max if req.hfe_max is not None else req.hfe_min
        if dev["hfe_min"] > HFE_HIGH_FACTOR * need_hi:
            flags.append(Flag("high-gain", f"much higher gain (hFE min {dev['hfe_min']:g} vs "
                                           f"{need_hi:g}): risk of instability or oscillation; "
                                           "check the stage (common practice)"))
        elif dev["hfe_min"] * HFE_LOW_FACTOR < req.hfe_min:
            flags.append(Flag("low-gain", f"hFE min {dev['hfe_min']:g} is well below the needed "
                                          f"{req.hfe_min:g}"))
    if dev["ft"] is not None and ft_need is not None and dev["ft"] > FT_FAST_FACTOR * ft_need:
        flags.append(Flag("much-faster", (_much_faster, (dev["ft"],))))


def verdict_counts(result: RankResult) -> dict[str, int]:
    out = dict.fromkeys(VERDICTS, 0)
    for c in result.candidates:
        out[c.verdict] += 1
    return out


def assess(device: Device, requirement: Requirement, stress: Stress | None = None,
           policy: Policy | None = None, weights: Weights | None = None) -> Candidate:
    """One device against a requirement, with the same checks as :func:`rank`.

    A device of the wrong polarity or kind comes back with verdict ``incompatible``; the
    original itself is not excluded here (the swap-log audit re-checks recorded swaps).
    """
    from partsdb.derating import BUILTIN_POLICIES, DEFAULT_POLICY

    stress = stress or Stress()
    policy = policy or BUILTIN_POLICIES[DEFAULT_POLICY]
    weights = weights or DEFAULT_WEIGHTS
    cat = CatalogColumns.from_devices([device])
    rows = np.arange(1)
    ev = _evaluate(cat, rows, requirement, stress, policy, weights, None, None)
    reasons = []
    if device.polarity != requirement.polarity:
        reasons.append(f"polarity {device.polarity}, need {requirement.polarity}")
    if device.kind != requirement.kind:
        reasons.append(f"kind {device.kind}, need {requirement.kind}")
    return _candidates(cat, ev, None, requirement, stress, policy, None, None,
                       ["; ".join(reasons)] if reasons else None)[0]
