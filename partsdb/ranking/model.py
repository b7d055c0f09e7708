"""Inputs of a ranking: the requirement, the circuit stress, the weights and past swaps.

Also the vocabularies the engine codes its arrays with (polarities, kinds, materials, check
statuses, verdicts) and the parameter tables (label, unit) derived from ``device.FIELDS``.
The requirement and stress fields themselves are tabled in :mod:`partsdb.spec_fields`.
Pure domain, no numpy.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, fields, replace
from functools import cached_property
from typing import Any

from partsdb.designations import normalize
from partsdb.device import FIELD_BY_NAME, Device
from partsdb.errors import InvalidInput
from partsdb.spec_fields import DEFAULT_AMBIENT, STRESS_FIELDS

POLARITIES: tuple[str, ...] = ("npn", "pnp")
KINDS: tuple[str, ...] = ("bjt", "darlington")
MATERIALS: tuple[str, ...] = ("si", "ge", "other")


PARAMETERS: tuple[str, ...] = ("vceo", "vcbo", "vebo", "ic_max", "ptot", "tj_max", "ft", "hfe",
                               "package", "pinout", "material")
# An unknown value on these, against a known need, means the part cannot be confirmed.
PRIMARY: tuple[str, ...] = ("vceo", "ic_max", "ptot")

_FIELD_OF: dict[str, str] = {"hfe": "hfe_min"}
"""The device field a check parameter reads (its label and unit), where the names differ."""
UNIT: dict[str, str] = {p: FIELD_BY_NAME[_FIELD_OF.get(p, p)].unit for p in PARAMETERS}
LABEL: dict[str, str] = {p: FIELD_BY_NAME[_FIELD_OF.get(p, p)].label.removesuffix(" min")
                         for p in PARAMETERS}

FIT_CODES: dict[str, str] = {"package": "other-outline", "pinout": "re-form-leads",
                             "material": "material-change"}
"""The fit checks, compared as words; when one is marginal it needs work at the bench, listed
under this code among the JSON flags (:meth:`partsdb.ranking.Candidate.flag_codes`)."""

# hFE thresholds (common practice): a minimum below half the needed minimum is "well below";
# a minimum above three times the needed maximum is "much higher gain".
HFE_LOW_FACTOR = 2.0
HFE_HIGH_FACTOR = 3.0
# A part more than ten times faster than the original (or the need) may oscillate (common
# practice); its fT sub-score falls from there, to half marks at 100 times.
FT_FAST_FACTOR = 10.0
# hFE measured at test currents more than a decade apart are not comparable (gain falls at both
# ends of the current range; common practice): the hFE check is then at best marginal.
HFE_CURRENT_DECADES = 1.0
HEATSINK_FREE_AIR = math.inf
"""``--heatsink free-air``: no sink at all (an infinite sink-to-ambient resistance): a
case-rated part stands in free air on its bare outline."""

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
    vebo: float | None = None
    ic_max: float | None = None
    ptot: float | None = None
    ptot_ref: str | None = None
    tj_max: float | None = None
    hfe_min: float | None = None
    hfe_max: float | None = None
    hfe_ic: float | None = None
    """Collector current of the hFE test, A."""
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
        for name in ("vceo", "vcbo", "vebo", "ic_max", "ptot", "hfe_min", "hfe_max", "hfe_ic",
                     "ft"):
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
        if device.kind not in KINDS:
            raise SpecError(f"{device.designation}: a {device.kind} (field-effect transistor), "
                            "not a bipolar part; this substitute finder ranks bipolar "
                            "transistors (npn/pnp) only")
        return cls(polarity=device.polarity, kind=device.kind, material=device.material,
                   vceo=device.vceo, vcbo=device.vcbo, vebo=device.vebo, ic_max=device.ic_max,
                   ptot=device.ptot, ptot_ref=device.ptot_ref, tj_max=device.tj_max,
                   hfe_min=device.hfe_min, hfe_max=device.hfe_max, hfe_ic=device.hfe_ic,
                   ft=device.ft, package=device.package,
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
    """What the circuit does to the part (None: not given). SI units, temperatures in °C.

    One attribute per row of :data:`partsdb.spec_fields.STRESS_FIELDS` (a test checks both
    agree); the checks of each row are in :mod:`partsdb.ranking.checks`.
    """

    vce_peak: float | None = None
    veb_peak: float | None = None
    """Highest reverse base-emitter voltage, V (the need on Vebo)."""
    ic_peak: float | None = None
    power: float | None = None
    """Dissipation in the part, W."""
    ambient: float = DEFAULT_AMBIENT
    freq: float | None = None
    """Highest signal frequency the stage must amplify, Hz."""
    heatsink: float | None = None
    """Sink-to-ambient thermal resistance for case-rated parts, K/W; :data:`HEATSINK_FREE_AIR`
    (infinite) for no sink at all; None: not given (a case-rated original's own sink is
    assumed, see :mod:`partsdb.ranking.checks`)."""

    def __post_init__(self) -> None:
        for row in STRESS_FIELDS:
            if row.positive:
                _check_positive(row.name, getattr(self, row.name))
        if isinstance(self.ambient, bool) or not isinstance(self.ambient, int | float) \
                or not math.isfinite(self.ambient) or not -80 <= self.ambient <= 250:
            raise SpecError(f"ambient: {self.ambient!r} is not valid; expected a temperature in °C "
                            "between -80 and 250")
        if self.heatsink is not None and not (isinstance(self.heatsink, int | float)
                                              and not math.isnan(self.heatsink)
                                              and self.heatsink >= 0):
            raise SpecError(f"heatsink: {self.heatsink!r} is not valid; expected a thermal "
                            "resistance in K/W, 0 or more, or free-air")

    @classmethod
    def from_values(cls, values: Mapping[str, Any]) -> Stress:
        """From a mapping of stress names (None or absent: the row's default)."""
        unknown = sorted(set(values) - {row.name for row in STRESS_FIELDS})
        if unknown:
            raise SpecError(f"unknown stress field(s): {', '.join(unknown)}; known: "
                            + ", ".join(row.name for row in STRESS_FIELDS))
        return cls(**{row.name: values[row.name] for row in STRESS_FIELDS
                      if values.get(row.name) is not None})

    @property
    def given(self) -> bool:
        """True when any stress that sets a need is given (ambient and heat sink alone do not)."""
        return any(getattr(self, row.name) is not None for row in STRESS_FIELDS
                   if row.sets_need)

    @property
    def free_air(self) -> bool:
        """True for ``--heatsink free-air``."""
        return self.heatsink is not None and math.isinf(self.heatsink)

    def to_json(self) -> dict[str, Any]:
        out = {row.name: getattr(self, row.name) for row in STRESS_FIELDS}
        if self.free_air:
            out["heatsink"] = "free-air"
        return out


@dataclass(frozen=True)
class Weights:
    """Relative weight of each criterion in the score (>= 0; at least one above 0)."""

    vceo: float = 20.0
    vcbo: float = 5.0
    vebo: float = 3.0
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
