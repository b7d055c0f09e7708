"""Every hint in the UI matches its field: the device form's examples are read in the field's
own unit and lie in the range a small-signal or power transistor's datasheet gives for that
parameter (the ranges: common practice), and no hint shows a real part number or a code key."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from partsdb.device import FIELDS, parse_field
from tui.device_form import EXAMPLES, placeholder

# (low, high) of a plausible datasheet figure, in SI base units / °C (common practice): Vbe(on)
# of a germanium part is about 0.2 V, a Darlington's about 1.4 V; Vce(sat) 0.05-1 V; Vebo 4-10 V
# for most silicon parts; leakage from nA (silicon) to tens of µA (germanium).
PLAUSIBLE: dict[str, tuple[float, float]] = {
    "vceo": (10, 1500), "vcbo": (10, 1500), "vebo": (3, 30), "ic_max": (1e-3, 50),
    "ptot": (0.05, 300), "tj_max": (75, 200), "hfe_min": (5, 1000), "hfe_max": (5, 2000),
    "hfe_ic": (1e-5, 10), "ft": (1e5, 1e10), "vbe_on": (0.15, 1.5), "vbe_ic": (1e-5, 10),
    "vce_sat": (0.05, 1.5), "icbo": (1e-10, 1e-4),
    # Field-effect parts (common practice): power MOSFETs 20-1500 V, Rds(on) mOhm to ohms at a
    # 4.5-10 V test drive, Vgs(th) 1-5 V, Qg nC to hundreds of nC, Ciss 100 pF-10 nF, trr tens
    # to hundreds of ns; audio JFETs Idss 0.5-30 mA, |Vgs(off)| 0.2-8 V, |yfs| 1-50 mS, en
    # 1-20 nV/rtHz; Rth j-c 0.3-10 K/W for a power outline.
    "rth_jc": (0.2, 20), "vds": (10, 1500), "vgs_max": (8, 40), "id_max": (0.1, 200),
    "rds_on": (1e-3, 20), "rds_on_vgs": (2.5, 10), "rds_on_id": (0.05, 100),
    "vgs_th_min": (0.4, 5), "vgs_th_max": (0.8, 6), "qg": (1e-9, 500e-9), "qgd": (0.3e-9, 200e-9),
    "ciss": (50e-12, 20e-9), "trr": (10e-9, 1e-6), "vgs_off_min": (0.1, 8),
    "vgs_off_max": (0.2, 10), "idss_min": (1e-4, 0.05), "idss_max": (1e-4, 0.1),
    "yfs": (1e-3, 100), "yfs_id": (1e-4, 10), "en": (0.5e-9, 30e-9),
}


@pytest.mark.parametrize("spec", [f for f in FIELDS if f.kind == "quantity"],
                         ids=lambda f: f.name)
def test_each_quantity_hint_reads_in_its_field_and_is_plausible(spec: object) -> None:
    hint = placeholder(spec)  # type: ignore[arg-type]
    assert hint.startswith("e.g. "), hint
    value = parse_field(spec.name, hint.removeprefix("e.g. "))  # type: ignore[attr-defined]
    low, high = PLAUSIBLE[spec.name]  # type: ignore[attr-defined]
    assert low <= value <= high, (spec.name, hint)  # type: ignore[attr-defined]


def test_every_quantity_field_has_its_own_example() -> None:
    assert {f.name for f in FIELDS if f.kind == "quantity"} == set(EXAMPLES)


REAL_NUMBERS = re.compile(r"\b(BC5\d\d|2SC1815|2N3055|2N2222|OC71)\b")
"""Real parts' designations the older hints used (the demo's names are invented)."""
ROOT = Path(__file__).resolve().parents[2]
SOURCES = [*(ROOT / "tui").glob("*.py"), *(ROOT / "partsdb/cli").glob("*.py")]


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: p.name)
def test_no_real_part_number_in_hints_or_help(path: Path) -> None:
    assert not REAL_NUMBERS.search(path.read_text(encoding="utf-8"))


def test_messages_name_fields_by_label() -> None:
    from tui.wording import in_labels

    assert in_labels("ic_max: '1x' is not valid") == "Ic max: '1x' is not valid"
    assert in_labels("vbe_on without vbe_ic; tj_max, ft") == "Vbe(on) without Vbe at Ic; Tj max, fT"
    assert in_labels("vce_peak: 12 A") == "Vce peak: 12 A"
    # ordinary words stay as they are, and a key inside another word is not touched
    assert in_labels("the package and the notes; ptotal") == "the package and the notes; ptotal"
