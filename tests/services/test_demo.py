"""Checks the demo workshop's seed files (seed_data/): every row imports and the data hangs together.

The seed data is invented (see seed_data/README.md), so nothing here treats its values as an
oracle. The tests check the files against rules from outside them: the device rules of
:mod:`partsdb.device`, the numbering schemes the designations imitate (Pro Electron, JIS C 7012,
the older European "O" scheme, as published by Pro Electron and in JIS C 7012), and the
physics ranges of germanium and silicon junctions. The README documents exactly two rows that
contradict their designation on purpose; the scheme test insists on those two and no others.
"""

from __future__ import annotations

import csv
import re
from collections import Counter
from pathlib import Path

import pytest

from partsdb.designations import normalize
from partsdb.device import Device, InvalidRecord, parse_device
from partsdb.units import UnitError, parse_quantity

SEED = Path(__file__).resolve().parents[2] / "seed_data"

DEVICE_HEADER = [
    "designation", "kind", "polarity", "material", "vceo", "vcbo", "vebo", "ic_max", "ptot",
    "ptot_ref", "tj_max", "hfe_min", "hfe_max", "hfe_ic", "ft", "vbe_on", "vbe_ic", "vce_sat",
    "icbo", "package", "pinout", "application", "obsolete", "notes", "low_stock",
    # The FET columns (blank on every bipolar row).
    "mode", "rth_jc", "vds", "vgs_max", "id_max", "id_max_ref", "rds_on", "rds_on_vgs",
    "rds_on_id", "vgs_th_min", "vgs_th_max", "qg", "qgd", "ciss", "body_diode", "trr",
    "vgs_off_min", "vgs_off_max", "idss_min", "idss_max", "yfs", "yfs_id", "en",
]
STOCK_HEADER = ["designation", "location", "quantity", "condition", "note"]
MOVEMENT_HEADER = ["designation", "location", "change", "reason", "job", "note"]
CONDITIONS = {"new", "used", "pulled", "tested"}
REASONS = {"take", "return", "move", "count"}
# Cabinet / drawer / optional bin, as the README describes the shelves.
LOCATION = re.compile(r"^C\d+/D\d{2}(/B\d+)?$")

# The two rows the README says contradict their designation on purpose.
DOCUMENTED_CONFLICTS = {"BC962", "2SB8216"}

Lot = tuple[str, str, str]
"""(normalised designation, lower-case location, condition)"""


def read(name: str) -> tuple[list[str], list[dict[str, str]]]:
    with open(SEED / name, encoding="utf-8", newline="") as fh:
        reader = csv.DictReader(fh)
        rows = list(reader)
        return list(reader.fieldnames or []), rows


def whole_count(text: str, field: str) -> int:
    """A count of parts: a whole number, 0 or more, else UnitError naming the field."""
    value = parse_quantity(text, "", field)
    if value != int(value) or value < 0:
        raise UnitError(field, text, "a whole number of parts, 0 or more")
    return int(value)


def stock_problems(rows: list[dict[str, str]], known: set[str]) -> list[str]:
    """Every problem of the stock rows against the known designation keys."""
    problems: list[str] = []
    seen: set[Lot] = set()
    for line, row in enumerate(rows, start=2):
        key = normalize(row["designation"])
        if key not in known:
            problems.append(f"line {line}: {row['designation']!r} is not in devices.csv")
        try:
            whole_count(row["quantity"], "quantity")
        except UnitError as err:
            problems.append(f"line {line}: {err}")
        if row["condition"] not in CONDITIONS:
            problems.append(f"line {line}: condition {row['condition']!r}")
        if not LOCATION.match(row["location"]):
            problems.append(f"line {line}: location {row['location']!r}")
        lot = (key, row["location"].lower(), row["condition"])
        if lot in seen:
            problems.append(f"line {line}: lot repeated")
        seen.add(lot)
    return problems


def replay(stock: list[dict[str, str]], moves: list[dict[str, str]]) -> tuple[dict[Lot, int],
                                                                            list[str]]:
    """Apply the ledger rows the way the demo builder does; returns lots and problems.

    take/return/move use |change|; count sets the lot to ``change`` (the counted quantity).
    A take or move names a place where the device lies in one condition only.
    """
    lots: dict[Lot, int] = {}
    for row in stock:
        lots[(normalize(row["designation"]), row["location"].lower(), row["condition"])] = int(
            row["quantity"])
    problems: list[str] = []

    def at(key: str, place: str) -> list[Lot]:
        return [lot for lot in lots if lot[0] == key and lot[1] == place.lower()]

    for line, row in enumerate(moves, start=2):
        key, reason = normalize(row["designation"]), row["reason"]
        change = int(row["change"])
        if reason not in REASONS:
            problems.append(f"line {line}: reason {reason!r}")
            continue
        place = row["location"]
        source = place.partition(">")[0] if reason == "move" else place
        here = at(key, source)
        if reason == "return":
            target = here[0] if here else (key, source.lower(), "used")
            lots[target] = lots.get(target, 0) + abs(change)
            continue
        if len(here) != 1:
            problems.append(f"line {line}: {len(here)} lots of {key} at {source}; expected one")
            continue
        lot = here[0]
        if reason == "count":
            lots[lot] = change
        else:
            lots[lot] -= abs(change)
            if reason == "move":
                dest = (key, place.partition(">")[2].lower(), lot[2])
                lots[dest] = lots.get(dest, 0) + abs(change)
        if lots[lot] < 0:
            problems.append(f"line {line}: {key} at {source} would fall to {lots[lot]}")
    return lots, problems


_PRO_ELECTRON = re.compile(r"^([AB])([CDFLSU])(\d{3}|[A-Z]\d{2})[A-C]?$")
_JIS = re.compile(r"^2S([ABCD])\d+")
# Pro Electron second letter -> the application class the seed data uses for it.
_PE_APPLICATION = {"C": "audio", "D": "audio power", "F": "rf", "L": "rf power",
                   "S": "switching", "U": "power switching"}


def scheme_conflicts(device: Device) -> list[str]:
    """Where the fields contradict what the designation's numbering scheme says.

    Rules from the Pro Electron type designation code and JIS C 7012: Pro Electron first letter
    A germanium, B silicon; second letter C audio, F RF and S switching small-signal
    (Rth > 15 K/W), D audio, L RF and U switching power (Rth <= 15 K/W). JIS C 7012: 2SA/2SB PNP,
    2SC/2SD NPN. Older European scheme: OC = germanium transistor.
    """
    key, out = device.key, []
    m = _PRO_ELECTRON.match(key)
    if m:
        if device.material != {"A": "ge", "B": "si"}[m.group(1)]:
            out.append(f"{key}: Pro Electron {m.group(1)} but material {device.material}")
        if device.application != _PE_APPLICATION[m.group(2)]:
            out.append(f"{key}: second letter {m.group(2)} but application {device.application}")
        if device.ptot is not None:
            # Rth = (Tj max - 25 °C) / Ptot, linear derating (DOMAIN.md, thermal chain, H);
            # Pro Electron puts the small-signal/power boundary at 15 K/W.
            rth = (device.tj_max_or_default()[0] - 25.0) / device.ptot
            if (m.group(2) in "CFS") != (rth > 15.0):
                out.append(f"{key}: second letter {m.group(2)} but Rth {rth:.1f} K/W")
    m = _JIS.match(key)
    if m and device.polarity != ("pnp" if m.group(1) in "AB" else "npn"):
        out.append(f"{key}: JIS 2S{m.group(1)} but polarity {device.polarity}")
    if key.startswith("OC") and device.material != "ge":
        out.append(f"{key}: OC (older European scheme) but material {device.material}")
    return out


# ---------------------------------------------------------------- fixtures


@pytest.fixture(scope="module")
def device_rows() -> list[dict[str, str]]:
    header, rows = read("devices.csv")
    assert header == DEVICE_HEADER
    return rows


@pytest.fixture(scope="module")
def devices(device_rows: list[dict[str, str]]) -> dict[str, Device]:
    return {parse_device(row).key: parse_device(row) for row in device_rows}


@pytest.fixture(scope="module")
def stock_rows() -> list[dict[str, str]]:
    header, rows = read("stock.csv")
    assert header == STOCK_HEADER
    return rows


@pytest.fixture(scope="module")
def movement_rows() -> list[dict[str, str]]:
    header, rows = read("movements.csv")
    assert header == MOVEMENT_HEADER
    return rows


# ---------------------------------------------------------------- the files


def test_every_device_row_parses(device_rows: list[dict[str, str]]) -> None:
    failures = []
    for row in device_rows:
        try:
            parse_device(row)
        except InvalidRecord as err:
            failures.append(f"{row['designation']}: {err}")
    assert failures == []
    assert 80 <= len(device_rows) <= 110


def test_designations_are_unique(device_rows: list[dict[str, str]]) -> None:
    keys = Counter(normalize(row["designation"]) for row in device_rows)
    assert [k for k, n in keys.items() if n > 1] == []


def test_stock_rows_name_known_devices_with_whole_counts(
        stock_rows: list[dict[str, str]], devices: dict[str, Device]) -> None:
    assert stock_problems(stock_rows, set(devices)) == []
    assert 120 <= len(stock_rows) <= 200
    quantities = [whole_count(row["quantity"], "quantity") for row in stock_rows]
    assert all(0 <= q <= 200 for q in quantities)


def test_shelves_cabinets_and_drawers(stock_rows: list[dict[str, str]],
                                      devices: dict[str, Device]) -> None:
    places = {row["location"] for row in stock_rows}
    cabinets = {p.split("/")[0] for p in places}
    drawers = {"/".join(p.split("/")[:2]) for p in places}
    assert 2 <= len(cabinets) <= 3
    assert len(drawers) >= 12
    held = Counter(normalize(row["designation"]) for row in stock_rows)
    assert any(n >= 2 for n in held.values()), "some parts lie in two drawers"
    assert set(devices) - set(held), "some devices have no stock at all"


def test_ledger_replays_without_going_below_zero(
        stock_rows: list[dict[str, str]], movement_rows: list[dict[str, str]],
        devices: dict[str, Device]) -> None:
    assert 6 <= len(movement_rows) <= 12
    assert all(normalize(row["designation"]) in devices for row in movement_rows)
    assert all(">" in row["location"] for row in movement_rows if row["reason"] == "move")
    lots, problems = replay(stock_rows, movement_rows)
    assert problems == []
    assert min(lots.values()) >= 0


def test_low_stock_marks_and_obsolete_parts(stock_rows: list[dict[str, str]],
                                            movement_rows: list[dict[str, str]],
                                            devices: dict[str, Device]) -> None:
    marked = {k: d.low_stock for k, d in devices.items() if d.low_stock is not None}
    assert 10 <= len(marked) <= 15
    lots, _ = replay(stock_rows, movement_rows)
    totals: Counter[str] = Counter()
    for (key, _, _), qty in lots.items():
        totals[key] += qty
    below = [k for k, mark in marked.items() if totals[k] < mark]
    assert below and len(below) < len(marked)
    obsolete = [d for d in devices.values() if d.obsolete]
    assert 10 <= len(obsolete) <= 20
    assert sum(d.material == "ge" for d in obsolete) > len(obsolete) / 2


# ---------------------------------------------------------------- consistency


def test_designations_agree_with_their_scheme_except_the_two_documented(
        devices: dict[str, Device]) -> None:
    conflicting = {k for k, d in devices.items() if scheme_conflicts(d)}
    assert conflicting == DOCUMENTED_CONFLICTS


def test_values_fit_the_junction_physics(devices: dict[str, Device]) -> None:
    """Ranges from DOMAIN.md (H): Vbe about 0.2-0.3 V germanium, 0.6-0.7 V silicon, about
    1.2-1.4 V for a darlington; Tj max 70-100 °C germanium, 150-200 °C silicon; leakage in
    microamps for germanium, nanoamps for silicon. Bounds widened a little (common practice)."""
    bad = []
    for key, d in devices.items():
        if key in DOCUMENTED_CONFLICTS:
            continue
        vbe = (0.15, 0.3) if d.material == "ge" else (0.55, 0.8)
        if d.kind == "darlington":
            vbe = (1.1, 1.5)
            if d.hfe_min is None or d.hfe_min < 1000:
                bad.append(f"{key}: darlington hFE min {d.hfe_min}")
        tj = (70, 100) if d.material == "ge" else (150, 200)
        icbo = (1e-6, 20e-6) if d.material == "ge" else (1e-10, 1e-6)
        checks = [("vbe_on", d.vbe_on, vbe), ("tj_max", d.tj_max, tj), ("icbo", d.icbo, icbo)]
        if d.material == "ge":
            checks.append(("vce_sat", d.vce_sat, (0.05, 0.3)))
        for name, value, (low, high) in checks:
            if value is not None and not low <= value <= high:
                bad.append(f"{key}: {name} {value:g} outside {low:g}..{high:g}")
        if d.package in ("TO-3", "TO-220", "TO-126") and d.ptot_ref != "case":
            bad.append(f"{key}: {d.package} power part not case-rated")
    assert bad == []


def test_some_cells_are_left_empty_like_old_datasheets(devices: dict[str, Device]) -> None:
    ge = [d for d in devices.values() if d.material == "ge"]
    assert sum(d.vbe_on is None for d in ge) >= 3
    assert sum(d.ft is None for d in devices.values()) >= 3
    assert sum(d.tj_max is None for d in devices.values()) >= 3


def test_same_package_parts_differ_in_lead_order(devices: dict[str, Device]) -> None:
    for package in ("TO-92", "TO-1", "TO-18", "TO-126"):
        pinouts = {d.pinout for d in devices.values() if d.package == package}
        assert len(pinouts) >= 2, package


# ---------------------------------------------------------------- the demo stories


def _in_stock(stock_rows: list[dict[str, str]]) -> set[str]:
    return {normalize(r["designation"]) for r in stock_rows if int(r["quantity"]) > 0}


def test_story_germanium_radio_driver(devices: dict[str, Device],
                                      stock_rows: list[dict[str, str]]) -> None:
    failed = devices["OC375"]
    assert (failed.material, failed.polarity, failed.package, failed.obsolete) == (
        "ge", "pnp", "TO-1", True)
    held = [devices[k] for k in _in_stock(stock_rows) if devices[k].polarity == "pnp"]
    ge = [d for d in held if d.material == "ge" and d.kind == "bjt"]
    assert any(d.vceo is not None and failed.vceo is not None and d.vceo < failed.vceo
               for d in ge), "a germanium PNP in the drawers that comes out under-rated"
    si = [d for d in held if d.material == "si" and d.package in ("TO-92", "TO-18")]
    assert len({d.pinout for d in si}) >= 2 and any(d.pinout != failed.pinout for d in si)


def test_story_amplifier_output(devices: dict[str, Device],
                                stock_rows: list[dict[str, str]]) -> None:
    original = devices["2N9425"]
    assert (original.package, original.ptot_ref) == ("TO-3", "case")
    npn = [devices[k] for k in _in_stock(stock_rows)
           if devices[k].polarity == "npn" and devices[k].application == "audio power"
           and devices[k].material == "si"]
    assert {"TO-3", "TO-220"} <= {d.package for d in npn}


def test_story_rf_part_read_without_2s(devices: dict[str, Device]) -> None:
    part = devices["2SC8417"]
    assert (part.polarity, part.application) == ("npn", "rf")
    # The body marking drops "2S" (JIS C 7012 practice, DOMAIN.md); it must not itself be
    # another device's designation, or the demo would not need the inference.
    assert "C8417" not in devices


# ---------------------------------------------------------------- the checkers can fail


def test_stock_checker_catches_bad_rows() -> None:
    bad = [
        {"designation": "NO-SUCH", "location": "C1/D01", "quantity": "2",
         "condition": "new", "note": ""},
        {"designation": "OC375", "location": "C1/D01", "quantity": "2.5",
         "condition": "new", "note": ""},
        {"designation": "OC375", "location": "drawer 4", "quantity": "-1",
         "condition": "broken", "note": ""},
    ]
    problems = stock_problems(bad, {"OC375"})
    assert len(problems) == 5
    assert any("NO-SUCH" in p for p in problems)
    assert any("2.5" in p for p in problems)


def test_replay_refuses_an_overdraw() -> None:
    stock = [{"designation": "OC375", "location": "C1/D01", "quantity": "1",
              "condition": "pulled", "note": ""}]
    moves = [{"designation": "OC375", "location": "C1/D01", "change": "-2", "reason": "take",
              "job": "", "note": ""}]
    _, problems = replay(stock, moves)
    assert len(problems) == 1 and "-1" in problems[0]


def test_scheme_checker_catches_a_contradiction(device_rows: list[dict[str, str]]) -> None:
    row = next(r for r in device_rows if r["designation"] == "AC951")
    assert scheme_conflicts(parse_device(row)) == []
    assert scheme_conflicts(parse_device({**row, "material": "si"}))
