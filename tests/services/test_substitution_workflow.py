"""The substitution workflow the faces share: resolve an original, read a spec line and the
stress inputs, write the job sheet, record a swap with its stress; and the field tables that
the CLI options, the TUI inputs and the report rows are built from."""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any

import pytest

from partsdb.errors import PartsdbError
from partsdb.ranking import SpecError, Stress
from partsdb.services import catalog, swaplog
from partsdb.services.catalog import NotFound
from partsdb.services.files import FileProblem
from partsdb.services.substitution import (
    clear_cache,
    parse_spec,
    parse_stress,
    rank_substitutes,
    resolve_original,
    write_report,
)
from partsdb.spec_fields import REQUIREMENT_FIELDS, SPEC_NAMES, STRESS_FIELDS


def _part(name: str, **kw: Any) -> dict[str, Any]:
    base = {"designation": name, "kind": "bjt", "polarity": "npn", "material": "si",
            "vceo": "45V", "vcbo": "50V", "ic_max": "100mA", "ptot": "500mW",
            "ptot_ref": "ambient", "tj_max": "150", "hfe_min": "110", "hfe_max": "450",
            "ft": "150MHz", "package": "TO-92", "pinout": "EBC"}
    base.update(kw)
    return base


@pytest.fixture
def shop(empty_db: Any) -> Any:
    with empty_db.session() as session:
        catalog.add_device(session, _part("QW1001"))
        catalog.add_device(session, _part("QW2002", vceo="60V", vcbo="80V"))
    clear_cache()
    return empty_db


def test_stress_table_and_stress_type_agree() -> None:
    # One row per Stress attribute, in the same order (the JSON key order follows the table).
    assert [f.name for f in STRESS_FIELDS] == [f.name for f in dataclasses.fields(Stress)]
    assert list(Stress().to_json()) == [f.name for f in STRESS_FIELDS]
    # Every requirement row is a Requirement attribute (a window sets its two ends).
    from partsdb.ranking import Requirement

    names = {f.name for f in dataclasses.fields(Requirement)}
    assert set(SPEC_NAMES) <= names and len(REQUIREMENT_FIELDS) == 13


def test_cli_options_come_from_the_tables() -> None:
    from partsdb.cli.substitute import substitute, swaplog_add

    options = {opt for p in substitute.params for opt in p.opts}
    assert {f.option for f in (*REQUIREMENT_FIELDS, *STRESS_FIELDS)} <= options
    assert {f.option for f in STRESS_FIELDS} <= {o for p in swaplog_add.params for o in p.opts}
    for f in STRESS_FIELDS:  # the help names every stress option
        assert f.option in (substitute.help or "")


def test_resolve_original_exact_then_fuzzy_then_not_found(shop: Any) -> None:
    with shop.session() as session:
        assert resolve_original(session, "qw 1001") == ("QW1001", "")
        name, note = resolve_original(session, "QW2O02")  # letter O typed for a zero
        assert name == "QW2002" and "read as QW2002" in note
        with pytest.raises(NotFound, match="'ZZZZZZZZZZZZ' is not in the catalog"):
            resolve_original(session, "ZZZZZZZZZZZZ")


def test_not_found_hint_is_written_once_everywhere(shop: Any) -> None:
    with shop.session() as session:
        hint = catalog.did_you_mean(session, "QW1002")
        assert hint.startswith(" (did you mean: ") and "QW1001" in hint
        with pytest.raises(NotFound, match=r"did you mean: .*QW1001"):
            rank_substitutes(session, "QW1002")
        with pytest.raises(NotFound, match=r"did you mean: .*QW1001"):
            swaplog.add(session, "OLD1", "QW1002", "J-1")


def test_parse_spec_reads_each_value_like_its_device_field() -> None:
    assert parse_spec("vceo=60V, ic_max=1A package=TO-126") == \
        {"vceo": 60.0, "ic_max": 1.0, "package": "TO-126"}
    assert parse_spec("") == {}
    with pytest.raises(SpecError, match="'vceo60' is not valid; expected name=value"):
        parse_spec("vceo60")
    with pytest.raises(SpecError, match="'colour' is not a spec field"):
        parse_spec("colour=red")


def test_parse_spec_takes_the_engineering_labels_in_any_case() -> None:
    # The TUI's spec line shows labels (Vceo, Ic max, Tj max, fT), never keys: typed without
    # spaces and in any case they name the same fields as the keys.
    assert parse_spec("Vceo=60V Icmax=1A TJMAX=150 fT=3MHz") == \
        {"vceo": 60.0, "ic_max": 1.0, "tj_max": 150.0, "ft": 3e6}
    with pytest.raises(SpecError, match=r"'colour' is not a spec field; .*Ic max.*Icmax=1A"):
        parse_spec("colour=red")
    with pytest.raises(SpecError, match=r"^spec: Ic max: '1x' is not valid; expected a current"):
        parse_spec("Icmax=1x")


def test_parse_stress_reads_every_row_in_its_unit() -> None:
    stress = parse_stress({"vce_peak": "18V", "ic_peak": "150mA", "power": "300mW",
                           "ambient": "-10", "freq": "20kHz", "heatsink": "2.5"})
    assert stress == Stress(vce_peak=18.0, ic_peak=0.15, power=0.3, ambient=-10.0, freq=2e4,
                            heatsink=2.5)
    assert parse_stress({"vce_peak": " "}) == Stress()
    with pytest.raises(SpecError, match="vce_peak"):
        parse_stress({"vce_peak": "eighteen"})


def test_write_report_refuses_and_keeps_existing_files(shop: Any, tmp_path: Path,
                                                      monkeypatch: pytest.MonkeyPatch) -> None:
    result = rank_substitutes(shop, "QW1001")
    out = tmp_path / "out"
    out.mkdir()
    target = write_report(result, out / "sheet.md", job="J-9")
    text = target.read_text(encoding="utf-8")
    assert text.startswith("# Substitution ranking report: QW1001") and "J-9" in text
    assert write_report(result, out / "sheet.html").read_text().startswith("<!DOCTYPE html>")
    with pytest.raises(SpecError, match=r"expected a name ending in \.md or \.html"):
        write_report(result, out / "sheet.txt")
    with pytest.raises(FileProblem, match="cannot write"):
        write_report(result, out / "missing-dir" / "sheet.md")
    # An existing file is replaced only when asked (issue 14 item 1).
    with pytest.raises(PartsdbError, match=r"--force|exists"):
        write_report(result, out / "sheet.md", job="J-9b")
    assert target.read_text(encoding="utf-8") == text

    # A write that fails at the last step leaves the file that was there unchanged, and no
    # temporary file behind.
    def refuse(src: str, dst: str) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr("partsdb.services.files.os.replace", refuse)
    with pytest.raises(FileProblem, match="No space left"):
        write_report(result, out / "sheet.md", job="J-10", force=True)
    assert (out / "sheet.md").read_text(encoding="utf-8") == text
    assert sorted(p.name for p in out.iterdir()) == ["sheet.html", "sheet.md"]


def test_swap_recorded_with_a_stress_reads_back_the_same(shop: Any) -> None:
    stress = Stress(vce_peak=20.0, ic_peak=0.05, power=0.2, ambient=40.0, freq=1e4, heatsink=3.0)
    with shop.session() as session:
        view = swaplog.add(session, "QW1001", "QW2002", "J-5", stress, outcome="worked")
    assert view.stress == stress
    with shop.session() as session:
        assert swaplog.list_swaps(session)[0].stress == stress
        with pytest.raises(swaplog.SwapError, match="given twice"):
            swaplog.add(session, "QW1001", "QW2002", "J-6", stress, vce_peak=20.0)
