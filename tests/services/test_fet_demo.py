"""The demo workshop's FETs (seed_data, all invented): the stories seed_data/README.md tells are
really in the files. Rules used: logic-level means Rds(on) specified at a gate drive of 5 V or
less (common practice); JIS C 7012 (type designation scheme, from memory): 2SK N-channel FET,
2SJ P-channel, 3SK a four-terminal N-channel FET."""

from __future__ import annotations

import pytest

from partsdb.consistency import consistency_warnings
from partsdb.designations import normalize
from partsdb.device import Device
from tests.services.test_demo import device_rows, devices, stock_rows  # noqa: F401 (fixtures)


def _held(stock_rows: list[dict[str, str]]) -> set[str]:  # noqa: F811
    return {normalize(r["designation"]) for r in stock_rows if int(r["quantity"]) > 0}


def test_failed_power_mosfet_and_its_candidates(devices: dict[str, Device],  # noqa: F811
                                                stock_rows: list[dict[str, str]]) -> None:  # noqa: F811
    failed = devices["2SK8610"]
    assert (failed.kind, failed.polarity, failed.obsolete, failed.body_diode) == (
        "mosfet", "n", True, True)
    held = _held(stock_rows)
    assert "2SK8610" not in held
    candidates = [d for k, d in devices.items() if k in held and d.kind == "mosfet"
                  and d.polarity == "n" and d.mode == "enhancement" and d.package == "TO-220"]
    assert len(candidates) >= 3
    assert failed.rds_on_vgs is not None and failed.qg is not None and failed.vds is not None
    logic = [d for d in candidates if d.rds_on_vgs is not None and d.rds_on_vgs <= 5.0]
    bigger_gate = [d for d in candidates if d.qg is not None and d.qg > 2 * failed.qg]
    short = [d for d in candidates if (d.vds or 0) < failed.vds or d.body_diode is False]
    assert logic and bigger_gate and short


def test_failed_audio_jfet_and_candidates_with_other_windows(devices: dict[str, Device],  # noqa: F811
                                                             stock_rows: list[dict[str, str]]  # noqa: F811
                                                             ) -> None:
    failed = devices["2SK8170"]
    assert (failed.kind, failed.polarity, failed.obsolete, failed.application) == (
        "jfet", "n", True, "audio")
    held = _held(stock_rows)
    assert "2SK8170" not in held
    candidates = [d for k, d in devices.items() if k in held and d.kind == "jfet"
                  and d.polarity == "n"]
    assert len(candidates) >= 3
    windows = {(d.idss_min, d.idss_max, d.vgs_off_min, d.vgs_off_max) for d in candidates}
    assert len(windows) == len(candidates)  # every candidate's Idss / Vgs(off) window differs
    assert (failed.idss_min, failed.idss_max, failed.vgs_off_min, failed.vgs_off_max) \
        not in windows
    # N-channel: Vgs(off) negative (IEC 60747-8 sign convention, from memory).
    assert all((d.vgs_off_max or -1) < 0 for d in (failed, *candidates))


@pytest.mark.parametrize(("key", "kind", "channel"), [
    ("2SJ8205", "mosfet", "p"), ("2SJ8106", "jfet", "p"), ("3SK890", "mosfet", "n")])
def test_p_channel_parts_and_the_dual_gate(devices: dict[str, Device], key: str, kind: str,  # noqa: F811
                                           channel: str) -> None:
    d = devices[key]
    assert (d.kind, d.polarity) == (kind, channel)
    assert consistency_warnings(d) == []  # the JIS letter agrees with the channel
    if key == "3SK890":
        assert d.mode == "depletion" and d.pinout is not None and len(d.pinout) == 4


def test_every_fet_agrees_with_its_name(devices: dict[str, Device]) -> None:  # noqa: F811
    fets = [d for d in devices.values() if d.is_fet]
    assert len(fets) >= 10
    assert [d.designation for d in fets if consistency_warnings(d)] == []
