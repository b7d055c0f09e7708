"""The substitution engine against published rules: derating factors, power derating, the thermal
chain, gain-bandwidth. Parts are invented; the expected numbers come from the cited formulas."""

from __future__ import annotations

import math
import re
from dataclasses import replace
from typing import Any

import numpy as np
import pytest

import partsdb.ranking as ranking
from partsdb.derating import BUILTIN_POLICIES, policy_from_mapping
from partsdb.device import Device
from partsdb.ranking import (
    DEFAULT_WEIGHTS,
    CatalogColumns,
    PastSwaps,
    Requirement,
    SpecError,
    Stress,
    Weights,
    assess,
    lead_mapping,
    rank,
)

WORKSHOP = BUILTIN_POLICIES["workshop"]
MIL = BUILTIN_POLICIES["mil-std-975m"]


def part(name: str, **values: Any) -> Device:
    """An invented small-signal PNP germanium part; ``values`` override."""
    base: dict[str, Any] = dict(kind="bjt", polarity="pnp", material="ge", vceo=40.0, vcbo=50.0,
                                ic_max=0.2, ptot=0.3, ptot_ref="ambient", tj_max=90.0,
                                hfe_min=60.0, hfe_max=180.0, ft=2e6, package="TO-5",
                                pinout="EBC")
    base.update(values)
    return Device(designation=name, **base)


ORIGINAL = part("QX100")


def ranked(devices: list[Device], req: Requirement | None = None, stress: Stress | None = None,
           policy: Any = WORKSHOP, **kw: Any) -> dict[str, ranking.Candidate]:
    cat = CatalogColumns.from_devices(devices)
    result = rank(cat, req or Requirement.from_device(ORIGINAL), stress, policy, **kw)
    return {c.designation: c for c in result.candidates}


def one(device: Device, stress: Stress | None = None, policy: Any = WORKSHOP,
        req: Requirement | None = None) -> ranking.Candidate:
    return assess(device, req or Requirement.from_device(ORIGINAL), stress, policy)


# ---------------------------------------------------------------- the acceptance case

def test_lower_vceo_is_under_rated_without_stress() -> None:
    # No stress: the need is the original's rating (40 V); 30 V is below it.
    c = one(part("QX130", vceo=30.0))
    check = c.check("vceo")
    assert (check.need, check.offered, check.status) == (40.0, 30.0, "under-rated")
    assert c.verdict == "under-rated"
    # The note, read on its own (the CLI lists it for the problems), says both numbers.
    assert "30 V" in check.note and "40 V" in check.note


@pytest.mark.parametrize(("policy", "vce_peak", "status"), [
    # MIL-STD-975M App. A, bipolar transistors: voltage <= 0.75 x rated. 0.75 x 30 V = 22.5 V.
    (MIL, 22.5, "ok"),          # exactly on the factor boundary: allowed
    (MIL, 22.6, "marginal"),    # just above 0.75 x rating, within the rating
    (MIL, 30.0, "marginal"),    # at the rating itself
    (MIL, 30.1, "under-rated"),  # above the rating
    # workshop policy (common practice, documented in derating.py): 0.80 x 30 V = 24 V.
    (WORKSHOP, 24.0, "ok"),
    (WORKSHOP, 24.1, "marginal"),
    (WORKSHOP, 30.1, "under-rated"),
])
def test_lower_vceo_with_stress_follows_the_policy_factor(policy: Any, vce_peak: float,
                                                          status: str) -> None:
    c = one(part("QX130", vceo=30.0, vcbo=60.0), Stress(vce_peak=vce_peak), policy)
    check = c.check("vceo")
    assert check.need == vce_peak
    assert check.status == status
    # Below the original's 40 V is now only a flag, not the verdict.
    assert "below-original" in c.flag_codes()
    if status == "ok":
        assert c.verdict == "suitable"


# ---------------------------------------------------------------- other ratings

@pytest.mark.parametrize(("ic_peak", "status"), [
    # MIL-STD-975M App. A: current <= 0.75 x rated; 0.75 x 0.2 A = 0.15 A.
    (0.15, "ok"), (0.151, "marginal"), (0.2, "marginal"), (0.201, "under-rated"),
])
def test_current_follows_mil_factor(ic_peak: float, status: str) -> None:
    assert one(part("QX131"), Stress(ic_peak=ic_peak), MIL).check("ic_max").status == status


@pytest.mark.parametrize(("power", "status"), [
    # Linear derating (DOMAIN "Physics", datasheet practice): P(T) = Ptot (Tj - T)/(Tj - 25).
    # 0.3 W, Tj 150 °C, at 75 °C: 0.3 x 75/125 = 0.18 W. Workshop power factor 0.70 -> 0.126 W.
    (0.126, "ok"), (0.127, "marginal"), (0.18, "marginal"), (0.181, "under-rated"),
])
def test_power_is_derated_to_the_ambient(power: float, status: str) -> None:
    c = one(part("QX132", tj_max=150.0, material="si"), Stress(power=power, ambient=75.0))
    check = c.check("ptot")
    assert check.offered == pytest.approx(0.3 * (150 - 75) / (150 - 25))
    assert check.status == status


def test_case_rated_power_goes_through_the_thermal_chain() -> None:
    # Thermal chain (DOMAIN "Physics"): Rth j-c = (Tj - 25)/Ptot = 125/50 = 2.5 K/W; with
    # 1.0 K/W case-to-sink (TO-220 with washer, DOMAIN "Heat sinks": 0.5-1.5 K/W) and an
    # 8 K/W sink, Tj max is reached at (150 - 25)/11.5 = 10.87 W.
    power = part("QX200", material="si", ptot=50.0, ptot_ref="case", tj_max=150.0,
                 package="TO-220", pinout="BCE")
    c = one(power, Stress(power=5.0, heatsink=8.0))
    assert c.check("ptot").offered == pytest.approx(125 / 11.5)
    assert "case-rating-converted" in c.flag_codes()
    # Tj = Ta + P x Rth = 25 + 5 x 11.5 = 82.5 °C (same chain).
    assert c.check("tj_max").need == pytest.approx(82.5)


@pytest.mark.parametrize(("policy", "power", "status"), [
    # Free-air Rth j-a = (150 - 25)/0.5 = 250 K/W; Tj = 25 + P x 250.
    (WORKSHOP, 0.2, "ok"),         # Tj 75 °C, workshop limit 150 - 20 = 130 °C
    (WORKSHOP, 0.42, "ok"),        # Tj 130 °C: on the limit
    (WORKSHOP, 0.45, "marginal"),  # Tj 137.5 °C: above the limit, below Tj max
    (MIL, 0.40, "ok"),             # Tj 125 °C: MIL-STD-975M cap 125 °C
    (MIL, 0.41, "marginal"),       # Tj 127.5 °C
    (MIL, 0.51, "under-rated"),    # Tj 152.5 °C: above Tj max
])
def test_junction_temperature_against_the_policy(policy: Any, power: float, status: str) -> None:
    c = one(part("QX133", material="si", ptot=0.5, tj_max=150.0), Stress(power=power), policy)
    check = c.check("tj_max")
    assert check.need == pytest.approx(25 + power * 250)
    assert check.status == status


@pytest.mark.parametrize(("ft", "status"), [
    # Gain-bandwidth: above f_beta |hfe| = f_T / f, so gain 100 at 20 kHz needs f_T >= 2 MHz
    # (textbook, e.g. Sedra & Smith, from memory; DOMAIN "Physics").
    (1.9e6, "under-rated"), (2.0e6, "ok"), (5e6, "ok"),
])
def test_ft_need_from_gain_bandwidth(ft: float, status: str) -> None:
    req = Requirement(polarity="pnp", hfe_min=100, hfe_max=200)
    c = one(part("QX134", ft=ft), Stress(freq=20e3), req=req)
    assert c.check("ft").need == pytest.approx(2e6)
    assert c.check("ft").status == status
    assert "gain-bandwidth" in c.check("ft").note


def test_ft_need_without_freq_is_the_original() -> None:
    c = one(part("QX135", ft=1e6))
    assert (c.check("ft").need, c.check("ft").status) == (2e6, "under-rated")


@pytest.mark.parametrize(("window", "status", "flag"), [
    # Need 60..180 (log-scale windows; thresholds are common practice).
    # (issue 13: wholly below or a minimum under half the need's is under-rated; a window
    # reaching below the need is marginal)
    ((100.0, 300.0), "ok", None),               # overlaps, from the needed minimum up
    ((40.0, 120.0), "marginal", None),          # partial overlap, reaching below the need
    ((20.0, 40.0), "under-rated", "low-gain"),  # wholly below
    ((25.0, 200.0), "under-rated", "low-gain"),  # minimum below half of 60
    ((600.0, 1200.0), "marginal", "high-gain"),  # far above: instability risk
])
def test_hfe_windows(window: tuple[float, float], status: str, flag: str | None) -> None:
    c = one(part("QX136", hfe_min=window[0], hfe_max=window[1]))
    assert c.check("hfe").status == status
    if flag:
        assert flag in c.flag_codes()


# ---------------------------------------------------------------- fit: material, package

def test_material_change_is_flagged_with_the_bias_consequence() -> None:
    c = one(part("QX137", material="si"))
    assert c.check("material").status == "marginal"
    # A fit that needs work is the check's status and note, not a copy of it among the flags.
    assert "material-change" not in [f.code for f in c.flags]
    message = c.check("material").note
    # Vbe about 0.2-0.3 V (ge) vs 0.6-0.7 V (si) (DOMAIN "Physics", high confidence).
    assert "0.6-0.7 V" in message and "0.2-0.3 V" in message and "partsdb bias" in message


def test_lead_mapping_says_which_lead_goes_to_which_pad() -> None:
    # Pads carry E B C; the substitute's leads are E C B: base is its lead 3, collector lead 2.
    text = lead_mapping("EBC", "ECB")
    assert "pad 1 (E) gets lead 1" in text
    assert "pad 2 (B) gets lead 3" in text
    assert "pad 3 (C) gets lead 2" in text
    c = one(part("QX138", pinout="ECB"))
    assert c.check("pinout").status == "marginal"
    assert "re-form-leads" in c.flag_codes()


def test_other_outline_needs_adaptation() -> None:
    c = one(part("QX139", package="TO-18"))
    assert c.check("package").status == "marginal"
    assert "thermal" in c.check("package").note
    # Spelling of the outline does not matter.
    assert one(part("QX140", package="to5")).check("package").status == "ok"


# ---------------------------------------------------------------- list rules

def test_hard_constraints_and_rejected_list() -> None:
    devices = [ORIGINAL, part("QX141"), part("QX142", polarity="npn"),
               part("QX143", kind="darlington")]
    found = ranked(devices)
    assert set(found) == {"QX141"}  # the original itself and incompatibles are excluded
    found = ranked(devices, show_rejected=True)
    assert found["QX142"].verdict == "incompatible"
    assert "polarity npn, need pnp" in found["QX142"].flags[0].message
    assert found["QX143"].verdict == "incompatible"
    assert "QX100" not in found


def test_unknown_values_are_never_silently_ok() -> None:
    c = one(part("QX144", vceo=None, ft=None))
    assert c.check("vceo").status == "unknown"
    assert c.check("ft").status == "unknown"
    assert c.confidence < 1.0
    assert c.verdict == "unverified"  # an unknown Vceo cannot be confirmed
    assert "unknown-data" in c.flag_codes()


def test_verdict_class_sorts_before_score() -> None:
    devices = [ORIGINAL, part("QX150", vceo=45.0),  # suitable, little headroom
               part("QX151", vceo=300, vcbo=300, ic_max=5, ptot=5, ft=50e6, hfe_min=40,
                    hfe_max=70, pinout="ECB")]  # huge headroom but marginal on leads
    cat = CatalogColumns.from_devices(devices)
    result = rank(cat, Requirement.from_device(ORIGINAL), policy=WORKSHOP)
    order = [c.designation for c in result.candidates]
    by = {c.designation: c for c in result.candidates}
    assert by["QX151"].verdict == "marginal" and by["QX150"].verdict == "suitable"
    assert order.index("QX150") < order.index("QX151")


def test_ties_are_broken_by_normalised_designation() -> None:
    devices = [ORIGINAL, part("qx-172"), part("QX171"), part("QX 173")]
    cat = CatalogColumns.from_devices(devices)
    names = [c.designation for c in rank(cat, Requirement.from_device(ORIGINAL)).candidates]
    assert names == ["QX171", "qx-172", "QX 173"]


def test_stock_and_in_stock_filter() -> None:
    devices = [ORIGINAL, part("QX181"), part("QX182")]
    cat = CatalogColumns.from_devices(devices)
    qty = np.zeros(cat.size, dtype=np.int64)
    qty[cat.index_of("QX182")] = 7
    req = Requirement.from_device(ORIGINAL)
    result = rank(cat, req, stock_qty=qty, locations={"QX182": ["C1/D2"]})
    assert [c.designation for c in result.candidates] == ["QX182", "QX181"]
    assert (result.candidates[0].in_stock, result.candidates[0].locations) == (7, ("C1/D2",))
    only = rank(cat, req, stock_qty=qty, in_stock_only=True)
    assert [c.designation for c in only.candidates] == ["QX182"]


def test_swap_history_bonus_and_penalty() -> None:
    devices = [ORIGINAL, part("QX191"), part("QX192"), part("QX193")]
    history = {"QX193": PastSwaps(worked=2, jobs=("J-1",)), "QX191": PastSwaps(failed=1)}
    found = ranked(devices, history=history)
    assert found["QX193"].score > found["QX192"].score > found["QX191"].score
    assert "worked-before" in found["QX193"].flag_codes()
    assert "failed-before" in found["QX191"].flag_codes()
    cat = CatalogColumns.from_devices(devices)
    order = [c.designation for c in rank(cat, Requirement.from_device(ORIGINAL),
                                         history=history).candidates]
    assert order == ["QX193", "QX192", "QX191"]


def test_limit_and_json_contract() -> None:
    devices = [ORIGINAL] + [part(f"QX2{i:02d}", vceo=40.0 + i) for i in range(30)]
    cat = CatalogColumns.from_devices(devices)
    result = rank(cat, Requirement.from_device(ORIGINAL), Stress(), MIL, limit=5)
    data = result.to_json()
    assert len(data["candidates"]) == 5
    assert data["policy"]["name"] == "mil-std-975m"
    assert data["policy"]["factors"]["voltage"] == 0.75
    assert data["requirement"]["source"] == "stored"
    first = data["candidates"][0]
    assert set(first) >= {"designation", "score", "verdict", "in_stock", "locations", "checks",
                          "flags"}
    assert set(first["checks"][0]) == {"parameter", "need", "offered", "ratio", "status", "note"}
    assert data["cautions"]
    # More voltage headroom ranks higher: the highest Vceo comes first.
    assert first["designation"] == "QX229"


# ---------------------------------------------------------------- inputs

@pytest.mark.parametrize(("kwargs", "words"), [
    ({"polarity": "pnp", "hfe_min": 200, "hfe_max": 50}, "hfe"),
    ({"polarity": "xyz"}, "polarity"),
    ({"polarity": "npn", "vceo": -3}, "vceo"),
    ({"polarity": "npn", "pinout": "EEB"}, "pinout"),
])
def test_requirement_refuses_bad_values(kwargs: dict[str, Any], words: str) -> None:
    with pytest.raises(SpecError, match=words):
        Requirement(**kwargs)


@pytest.mark.parametrize(("kwargs", "words"), [
    ({"ambient": math.nan}, "ambient"), ({"heatsink": -1.0}, "heatsink"),
    ({"vce_peak": 0.0}, "vce_peak"),
])
def test_stress_refuses_bad_values(kwargs: dict[str, Any], words: str) -> None:
    with pytest.raises(SpecError, match=words):
        Stress(**kwargs)


def test_negative_ambient_is_a_temperature() -> None:
    assert Stress(ambient=-20.0).ambient == -20.0


def test_overrides_make_a_mixed_requirement() -> None:
    req = Requirement.from_device(ORIGINAL).overridden(vceo=60.0)
    assert (req.source, req.vceo, req.ic_max) == ("mixed", 60.0, 0.2)
    assert Requirement.from_device(ORIGINAL).overridden().source == "stored"


def test_weights_refuse_bad_values_and_docstring_lists_defaults() -> None:
    with pytest.raises(SpecError, match=r"weights\.vceo"):
        Weights(vceo=-1)
    with pytest.raises(SpecError, match="unknown key"):
        Weights.from_mapping({"colour": 3})
    with pytest.raises(SpecError, match="every weight is 0"):
        Weights(**dict.fromkeys(DEFAULT_WEIGHTS.as_dict(), 0.0))
    doc = ranking.__doc__ or ""
    for name, value in DEFAULT_WEIGHTS.as_dict().items():
        assert re.search(rf"\b{name} {value:g}\b", doc), f"default weight {name} not documented"


def test_user_policy_factors_are_used() -> None:
    strict = policy_from_mapping("strict", {"voltage": 0.5, "current": 0.5, "power": 0.4})
    c = one(part("QX160", vceo=40.0), Stress(vce_peak=20.0), strict)
    assert c.check("vceo").status == "ok"        # 20 <= 0.5 x 40
    c = one(part("QX161", vceo=40.0), Stress(vce_peak=20.5), strict)
    assert c.check("vceo").status == "marginal"


def test_catalog_from_devices_sorts_by_key() -> None:
    cat = CatalogColumns.from_devices([part("QX9"), part("QX10"), part("AB1")])
    assert list(cat.key) == sorted(["QX9", "QX10", "AB1"])
    assert cat.index_of("qx-10") == list(cat.key).index("QX10")
    assert replace(ORIGINAL).key == "QX100"


@pytest.mark.parametrize(("rth", "shown"), [
    # A largest allowed Rth s-a is rounded down: a sink of the shown value must still keep Tj
    # within the limit (hand check: 25 + 25 W x (1.75 + 0.5 + 4.0) K/W = 181.25 °C > 180 °C,
    # so 3.95 K/W must not read 4).
    (3.95, "3.9"), (4.533, "4.5"), (4.2, "4.2"), (12.7, "12"), (0.456, "0.45"), (1.0, "1"),
])
def test_a_sink_limit_is_rounded_towards_safety(rth: float, shown: str) -> None:
    from partsdb.ranking.notes import sink_limit

    assert sink_limit(rth) == shown
    assert float(shown) <= rth


def test_a_policy_without_margin_scores_headroom_on_the_plain_curve() -> None:
    """A factor of 1.0 (derate nothing) has no policy limit between the rating and twice it:
    the stressed curve must be the plain one there, not a curve with a zero-width step."""
    import numpy as np

    from partsdb.ranking.checks import headroom_score_plain, headroom_score_stressed

    h = np.array([0.0, 0.5, 1.0, 1.5, 2.0, 4.0])
    assert np.allclose(headroom_score_stressed(h, 1.0), headroom_score_plain(h))
