"""The requirement and circuit-stress field tables: one row per field, beside ``device.FIELDS``.

A substitution is asked with two sets of values: the *requirement* (what the original offered,
or a spec given directly) and the *stress* (what the circuit does to the part). Each field is one
row here: its name (the :class:`partsdb.ranking.Requirement` / :class:`partsdb.ranking.Stress`
attribute, the JSON key and the spec-line name), label, unit, CLI option and help. The
``substitute`` and ``swaplog add`` options, the TUI Substitute view's inputs, the job-sheet rows
and the swap log's stress text are all built from these tables, so adding a stress is one row
here plus its check in :mod:`partsdb.ranking.checks`.

Light on purpose (no numpy): the CLI builds its options from these tables at start-up.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from partsdb.device import FET_KINDS, FIELD_BY_NAME

SpecKind = Literal["quantity", "temperature", "choice", "text", "window", "sink"]
"""How a field is read: ``temperature`` takes °C or kelvin (``45``, ``318K``), see
:func:`partsdb.units.parse_temperature`; ``sink`` a thermal resistance or ``free-air``
(:func:`read_sink`)."""

FREE_AIR = "free-air"
"""The word ``--heatsink`` takes for no heat sink at all."""


def shown_sink(value: float) -> str | None:
    """``free-air`` for the infinite sink :func:`read_sink` reads it as, else None."""
    return FREE_AIR if value == float("inf") else None


def read_sink(text: str, name: str = "heatsink") -> float:
    """A heat sink as given: sink-to-ambient K/W (``2``, ``1.8K/W``, 0 or more) or ``free-air``
    (infinite: no sink). Raises :class:`partsdb.units.UnitError` naming the field."""
    from partsdb.units import UnitError, parse_quantity

    word = text.strip().lower().replace(" ", "-")
    if word in (FREE_AIR, "freeair", "none"):
        return float("inf")
    expected = f"a thermal resistance in K/W such as 2K/W (0 or more), or {FREE_AIR}"
    try:
        value = parse_quantity(text, "K/W", name)
    except UnitError as err:
        raise UnitError(name, text, expected) from err
    if value < 0:
        raise UnitError(name, text, expected)
    return value


@dataclass(frozen=True)
class SpecField:
    """One requirement or stress field and how every face shows and reads it."""

    name: str
    """Attribute of Requirement / Stress, JSON key, spec-line name (``vceo=60V``)."""
    label: str
    """Row label in reports and the TUI."""
    unit: str
    """Unit symbol of a quantity ("" for none)."""
    option: str
    """CLI option (``--vce-peak``)."""
    help: str
    """CLI help and TUI hint."""
    kind: SpecKind = "quantity"
    choices: tuple[str, ...] = ()
    short: str = ""
    """Short label for narrow places (a table cell, a TUI input); the label when empty."""
    positive: bool = True
    """A quantity that must be above 0 (ambient and heat sink may be 0 or below)."""
    default: float | None = None
    """Value when not given (None: not given)."""
    sets_need: bool = True
    """A stress that sets a need of its own (ambient and heat sink only modify others)."""
    applies: Literal["all", "bipolar", "fet"] = "all"
    """The originals a stress concerns: bipolar transistors, field-effect ones or all; the
    faces show a stress only for the originals it concerns (:func:`stresses_for`)."""

    @property
    def brief(self) -> str:
        return self.short or self.label


def _device(name: str, option: str, help: str, label: str = "") -> SpecField:
    """A requirement row for a device field: label, unit and choices from ``device.FIELDS``."""
    spec = FIELD_BY_NAME[name]
    kind: SpecKind = "quantity" if spec.kind == "quantity" else \
        "choice" if spec.kind == "choice" else "text"
    return SpecField(name, label or spec.label, spec.unit, option, help, kind, spec.choices)


REQUIREMENT_FIELDS: tuple[SpecField, ...] = (
    _device("polarity", "--polarity", "Polarity of the part needed (overrides the stored record)."),
    _device("kind", "--kind", "bjt or darlington (default for a given spec: bjt)."),
    _device("material", "--material", "Material of the original (si, ge, other)."),
    _device("vceo", "--vceo", "Vceo needed, e.g. 30V."),
    _device("vcbo", "--vcbo", "Vcbo needed."),
    _device("ic_max", "--ic", "Ic max needed, e.g. 0.5A."),
    _device("ptot", "--ptot", "Ptot needed, e.g. 1W."),
    _device("ptot_ref", "--ptot-ref", "Whether the given Ptot is a free-air (ambient) or case "
                                      "rating.", label="Ptot rated at"),
    SpecField("hfe", "hFE", "", "--hfe", "hFE window needed, e.g. 60..180 (low end first).",
              "window"),
    _device("tj_max", "--tj-max", "Tj max of the original in °C."),
    _device("ft", "--ft", "fT needed, e.g. 2MHz."),
    _device("package", "--package", "Outline of the original, e.g. TO-5."),
    _device("pinout", "--pinout", "Lead order of the original, e.g. EBC."),
)
"""What a substitute must offer. ``hfe`` is a window: it sets ``hfe_min`` and ``hfe_max``."""

REQUIREMENT_BY_NAME: dict[str, SpecField] = {f.name: f for f in REQUIREMENT_FIELDS}

WINDOW_ENDS: dict[str, tuple[str, str]] = {"hfe": ("hfe_min", "hfe_max")}
"""The Requirement attributes a window field sets (low end, high end)."""

SPEC_NAMES: tuple[str, ...] = tuple(
    name for f in REQUIREMENT_FIELDS for name in WINDOW_ENDS.get(f.name, (f.name,)))
"""Requirement attributes a spec may give (the window ends in place of the window)."""

DEFAULT_AMBIENT = 25.0

STRESS_FIELDS: tuple[SpecField, ...] = (
    SpecField("vce_peak", "Vce peak", "V", "--vce-peak",
              "Highest collector-emitter voltage in the circuit (DC + peak), e.g. 18V.",
              short="Vce", applies="bipolar"),
    SpecField("veb_peak", "Veb peak", "V", "--veb-peak",
              "Highest reverse base-emitter voltage in the circuit (sets the Vebo need), e.g. 6V.",
              short="Veb", applies="bipolar"),
    SpecField("ic_peak", "Ic peak", "A", "--ic-peak",
              "Highest collector current in the circuit, e.g. 150mA.", short="Ic",
              applies="bipolar"),
    SpecField("power", "Dissipation", "W", "--power", "Dissipation in the part, e.g. 300mW.",
              short="P"),
    SpecField("ambient", "Ambient", "°C", "--ambient",
              "Air temperature around the part in °C, or kelvin as 318K (default 25).",
              kind="temperature", short="Ta", positive=False, default=DEFAULT_AMBIENT, sets_need=False),
    SpecField("freq", "Highest signal frequency", "Hz", "--freq",
              "Highest signal frequency the stage must amplify, e.g. 20kHz.", short="f",
              applies="bipolar"),
    SpecField("heatsink", "Heat sink (sink to ambient)", "K/W", "--heatsink",
              "Heat sink for case-rated parts: sink-to-ambient K/W, or free-air for none "
              "(default: the original's own sink, compared over 0.5-5 K/W).",
              kind="sink", short="sink", positive=False, sets_need=False),
    SpecField("vds_peak", "Vds peak", "V", "--vds-peak",
              "FETs: highest drain-source voltage in the circuit (DC + peak), e.g. 48V.",
              short="Vds", applies="fet"),
    SpecField("id_peak", "Id peak", "A", "--id-peak",
              "FETs: highest drain current in the circuit, e.g. 5A (also the current of the "
              "conduction-loss estimate).", short="Id", applies="fet"),
    SpecField("drive", "Gate drive", "V", "--drive",
              "FETs: gate-source voltage the circuit applies to turn the part on, e.g. 10V "
              "(magnitude; judges Rds(on), Vgs(th) and Vgs max).", short="Vgs", applies="fet"),
    SpecField("fsw", "Switching frequency", "Hz", "--fsw",
              "MOSFETs: switching frequency, e.g. 50kHz (adds a switching-loss estimate from Qg, "
              "--gate-current, --vds-peak and --id-peak).", short="fsw", applies="fet"),
    SpecField("gate_current", "Gate drive current", "A", "--gate-current",
              "MOSFETs: peak current the gate driver sources and sinks, e.g. 0.5A (for the "
              "switching-loss estimate with --fsw).", short="Ig", applies="fet", sets_need=False),
)
"""What the circuit does to the part; each row is a field of :class:`partsdb.ranking.Stress`."""

STRESS_BY_NAME: dict[str, SpecField] = {f.name: f for f in STRESS_FIELDS}



FET_REQUIREMENT_NAMES: tuple[str, ...] = (
    "kind", "polarity", "mode", "vds", "vgs_max", "id_max", "ptot", "ptot_ref", "tj_max",
    "rth_jc", "rds_on", "rds_on_vgs", "vgs_th_max", "qg", "body_diode", "trr", "idss_min",
    "idss_max", "vgs_off_min", "vgs_off_max", "yfs", "ciss", "package", "pinout")
"""The device fields of a field-effect original shown as its requirement (label and unit from
``device.FIELDS``); a FET original's stored record is its requirement."""


def stresses_for(kind: str | None) -> tuple[SpecField, ...]:
    """The stress rows that concern an original of this kind (None: every row)."""
    if kind is None:
        return STRESS_FIELDS
    family = "fet" if kind in FET_KINDS else "bipolar"
    return tuple(f for f in STRESS_FIELDS if f.applies in ("all", family))
