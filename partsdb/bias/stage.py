"""The inputs of a bias analysis: the network (Stage), the transistor (TransistorParams), the
constants and the temperature laws (see :mod:`partsdb.bias` for the method and sources)."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

from partsdb.device import Device, require_bipolar
from partsdb.errors import InvalidInput

NETWORKS: tuple[str, ...] = ("divider", "collector-feedback", "fixed")
MODELS: tuple[str, ...] = ("auto", "fixed-vbe", "exponential")
ACTIVE, SATURATION, CUT_OFF = "active", "saturation", "cut-off"

VCE_SAT_DEFAULT = 0.2
"""Vce below which a stage is called saturated when the record has no Vce(sat), V (common
practice for small-signal parts)."""
VCE_SAT_DARLINGTON = 0.9
"""Vce(sat) assumed for a Darlington whose record has none, V: the output transistor's Vbe
plus the driver's saturation, about 0.7 + 0.2 V (common practice)."""

AMBIENT_MIN, AMBIENT_MAX = -55.0, 300.0
"""Ambient range the bias model accepts, °C (-55 °C: the low end of military temperature
ranges, common practice; 300 °C: the highest Tj max a record may hold)."""
VBE_FLOOR = 0.05
"""Smallest Vbe(on) the -2 mV/K shift may reach before the ambient is refused, V (below it the
linear shift has lost its meaning; a choice made here)."""
CUT_OFF_FRACTION = 1e-4
"""A stage whose collector carries less than this fraction of Vcc/(Rc + Re) is cut off (the
exponential model has no sharp edge; a threshold chosen here)."""

# Vbe(on) at about 1 mA, 25 °C, when the record has none (DOMAIN notes; common practice).
VBE_DEFAULT: dict[str, float] = {"ge": 0.25, "si": 0.65, "other": 0.65}
VBE_DARLINGTON = 1.3
VBE_TEMPCO = -2e-3
"""dVbe/dT at constant current, V/K (common practice, silicon about -2 mV/K)."""

ICBO_GE_ASSUMED = 3e-6
"""Icbo at 25 °C assumed for a germanium part whose record has none, A (common practice: small
germanium transistors leak a few µA)."""
LEAKAGE_DOUBLING = 10.0
"""Kelvin per doubling of Icbo (common practice)."""

FIRM_FACTOR = 0.1
STIFF_FACTOR = 0.01
T_REFERENCE = 25.0


class BiasError(InvalidInput):
    """A stage or device input that makes no sense; names the field, value and expectation."""

    def __init__(self, field: str, value: object, expected: str) -> None:
        self.field = field
        self.value = value
        self.expected = expected
        what = "missing" if value is None else f"{value!r} is not valid"
        super().__init__(f"{field}: {what}; expected {expected}")


def alpha_from_beta(beta: float) -> float:
    """Common-base current gain, alpha = beta/(beta + 1)."""
    return beta / (beta + 1.0)


def beta_from_alpha(alpha: float) -> float:
    """Common-emitter current gain, beta = alpha/(1 - alpha)."""
    return alpha / (1.0 - alpha)


def thermal_voltage(celsius: float) -> float:
    """Vt = kT/q at ``celsius`` (25.85 mV at 27 °C)."""
    from scipy.constants import Boltzmann, elementary_charge, zero_Celsius

    return Boltzmann * (celsius + zero_Celsius) / elementary_charge


def _number(name: str, value: object, *, low: float = 0.0, allow_low: bool = True,
            expected: str | None = None) -> float:
    ok = isinstance(value, int | float) and not isinstance(value, bool) \
        and math.isfinite(float(value))
    if ok:
        v = float(value)  # type: ignore[arg-type]
        ok = v >= low if allow_low else v > low
    if not ok:
        raise BiasError(name, value, expected or (
            f"a number >= {low:g}" if allow_low else f"a number > {low:g}"))
    return float(value)  # type: ignore[arg-type]


SUPPLY_RULE = "Vcc is the supply magnitude; a PNP stage may be given as a negative supply"
"""The supply rule in one line, for the faces to show beside the field."""


def supply_magnitude(vcc: float, polarity: str, field: str = "vcc") -> float:
    """The supply magnitude of a stage whose transistor has ``polarity``: a PNP stage may be
    given its (negative) supply as drawn; an NPN stage's must be positive; 0 V is refused."""
    if vcc < 0 and polarity == "npn":
        raise BiasError(field, f"{vcc:g} V", "a positive supply for an NPN stage (only a PNP "
                        "stage may be given a negative supply)")
    if vcc == 0:
        raise BiasError(field, "0 V", "a supply magnitude above 0 V")
    return abs(vcc)


@dataclass(frozen=True)
class Stage:
    """A common-emitter bias network; resistances in ohms, ``vcc`` the supply magnitude."""

    network: str
    vcc: float
    rc: float
    re: float | None
    r1: float | None = None
    r2: float | None = None
    rb: float | None = None

    def __post_init__(self) -> None:
        if self.network not in NETWORKS:
            raise BiasError("network", self.network, "one of " + ", ".join(NETWORKS))
        _number("vcc", self.vcc, allow_low=False, expected="a supply magnitude above 0 V")
        _number("rc", self.rc, expected="a resistance of 0 ohm or more")
        if self.re is None:
            raise BiasError("re", None, f"an emitter resistance for the {self.network} "
                            "network (0 for none)")
        _number("re", self.re, expected="a resistance of 0 ohm or more")
        if self.network == "divider":
            for name in ("r1", "r2"):
                _number(name, getattr(self, name), allow_low=False,
                        expected="a resistance above 0 ohm (the divider needs R1 and R2)")
            if self.rb is not None:
                raise BiasError("rb", self.rb, "no Rb for a divider network (use R1, R2)")
        else:
            _number("rb", self.rb, allow_low=False,
                    expected=f"a resistance above 0 ohm (the {self.network} network needs Rb)")
            for name in ("r1", "r2"):
                if getattr(self, name) is not None:
                    raise BiasError(name, getattr(self, name),
                                         f"no {name.upper()} for a {self.network} network "
                                         "(it uses Rb)")

    @property
    def fix_resistor(self) -> str:
        """The resistor a swap fix changes: R2 for a divider, Rb otherwise."""
        return "r2" if self.network == "divider" else "rb"

    def with_resistor(self, name: str, value: float) -> Stage:
        return dataclasses.replace(self, **{name: value})

    def base_source(self) -> tuple[float, float]:
        """Open-circuit voltage and source resistance driving the base (divider, fixed)."""
        if self.network == "divider":
            assert self.r1 is not None and self.r2 is not None
            return self.vcc * self.r2 / (self.r1 + self.r2), self.r1 * self.r2 / (self.r1 + self.r2)
        assert self.rb is not None
        return self.vcc, self.rb

    def to_json(self) -> dict[str, Any]:
        return {"network": self.network, "vcc": self.vcc, "r1": self.r1, "r2": self.r2,
                "rb": self.rb, "rc": self.rc, "re": self.re}


@dataclass(frozen=True)
class TransistorParams:
    """What the bias solution needs of a transistor; magnitudes, values at 25 °C."""

    name: str
    polarity: str
    hfe: float
    """beta used for the nominal solution (typical)."""
    vbe: float
    """Vbe(on) magnitude at ``vbe_ic`` (or about 1 mA when that is unknown), V."""
    vbe_ic: float | None = None
    """Test current of ``vbe``; with it the exponential model is available."""
    hfe_min: float | None = None
    hfe_max: float | None = None
    vce_sat: float = VCE_SAT_DEFAULT
    icbo: float = 0.0
    """Collector-base leakage at 25 °C, A."""
    material: str = "si"
    kind: str = "bjt"
    notes: tuple[str, ...] = ()
    tj_max: float | None = None
    """Maximum junction temperature, °C (None: not known; the ambient is then not checked)."""

    def __post_init__(self) -> None:
        if self.polarity not in ("npn", "pnp"):
            raise BiasError("polarity", self.polarity, "npn or pnp")
        _number("hfe", self.hfe, low=1.0, expected="a current gain of 1 or more")
        _number("vbe", self.vbe, allow_low=False, expected="a Vbe magnitude above 0 V")
        if self.vbe > 5:
            raise BiasError("vbe", self.vbe, "a Vbe magnitude up to 5 V")
        if self.vbe_ic is not None:
            _number("vbe_ic", self.vbe_ic, allow_low=False, expected="a test current above 0 A")
        for name in ("hfe_min", "hfe_max"):
            if getattr(self, name) is not None:
                _number(name, getattr(self, name), low=1.0, expected="a current gain >= 1")
        _number("vce_sat", self.vce_sat, expected="a voltage of 0 V or more")
        _number("icbo", self.icbo, expected="a leakage current of 0 A or more")

    @property
    def exponential_ok(self) -> bool:
        """True when IS can be derived: a measured Vbe at a known current, one junction."""
        return self.vbe_ic is not None and self.kind != "darlington"

    @property
    def gain_window(self) -> tuple[float, float, float]:
        """(min, typical, max) beta; a missing end falls back to the typical value."""
        lo = self.hfe_min if self.hfe_min is not None else self.hfe
        hi = self.hfe_max if self.hfe_max is not None else self.hfe
        return lo, self.hfe, hi


def typical_hfe(hfe_min: float | None, hfe_max: float | None) -> float | None:
    """Geometric mean of the hFE window, or whichever end exists (common practice: hFE spreads
    by ratios, so the middle of the window is the geometric mean)."""
    if hfe_min is not None and hfe_max is not None:
        return math.sqrt(hfe_min * hfe_max)
    return hfe_min if hfe_min is not None else hfe_max


def params_from_device(device: Device) -> TransistorParams:
    """The bias parameters of a stored device, with what had to be assumed in ``notes``."""
    require_bipolar(device, "the bias analysis")
    notes: list[str] = []
    hfe = typical_hfe(device.hfe_min, device.hfe_max)
    if hfe is None:
        raise BiasError("hfe_min", None, f"an hFE window in the record of "
                                              f"{device.designation} (or give --hfe)")
    if device.vbe_on is not None:
        vbe, vbe_ic = device.vbe_on, device.vbe_ic
    else:
        vbe = VBE_DARLINGTON if device.kind == "darlington" else VBE_DEFAULT.get(
            device.material, 0.65)
        vbe_ic = None
        notes.append(f"{device.designation}: Vbe(on) not in the record, {vbe:g} V assumed "
                     f"for {device.kind} {device.material} (common practice)")
    if device.vce_sat is not None:
        vce_sat = device.vce_sat
    elif device.kind == "darlington":
        vce_sat = VCE_SAT_DARLINGTON
        notes.append(f"{device.designation}: Vce(sat) not in the record, {vce_sat:g} V assumed "
                     "for a Darlington (output Vbe plus driver saturation; common practice)")
    else:
        vce_sat = VCE_SAT_DEFAULT
    if device.icbo is not None:
        icbo = device.icbo
    elif device.material == "ge":
        icbo = ICBO_GE_ASSUMED
        notes.append(f"{device.designation}: Icbo not in the record, {ICBO_GE_ASSUMED * 1e6:g} µA "
                     "at 25 °C assumed for germanium (common practice)")
    else:
        icbo = 0.0  # silicon leaks nanoamps: negligible for bias
    return TransistorParams(name=device.designation, polarity=device.polarity, hfe=hfe, vbe=vbe,
                            vbe_ic=vbe_ic, hfe_min=device.hfe_min, hfe_max=device.hfe_max,
                            vce_sat=vce_sat, icbo=icbo, material=device.material,
                            kind=device.kind, notes=tuple(notes),
                            tj_max=device.tj_max_or_default()[0])


def vbe_at(params: TransistorParams, ambient: float) -> float:
    """Vbe(on) at ``ambient``: the 25 °C value shifted by -2 mV/K (common practice)."""
    scale = 2.0 if params.kind == "darlington" else 1.0  # two junctions in series
    return params.vbe + scale * VBE_TEMPCO * (ambient - T_REFERENCE)


def leakage_at(params: TransistorParams, ambient: float) -> float:
    """Icbo at ``ambient``, doubling every 10 K from its 25 °C value (common practice)."""
    return params.icbo * 2.0 ** ((ambient - T_REFERENCE) / LEAKAGE_DOUBLING)


def saturation_current(params: TransistorParams, ambient: float) -> float:
    """IS such that IS (exp(Vbe/Vt) - 1) equals the test current at ``ambient``."""
    ic_test = params.vbe_ic if params.vbe_ic is not None else 1e-3
    return ic_test / math.expm1(vbe_at(params, ambient) / thermal_voltage(ambient))


