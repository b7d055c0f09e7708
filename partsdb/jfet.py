"""Bias point of a JFET common-source stage, and what swapping the JFET does to it.

Two networks (resistor names as read off the board):

* ``self``: gate to ground through a (high) gate resistor, Rs from source to ground, Rd from
  the supply to the drain; the gate sits at 0 V, so Vgs = -Id Rs.
* ``divider``: R1 from the supply to the gate, R2 from the gate to ground, Rs, Rd; the gate
  sits at VG = Vdd R2/(R1 + R2) (no gate current), so Vgs = VG - Id Rs.

Device model: Shockley's equation Id = Idss (1 - Vgs/Vp)^2 for Vp <= Vgs <= 0 (N-channel,
Vp = Vgs(off) < 0) in saturation, i.e. while Vds >= Vgs - Vp (Boylestad & Nashelsky,
*Electronic Devices and Circuit Theory*, FET biasing chapter; from memory). With the network's
line it is a quadratic in w = Vgs - Vp (the gate overdrive above pinch-off):
k w^2 + w - (VG - Vp) = 0 with k = Rs Idss/Vp^2. Of its two roots the physical one is the
non-negative one (Vgs >= Vp); the other lies below pinch-off, where Shockley's parabola
rises again although the channel is closed. It is taken in the cancellation-free form
w = 2 (VG - Vp)/(1 + sqrt(1 + 4 k (VG - Vp))).

When the solved Vds is below Vgs - Vp the pinch-off assumption fails: the stage is in the
ohmic (triode) region. That is said, and the point is solved again with the triode law of the
same square-law model, Id = (Idss/Vp^2) Vds (2 (Vgs - Vp) - Vds) (the Shichman-Hodges JFET of
SPICE with LAMBDA = 0, which equals Shockley's equation at Vds = Vgs - Vp), by bisection on
Id: the circuit's current falls and the device's rises as Id grows, so there is one root.
A divider that lifts the gate above the source (Vgs > 0) forward-biases the gate junction:
Shockley's equation does not hold there; the point is reported with region "gate-forward".

P-channel parts are solved as the mirror image (every voltage and current sign reversed):
the analysis runs on magnitudes with an N-channel, and the operating point reports Vgs and Vds
with the channel's own signs (N: Vgs <= 0, Vds > 0; P: Vgs >= 0, Vds < 0); Id is the drain
current magnitude.

Spread: a datasheet gives Idss and Vgs(off) as windows. Real parts correlate them (a part with
a high Idss pinches off at a larger |Vgs(off)|; common practice), so the corners analysed are
(Idss min, |Vgs(off)| min) and (Idss max, |Vgs(off)| max), and the typical part is the
geometric mean of each window (common practice, as for hFE). In saturation Id at a fixed
network rises with Idss and with |Vp|, so these two corners also bound Id over the whole
window when the parameters are not correlated. Temperature is not modelled (25 °C).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from partsdb.bias.stage import BiasError
from partsdb.eseries import nearest

JFET_NETWORKS: tuple[str, ...] = ("self", "divider")
SATURATION, OHMIC, GATE_FORWARD, CUT_OFF = "saturation", "ohmic", "gate-forward", "cut-off"

CORNERS_NOTE = ("corners: (Idss min, |Vgs(off)| min) and (Idss max, |Vgs(off)| max), since "
                "real parts correlate the two (common practice); in saturation Id rises with "
                "both, so these corners bound Id over the window either way; typical: the "
                "geometric mean of each window")
FIX_TARGET = "the original's drain current at its typical Idss and Vgs(off)"


class JfetError(BiasError):
    """A JFET stage or device input that makes no sense: field, value, expectation (the
    bipolar stages' error, so one handler serves every network)."""


def _positive(name: str, value: object, *, zero_ok: bool, expected: str) -> float:
    ok = isinstance(value, int | float) and not isinstance(value, bool) \
        and math.isfinite(float(value))
    if ok:
        v = float(value)  # type: ignore[arg-type]
        ok = v >= 0 if zero_ok else v > 0
    if not ok:
        raise JfetError(name, value, expected)
    return float(value)  # type: ignore[arg-type]


@dataclass(frozen=True)
class JfetStage:
    """A common-source JFET bias network: ``vdd`` the supply magnitude, resistances in ohms."""

    network: str
    vdd: float
    rd: float
    rs: float
    r1: float | None = None
    r2: float | None = None

    def __post_init__(self) -> None:
        if self.network not in JFET_NETWORKS:
            raise JfetError("network", self.network, "one of " + ", ".join(JFET_NETWORKS))
        _positive("vdd", self.vdd, zero_ok=False, expected="a supply magnitude above 0 V")
        _positive("rd", self.rd, zero_ok=True, expected="a drain resistance of 0 ohm or more")
        _positive("rs", self.rs, zero_ok=True, expected="a source resistance of 0 ohm or more")
        if self.network == "divider":
            for name in ("r1", "r2"):
                _positive(name, getattr(self, name), zero_ok=False,
                          expected="a resistance above 0 ohm (the divider needs R1 and R2)")
        else:
            for name in ("r1", "r2"):
                if getattr(self, name) is not None:
                    raise JfetError(name, getattr(self, name),
                                    f"no {name.upper()} for self bias (use jfet-divider)")

    @property
    def vg(self) -> float:
        """Gate voltage (magnitude, N-channel view): 0 for self bias, the divider's output."""
        if self.network == "divider":
            assert self.r1 is not None and self.r2 is not None
            return self.vdd * self.r2 / (self.r1 + self.r2)
        return 0.0

    def with_rs(self, rs: float) -> JfetStage:
        return JfetStage(self.network, self.vdd, self.rd, rs, self.r1, self.r2)

    def to_json(self) -> dict[str, Any]:
        return {"network": self.network, "vdd": self.vdd, "r1": self.r1, "r2": self.r2,
                "rd": self.rd, "rs": self.rs, "vg": self.vg}


def typical(low: float | None, high: float | None) -> float | None:
    """Geometric mean of a window, or whichever end exists (common practice)."""
    if low is not None and high is not None:
        return math.sqrt(low * high)
    return low if low is not None else high


@dataclass(frozen=True)
class JfetParams:
    """What the bias solution needs of a JFET: magnitudes of Idss (A) and Vgs(off) (V)."""

    name: str
    polarity: str
    """Channel: "n" or "p"."""
    idss_min: float | None
    idss_max: float | None
    vp_min: float | None
    """|Vgs(off)| at the low end of the window, V."""
    vp_max: float | None
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.polarity not in ("n", "p"):
            raise JfetError("polarity", self.polarity, "n or p (the channel)")
        for name in ("idss_min", "idss_max", "vp_min", "vp_max"):
            value = getattr(self, name)
            if value is not None:
                _positive(name, value, zero_ok=False, expected="a magnitude above 0")
        if self.idss_min is None and self.idss_max is None:
            raise JfetError("idss_min", None, f"an Idss window in the record of {self.name}")
        if self.vp_min is None and self.vp_max is None:
            raise JfetError("vgs_off_min", None,
                            f"a Vgs(off) window in the record of {self.name}")
        for lo, hi in (("idss_min", "idss_max"), ("vp_min", "vp_max")):
            a, b = getattr(self, lo), getattr(self, hi)
            if a is not None and b is not None and a > b:
                raise JfetError(lo, a, f"at most {hi} ({b:g})")

    def corner(self, which: str) -> tuple[float, float]:
        """(Idss, |Vp|) at "min", "typ" or "max" (a missing end falls back to the other)."""
        if which == "typ":
            idss, vp = typical(self.idss_min, self.idss_max), typical(self.vp_min, self.vp_max)
        elif which == "min":
            idss = self.idss_min if self.idss_min is not None else self.idss_max
            vp = self.vp_min if self.vp_min is not None else self.vp_max
        else:
            idss = self.idss_max if self.idss_max is not None else self.idss_min
            vp = self.vp_max if self.vp_max is not None else self.vp_min
        assert idss is not None and vp is not None
        return idss, vp


@dataclass
class JfetPoint:
    """One solved operating point; ``vgs``/``vds`` carry the channel's signs."""

    idss: float
    vp: float
    """|Vgs(off)| used, V."""
    id: float
    vgs: float
    vds: float
    vd: float
    vs: float
    region: str

    @property
    def power(self) -> float:
        return abs(self.vds) * self.id

    def to_json(self) -> dict[str, Any]:
        return {"idss": self.idss, "vp": self.vp, "id": self.id, "vgs": self.vgs,
                "vds": self.vds, "vd": self.vd, "vs": self.vs, "power": self.power,
                "region": self.region}


def saturation_overdrive(vg: float, rs: float, idss: float, vp: float) -> float:
    """w = Vgs - Vp (>= 0) from k w^2 + w - (VG + |Vp|) = 0, the physical root."""
    c = vg + vp
    k = rs * idss / (vp * vp)
    return 2.0 * c / (1.0 + math.sqrt(1.0 + 4.0 * k * c))


def _triode(vgs: float, vds: float, idss: float, vp: float) -> float:
    """Square-law device current for Vds >= 0 (N-channel magnitudes, Vp = -vp)."""
    w = vgs + vp
    if w <= 0:
        return 0.0
    beta = idss / (vp * vp)
    if vds >= w:
        return beta * w * w
    return beta * vds * (2.0 * w - vds)


def solve_jfet(stage: JfetStage, idss: float, vp: float, polarity: str = "n") -> JfetPoint:
    """The operating point with Idss and |Vgs(off)| = ``vp`` (see the module text)."""
    vg, rs, rd = stage.vg, stage.rs, stage.rd
    w = saturation_overdrive(vg, rs, idss, vp)
    i_d = idss * (w / vp) ** 2
    vgs = w - vp
    vds = stage.vdd - i_d * (rd + rs)
    region = SATURATION
    if vgs > 0:
        region = GATE_FORWARD
    elif vds < w:
        region = OHMIC
        top = stage.vdd / (rd + rs) if rd + rs > 0 else idss

        def excess(current: float) -> float:
            return current - _triode(vg - current * rs, stage.vdd - current * (rd + rs),
                                     idss, vp)

        lo, hi = 0.0, top
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            if excess(mid) > 0:
                hi = mid
            else:
                lo = mid
        i_d = 0.5 * (lo + hi)
        vgs = vg - i_d * rs
        vds = stage.vdd - i_d * (rd + rs)
    sign = 1.0 if polarity == "n" else -1.0
    return JfetPoint(idss=idss, vp=vp, id=i_d, vgs=sign * vgs, vds=sign * vds,
                     vd=sign * (stage.vdd - i_d * rd), vs=sign * i_d * rs, region=region)


_REGION_NOTES = {
    OHMIC: "Vds is below Vgs - Vp: the pinch-off (saturation) assumption of Shockley's "
           "equation fails; the point shown is the ohmic-region solution of the same "
           "square-law model",
    GATE_FORWARD: "the gate would sit above the source (Vgs > 0 for N-channel): the gate "
                  "junction is forward-biased and Shockley's equation does not hold",
}


@dataclass
class JfetResult:
    """A stage analysed for one JFET: typical point and the two corners."""

    device: str
    polarity: str
    typ: JfetPoint
    low: JfetPoint
    high: JfetPoint
    notes: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        return {"device": self.device, "polarity": self.polarity, **self.typ.to_json(),
                "corner_low": self.low.to_json(), "corner_high": self.high.to_json(),
                "notes": list(self.notes)}


def analyse_jfet(stage: JfetStage, params: JfetParams) -> JfetResult:
    """Solve ``stage`` at the typical part and at both corners of its window."""
    points = {w: solve_jfet(stage, *params.corner(w), params.polarity)
              for w in ("typ", "min", "max")}
    notes = list(params.notes)
    for label, p in (("typical", points["typ"]), ("low corner", points["min"]),
                     ("high corner", points["max"])):
        if p.region in _REGION_NOTES:
            notes.append(f"{params.name} ({label}): {_REGION_NOTES[p.region]}")
    if None in (params.idss_min, params.idss_max, params.vp_min, params.vp_max):
        notes.append(f"{params.name}: Idss or Vgs(off) window incomplete; the spread is "
                     "understated")
    return JfetResult(params.name, params.polarity, points["typ"], points["min"],
                      points["max"], notes)


def rs_for(stage: JfetStage, target_id: float, idss: float, vp: float) -> float | None:
    """The source resistor giving ``target_id`` in saturation: from Shockley's equation the
    gate overdrive w = |Vp| sqrt(Id/Idss), Vgs = w - |Vp|, and Rs = (VG - Vgs)/Id. None when
    no resistor above 0 ohm does (the target needs Vgs above the gate voltage, or Id >= Idss,
    which needs a forward-biased gate)."""
    if not 0 < target_id < idss:
        return None  # Vgs would have to be 0 or above: the gate junction forward-biased
    vgs = vp * math.sqrt(target_id / idss) - vp
    rs = (stage.vg - vgs) / target_id
    return rs if rs > 0 else None


@dataclass
class RsOption:
    """A preferred source resistor and the drain current it gives (typical and corners)."""

    value: float
    id: float
    vgs: float
    vds: float
    region: str
    id_low: float
    id_high: float

    def to_json(self) -> dict[str, Any]:
        return {"value": self.value, "id": self.id, "vgs": self.vgs, "vds": self.vds,
                "region": self.region, "id_corner_low": self.id_low,
                "id_corner_high": self.id_high}


@dataclass
class RsFix:
    """The source resistor that restores the original's drain current with the substitute."""

    original_value: float
    exact: float
    target_id: float
    e12: RsOption
    e24: RsOption
    target: str = FIX_TARGET

    def to_json(self) -> dict[str, Any]:
        return {"resistor": "rs", "original_value": self.original_value, "exact": self.exact,
                "target_id": self.target_id, "target": self.target,
                "e12": self.e12.to_json(), "e24": self.e24.to_json()}


def _option(stage: JfetStage, params: JfetParams, value: float) -> RsOption:
    fixed = stage.with_rs(value)
    p = solve_jfet(fixed, *params.corner("typ"), params.polarity)
    lo = solve_jfet(fixed, *params.corner("min"), params.polarity)
    hi = solve_jfet(fixed, *params.corner("max"), params.polarity)
    return RsOption(value, p.id, p.vgs, p.vds, p.region, lo.id, hi.id)


@dataclass
class JfetReport:
    """A JFET stage with its original part and, optionally, a substitute and the Rs fix."""

    stage: JfetStage
    original: JfetResult
    substitute: JfetResult | None = None
    fix: RsFix | None = None
    notes: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {"network": self.stage.network, "stage": self.stage.to_json(),
                               "original": self.original.to_json()}
        if self.substitute is not None:
            o, s = self.original.typ, self.substitute.typ
            out["substitute"] = self.substitute.to_json()
            out["shift"] = {"id_change": s.id / o.id - 1.0 if o.id > 0 else None,
                            "vds_change": s.vds - o.vds, "ohmic": s.region == OHMIC}
            out["fix"] = None if self.fix is None else self.fix.to_json()
        out["notes"] = [CORNERS_NOTE, *self.notes]
        return out


def analyse_jfet_stage(stage: JfetStage, original: JfetParams,
                       substitute: JfetParams | None = None) -> JfetReport:
    """Analyse the stage with ``original``; with ``substitute``, its point and the Rs fix."""
    if substitute is not None and substitute.polarity != original.polarity:
        raise JfetError("substitute", substitute.name,
                        f"a {original.polarity.upper()}-channel JFET like {original.name}")
    report = JfetReport(stage, analyse_jfet(stage, original))
    if substitute is None:
        return report
    report.substitute = analyse_jfet(stage, substitute)
    target = report.original.typ
    if target.region != SATURATION:
        report.notes.append(f"the original is in the {target.region} region: no Rs fix "
                            "computed (restoring its Id is not a bias target)")
        return report
    exact = rs_for(stage, target.id, *substitute.corner("typ"))
    if exact is None:
        report.notes.append(f"no source resistor restores Id {target.id * 1e3:.3g} mA with "
                            f"{substitute.name} (its Idss is too low for this gate voltage)")
        return report
    report.fix = RsFix(stage.rs, exact, target.id, _option(stage, substitute, nearest(exact, "E12")),
                       _option(stage, substitute, nearest(exact, "E24")))
    check = solve_jfet(stage.with_rs(exact), *substitute.corner("typ"), substitute.polarity)
    if check.region != SATURATION:
        report.notes.append(f"with Rs {exact:.4g} ohm {substitute.name} is in the "
                            f"{check.region} region: the fix does not restore the stage")
    return report


def params_from_record(record: Any) -> JfetParams:
    """JFET parameters from a stored device record: Idss and Vgs(off) windows by magnitude
    (a record may store Vgs(off) signed, negative for an N-channel part)."""
    kind = getattr(record, "kind", None)
    if kind != "jfet":
        words = getattr(record, "polarity_text", None) or str(getattr(record, "polarity", ""))
        raise JfetError("device", record.designation, f"a JFET ({record.designation} is a "
                        f"{words} {kind})")

    def window(low: str, high: str) -> tuple[float | None, float | None]:
        values = [abs(float(v)) for v in (getattr(record, low, None),
                                          getattr(record, high, None)) if v is not None]
        if not values:
            return None, None
        return min(values), max(values)

    idss_min, idss_max = window("idss_min", "idss_max")
    vp_min, vp_max = window("vgs_off_min", "vgs_off_max")
    return JfetParams(name=record.designation, polarity=record.polarity, idss_min=idss_min,
                      idss_max=idss_max, vp_min=vp_min, vp_max=vp_max)
