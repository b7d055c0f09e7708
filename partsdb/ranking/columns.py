"""The catalog as columns (:class:`CatalogColumns`): one numpy array per field, codes for choices.

Also the columns derived once per catalog for the checks (effective Tj max, free-air figures,
thermal parts of the ratings, log hFE) and the per-(polarity, kind) groups.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np

from partsdb.designations import normalize
from partsdb.device import Device, default_tj_max
from partsdb.ranking.model import KINDS, MATERIALS, POLARITIES, outline_key
from partsdb.thermal import free_air_case_to_ambient, mounting_resistance, rth_from_rating

NUMBERS: tuple[str, ...] = ("vceo", "vcbo", "vebo", "ic_max", "ptot", "tj_max", "hfe_min",
                            "hfe_max", "hfe_ic", "ft")
"""The numeric device fields held as columns."""


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
    vebo: np.ndarray
    ic_max: np.ndarray
    ptot: np.ndarray
    case_rated: np.ndarray
    """True when Ptot is a case rating (``ptot_ref == "case"``)."""
    tj_max: np.ndarray
    hfe_min: np.ndarray
    hfe_max: np.ndarray
    hfe_ic: np.ndarray
    """Collector current of the hFE test, A."""
    ft: np.ndarray
    package: np.ndarray
    pinout: np.ndarray
    packages: tuple[str, ...] = ()
    """Outline display names by code (the first spelling seen)."""
    pinouts: tuple[str, ...] = ()
    _groups: dict[tuple[int, int], tuple[np.ndarray, CatalogColumns]] = field(
        default_factory=dict, repr=False)
    _memo: dict[Any, Any] = field(default_factory=dict, repr=False)
    """Tables derived from these rows for the ranking (see :mod:`partsdb.ranking.fastpath`)."""

    @property
    def size(self) -> int:
        return int(self.polarity.shape[0])

    @classmethod
    def from_values(cls, designation: Sequence[str], key: Sequence[str] | None,
                    polarity: Sequence[str], kind: Sequence[str], material: Sequence[str | None],
                    numbers: Mapping[str, Any], ptot_ref: Sequence[str | None],
                    package: Sequence[str | None], pinout: Sequence[str | None],
                    sort: bool = True) -> CatalogColumns:
        """Build from plain sequences (``numbers``: the :data:`NUMBERS` fields as arrays or
        sequences with None/NaN for missing; vebo and hfe_ic may be left out)."""
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
        numbers = {"vebo": [None] * n, "hfe_ic": [None] * n, **numbers}
        num: dict[str, Any] = {
            name: arr(_floats(numbers[name], n) if not isinstance(numbers[name], np.ndarray)
                      else numbers[name].astype(float))
            for name in NUMBERS}
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
                               {name: col(name) for name in NUMBERS},
                               col("ptot_ref"), col("package"), col("pinout"))

    def take(self, rows: np.ndarray) -> CatalogColumns:
        """The given rows as a catalog of their own (same outline and pinout tables)."""
        view = CatalogColumns(
            designation=self.designation[rows], key=self.key[rows],
            polarity=self.polarity[rows], kind=self.kind[rows], material=self.material[rows],
            vceo=self.vceo[rows], vcbo=self.vcbo[rows], vebo=self.vebo[rows],
            ic_max=self.ic_max[rows], ptot=self.ptot[rows], case_rated=self.case_rated[rows],
            tj_max=self.tj_max[rows], hfe_min=self.hfe_min[rows], hfe_max=self.hfe_max[rows],
            hfe_ic=self.hfe_ic[rows], ft=self.ft[rows],
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
        # A FET (kind code -1: not one of the bipolar KINDS) is not even listed as incompatible.
        return np.flatnonzero(((self.polarity != code[0]) | (self.kind != code[1]))
                              & (self.kind >= 0))

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
        # by material code; the last entry serves the unknown code -1
        defaults = np.array([default_tj_max(m) for m in (*MATERIALS, None)])
        return np.where(np.isnan(self.tj_max), defaults[self.material], self.tj_max)

    @cached_property
    def free_air(self) -> np.ndarray:
        """Case-to-ambient K/W of each row's outline standing in free air (for case ratings)."""
        table = np.array([free_air_case_to_ambient(p)[0] for p in self.packages]
                         + [free_air_case_to_ambient(None)[0]])
        return table[self.package]

    @cached_property
    def rating_thermal(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray,
                                      np.ndarray, np.ndarray]:
        """What the thermal checks read of the recorded ratings alone: Rth junction-to-reference
        of every row (from its Ptot and effective Tj max), then the case-rated rows with their
        Ptot, Tj max, that Rth, their outline's free-air case-to-ambient figure and their
        outline class's case-to-sink figure."""
        rth = np.asarray(rth_from_rating(self.ptot, self.tj_effective), dtype=float)
        case = np.flatnonzero(self.case_rated)
        return (rth, case, self.ptot[case], self.tj_effective[case], rth[case],
                self.free_air[case], self.case_to_sink[case])

    @cached_property
    def case_to_sink(self) -> np.ndarray:
        """Mounting (case-to-sink) K/W of each row's outline class (:mod:`partsdb.thermal`)."""
        table = np.array([mounting_resistance(p) for p in self.packages]
                         + [mounting_resistance(None)])
        return table[self.package]

    @cached_property
    def case_free_air(self) -> np.ndarray:
        """:attr:`free_air` where Ptot is a case rating, NaN elsewhere: all the thermal checks
        read of the outline, so rows differing only in it share their distinct tuple."""
        return np.where(self.case_rated, self.free_air, np.nan)

    @cached_property
    def case_sink(self) -> np.ndarray:
        """:attr:`case_to_sink` where Ptot is a case rating, NaN elsewhere (as
        :attr:`case_free_air`)."""
        return np.where(self.case_rated, self.case_to_sink, np.nan)

    @cached_property
    def log_hfe(self) -> tuple[np.ndarray, np.ndarray]:
        lo = self.hfe_min
        hi = np.where(np.isnan(self.hfe_max), lo, self.hfe_max)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.log(lo), np.log(hi)

    def devices_at(self, rows: np.ndarray) -> list[dict[str, Any]]:
        """Each of ``rows`` as plain values (for details and reports), read column by column."""
        rows = np.asarray(rows, dtype=np.intp).reshape(-1)

        def names(codes: np.ndarray, table: Sequence[str]) -> list[str | None]:
            n = len(table)
            return [table[c] if 0 <= c < n else None for c in codes[rows].tolist()]

        columns = [self.designation[rows].tolist(), self.key[rows].tolist(),
                   names(self.polarity, POLARITIES), names(self.kind, KINDS),
                   names(self.material, MATERIALS),
                   *([None if v != v else v for v in getattr(self, n)[rows].astype(float).tolist()]
                     for n in NUMBERS),
                   ["case" if c else "ambient" for c in self.case_rated[rows].tolist()],
                   names(self.package, self.packages), names(self.pinout, self.pinouts)]
        return [dict(zip(_DEVICE_KEYS, values, strict=True)) for values in zip(*columns, strict=True)]


_DEVICE_KEYS = ("designation", "key", "polarity", "kind", "material", *NUMBERS,
                "ptot_ref", "package", "pinout")
"""The keys of :meth:`CatalogColumns.devices_at`, in its order."""


def _name(table: Sequence[str], code: Any) -> str | None:
    c = int(code)
    return table[c] if 0 <= c < len(table) else None


def _num(value: Any) -> float | None:
    v = float(value)
    return None if math.isnan(v) else v

