"""Verdicts a technician can trust (issue 13): heat sinks, reverse base voltage, gain, speed,
unknown ratings, score parts, hot ambients and grade boundaries.

Every expected figure is worked out here by hand from the formula named beside it, never read
back from the code under test.
"""

from __future__ import annotations

import math
from typing import Any

import pytest

from partsdb.derating import BUILTIN_POLICIES, VERDICTS, policy_from_mapping
from partsdb.device import Device
from partsdb.operating import check_operating_point
from partsdb.ranking import CatalogColumns, Requirement, Stress, assess, rank
from partsdb.ranking.model import HEATSINK_FREE_AIR

WORKSHOP = BUILTIN_POLICIES["workshop"]


def part(name: str, **values: Any) -> Device:
    base: dict[str, Any] = dict(kind="bjt", polarity="npn", material="si", vceo=60.0,
                                vcbo=80.0, vebo=5.0, ic_max=4.0, ptot=40.0, ptot_ref="case",
                                tj_max=150.0, hfe_min=20.0, hfe_max=70.0, ft=3e6,
                                package="TO-3", pinout="BEC")
    base.update(values)
    return Device(designation=name, **base)


# Mounting (case-to-sink) resistances, DOMAIN.md "Heat sinks" (common practice): TO-3 with mica
# and grease 0.3-0.6 K/W (0.5 taken), TO-220 with washer and grease 0.5-1.5 K/W (1.0 taken).
RCS = {"TO-3": 0.5, "TO-220": 1.0}


def hand_power(ptot: float, tj_max: float, package: str, rsa: float, ta: float = 25.0) -> float:
    """P = (Tj max - Ta) / (Rth j-c + Rth c-s + Rth s-a), Rth j-c = (Tj max - 25) / Ptot(case)
    (DOMAIN.md "Heat sinks", standard datasheet convention)."""
    rjc = (tj_max - 25.0) / ptot
    return (tj_max - ta) / (rjc + RCS[package] + rsa)


# ------------------------------------------------------------------------ 1. heat sinks

TO3_40W = part("QH040", ptot=40.0, package="TO-3")
TO220_65W = part("QH065", ptot=65.0, package="TO-220", pinout="BCE")


def test_65w_to220_on_the_original_sink_beats_a_40w_to3() -> None:
    # Issue 13's case: on any heat sink the 65 W TO-220 part allows more than the 40 W TO-3.
    req = Requirement.from_device(TO3_40W)
    c = assess(TO220_65W, req, Stress())
    ratios = {s: hand_power(65, 150, "TO-220", s) / hand_power(40, 150, "TO-3", s)
              for s in (0.5, 1.0, 2.0, 5.0)}
    worst = min(ratios, key=ratios.__getitem__)
    assert all(r > 1 for r in ratios.values())
    ptot = c.check("ptot")
    assert ptot.status == "ok"
    assert ptot.ratio == pytest.approx(ratios[worst])
    assert ptot.offered == pytest.approx(hand_power(65, 150, "TO-220", worst))
    assert ptot.need == pytest.approx(hand_power(40, 150, "TO-3", worst))
    assert "original's heat sink" in ptot.note and "assumed" in ptot.note
    # and the other way round the TO-3 part is under-rated on the TO-220 part's sink
    back = assess(TO3_40W, Requirement.from_device(TO220_65W), Stress())
    assert back.check("ptot").status == "under-rated"


def test_one_given_heat_sink_is_used_as_given() -> None:
    req = Requirement.from_device(TO3_40W)
    c = assess(TO220_65W, req, Stress(heatsink=3.0))
    # hand formula at Rth s-a 3 K/W
    assert c.check("ptot").offered == pytest.approx(hand_power(65, 150, "TO-220", 3.0))
    assert c.check("ptot").need == pytest.approx(hand_power(40, 150, "TO-3", 3.0))


def test_free_air_compares_the_bare_outlines() -> None:
    # --heatsink free-air: case-to-ambient of the bare outline (thermal.FREE_AIR_CASE_TO_AMBIENT,
    # common practice: TO-3 30 K/W, TO-220 60 K/W); P = 125 / (Rjc + Rca).
    req = Requirement.from_device(TO3_40W)
    c = assess(TO220_65W, req, Stress(heatsink=HEATSINK_FREE_AIR))
    assert c.check("ptot").offered == pytest.approx(125 / (125 / 65 + 60.0))
    assert c.check("ptot").need == pytest.approx(125 / (125 / 40 + 30.0))
    assert c.check("ptot").status == "under-rated"


def test_free_air_rated_original_keeps_the_free_air_comparison() -> None:
    # Linear derating of a free-air rating (thermal.py, datasheet derating curve): at 25 °C the
    # allowed power is the rating itself.
    small = part("QH001", ptot=1.0, ptot_ref="ambient", package="TO-5")
    c = assess(part("QH002", ptot=0.8, ptot_ref="ambient", package="TO-5"),
               Requirement.from_device(small), Stress())
    assert c.check("ptot").need == pytest.approx(1.0)
    assert c.check("ptot").offered == pytest.approx(0.8)
    assert "original's heat sink" not in c.check("ptot").note


def test_power_on_a_case_rated_part_reports_the_sink_it_needs() -> None:
    # Rth s-a <= (Tj allowed - Ta)/P - Rth j-c - Rth c-s (DOMAIN.md "Heat sinks"); workshop
    # policy: Tj allowed = Tj max - 20 K = 130 °C (common practice bench rule).
    req = Requirement.from_device(TO3_40W)
    c = assess(TO220_65W, req, Stress(power=10.0))
    hand = (130.0 - 25.0) / 10.0 - 125.0 / 65.0 - 1.0
    ptot = c.check("ptot")
    assert ptot.heatsink_needed == pytest.approx(hand)
    assert ptot.status == "ok"
    # shown rounded DOWN to two digits (7.58 K/W reads 7.5): a sink of the shown value still
    # keeps Tj within the limit
    assert hand == pytest.approx(7.577, abs=1e-3)
    assert "needs a heat sink of 7.5 K/W or better" in ptot.note
    assert ptot.to_json()["heatsink_needed"] == pytest.approx(hand, abs=1e-3)
    # no Tj estimate is shown as a need
    assert c.check("tj_max").need is None
    assert "est." not in c.shown["tj_max"][0]


def test_power_beyond_an_ideal_sink_is_under_rated() -> None:
    # 60 W through a 40 W TO-3: (130 - 25)/60 - 3.125 - 0.5 < 0 (same formula): no sink helps.
    c = assess(TO3_40W, Requirement.from_device(TO220_65W), Stress(power=60.0))
    hand = (130.0 - 25.0) / 60.0 - 125.0 / 40.0 - 0.5
    assert hand <= 0
    assert c.check("ptot").heatsink_needed == pytest.approx(hand)
    assert c.check("ptot").status == "under-rated"
    assert c.verdict == "under-rated"


def test_free_air_part_under_power_has_no_sink_figure() -> None:
    small = part("QH003", ptot=1.0, ptot_ref="ambient", package="TO-5")
    c = assess(small, Requirement.from_device(small), Stress(power=0.3))
    assert c.check("ptot").heatsink_needed is None
    assert c.check("ptot").to_json()["heatsink_needed"] is None


# ------------------------------------------------------------- 2. reverse base voltage

def test_vebo_below_the_originals_is_under_rated_and_the_ge_note_says_so() -> None:
    # Common practice: germanium circuits reverse-bias the base-emitter junction past 5 V.
    ge = part("QG375", polarity="pnp", material="ge", vebo=12.0, ptot=0.15, ptot_ref="ambient",
              tj_max=75.0, package="TO-1", pinout="EBC")
    si = part("QS958", polarity="pnp", material="si", vebo=5.0, ptot=0.3, ptot_ref="ambient",
              package="TO-1", pinout="EBC")
    c = assess(si, Requirement.from_device(ge))
    assert c.check("vebo").status == "under-rated"
    assert "Vebo" in c.check("material").note
    assert assess(replace_vebo(si, 15.0), Requirement.from_device(ge)).check("vebo").status \
        == "ok"
    assert assess(replace_vebo(si, None), Requirement.from_device(ge)).check("vebo").status \
        == "unknown"


def test_veb_peak_is_the_vebo_need_when_given() -> None:
    # Graded like the other voltages (MIL-STD-975M Appendix A: voltage 0.75 x rating): 3.75 V
    # on a 5 V Vebo is at the limit, 4 V marginal, 6 V under-rated.
    ge = part("QG376", polarity="pnp", material="ge", vebo=12.0, ptot=0.15, ptot_ref="ambient",
              tj_max=75.0, package="TO-1", pinout="EBC")
    si = part("QS959", polarity="pnp", vebo=5.0, ptot=0.3, ptot_ref="ambient", package="TO-1",
              pinout="EBC")
    mil = BUILTIN_POLICIES["mil-std-975m"]
    req = Requirement.from_device(ge)
    for veb, status in ((3.75, "ok"), (4.0, "marginal"), (5.0, "marginal"), (6.0, "under-rated")):
        c = assess(si, req, Stress(veb_peak=veb), mil)
        assert (c.check("vebo").need, c.check("vebo").status) == (veb, status)
    assert "below-original" in assess(si, req, Stress(veb_peak=3.0), mil).flag_codes()


def replace_vebo(dev: Device, vebo: float | None) -> Device:
    from dataclasses import replace

    return replace(dev, vebo=vebo)


# ----------------------------------------------------------------------------- 3. gain

def test_gain_test_currents_a_decade_apart_are_at_best_marginal() -> None:
    # Common practice: hFE falls at both ends of the current range, so gains measured more
    # than a decade apart are not comparable.
    orig = part("QG001", hfe_min=60.0, hfe_max=140.0, hfe_ic=2e-3)
    same_window = part("QG002", hfe_min=60.0, hfe_max=140.0, hfe_ic=0.3)
    c = assess(same_window, Requirement.from_device(orig), Stress(ic_peak=2e-3))
    assert c.check("hfe").status == "marginal"
    note = c.check("hfe").note
    assert "300 mA" in note and "2 mA" in note and "stage current" in note
    within = part("QG003", hfe_min=60.0, hfe_max=140.0, hfe_ic=10e-3)  # 5x apart: comparable
    assert assess(within, Requirement.from_device(orig)).check("hfe").status == "ok"


def test_gain_5_to_12_is_under_rated_for_100_to_300() -> None:
    # Issue 13: a window wholly below the need is under-rated (common practice).
    req = Requirement(polarity="npn", hfe_min=100.0, hfe_max=300.0)
    assert assess(part("QG004", hfe_min=5.0, hfe_max=12.0), req).check("hfe").status \
        == "under-rated"
    assert assess(part("QG005", hfe_min=40.0, hfe_max=120.0), req).check("hfe").status \
        == "under-rated"  # 40 < 100 / 2
    assert assess(part("QG006", hfe_min=60.0, hfe_max=200.0), req).check("hfe").status \
        == "marginal"  # partial overlap


# ---------------------------------------------------------------------------- 4. speed

def test_freq_need_is_capped_at_the_originals_ft() -> None:
    # |hfe(f)| = hfe0 / sqrt(1 + (f/f_beta)^2), f_beta = fT / hfe0 (textbook single-pole model,
    # from memory): the original (fT 6 MHz, hFE 40) gives about 13 at 455 kHz, so hFE min x f
    # = 18.2 MHz would fail the original in its own stage; the need is capped at 6 MHz.
    hfe0, ft, f = 40.0, 6e6, 455e3
    gain = hfe0 / math.sqrt(1 + (f / (ft / hfe0)) ** 2)
    assert 12 < gain < 14
    orig = part("QF390", hfe_min=hfe0, hfe_max=120.0, ft=ft)
    c = assess(part("QF391", hfe_min=hfe0, hfe_max=120.0, ft=12e6), Requirement.from_device(orig),
               Stress(freq=f))
    assert c.check("ft").need == pytest.approx(ft)
    assert c.check("ft").status == "ok"
    assert "capped" in c.check("ft").note


def test_much_faster_is_judged_against_the_original_and_scores_lower() -> None:
    orig = part("QF001", ft=1e6)
    req = Requirement.from_device(orig)
    tenfold = assess(part("QF010", ft=10e6), req, Stress(freq=1e3))
    fast = assess(part("QF025", ft=25e6), req, Stress(freq=1e3))
    assert "much-faster" in fast.flag_codes() and "much-faster" not in tenfold.flag_codes()
    # beyond 10x the original the fT sub-score falls (issue 13), half marks at 100x
    assert fast.subscores["ft"] < tenfold.subscores["ft"]
    assert assess(part("QF100", ft=100e6), req).subscores["ft"] == pytest.approx(
        tenfold.subscores["ft"] / 2)


# ---------------------------------------------------------------- 5. unknown ratings

def test_unverified_ranks_after_marginal_and_before_under_rated() -> None:
    orig = part("QU000")
    parts = [orig, part("QU001", ic_max=None),                 # unverified
             part("QU002", vceo=50.0, vcbo=80.0),            # below the original: under
             part("QU003", package="TO-66"),                 # other outline: marginal
             part("QU004", ptot=None)]                       # unverified
    result = rank(CatalogColumns.from_devices(parts), Requirement.from_device(orig), limit=10)
    got = {c.designation: c.verdict for c in result.candidates}
    assert got["QU001"] == got["QU004"] == "unverified"
    assert got["QU002"] == "under-rated" and got["QU003"] == "marginal"
    order = [VERDICTS.index(c.verdict) for c in result.candidates]
    assert order == sorted(order)
    assert VERDICTS.index("marginal") < VERDICTS.index("unverified") < \
        VERDICTS.index("under-rated")


def test_low_confidence_keeps_a_part_from_suitable() -> None:
    # Vcbo, Vebo, Tj max and fT blank: 7 of 11 checks known, 64 % < 70 % (policy default).
    orig = part("QC000")
    half = part("QC001", vcbo=None, vebo=None, tj_max=None, ft=None)
    c = assess(half, Requirement.from_device(orig))
    assert c.confidence < 0.70
    assert c.verdict == "marginal"
    assert "low-confidence" in c.flag_codes()
    lenient = policy_from_mapping("lenient", {"min_confidence": 0.5})
    assert assess(half, Requirement.from_device(orig), policy=lenient).verdict == "suitable"


# ------------------------------------------------------------------- 6. score parts

def test_score_parts_sum_to_the_score() -> None:
    orig = part("QS000")
    c = assess(part("QS001", vceo=90.0, ft=None, package="TO-66"), Requirement.from_device(orig))
    assert sum(c.score_parts.values()) == pytest.approx(c.score, abs=1e-9)
    js = c.to_json()
    assert sum(js["score_parts"].values()) == pytest.approx(js["score"], abs=0.05)
    gains, losses = c.gains_and_losses()
    assert len(gains) == 2 and len(losses) == 2
    assert gains[0][1] >= gains[1][1] and losses[0][1] >= losses[1][1]


# ----------------------------------------------------------- 7. ambient above Tj max

def test_ambient_at_tj_max_is_under_rated() -> None:
    ge = part("QT075", material="ge", tj_max=75.0, ptot=0.15, ptot_ref="ambient")
    c = assess(ge, Requirement.from_device(ge), Stress(ambient=75.0))
    assert c.check("tj_max").status == "under-rated"
    assert "at or above Tj max" in c.check("tj_max").note
    assert assess(ge, Requirement.from_device(ge), Stress(ambient=74.0)).check(
        "tj_max").status != "under-rated"


# ------------------------------------------------------------------ 11. boundaries

def test_check_at_exactly_the_power_limit_is_ok_with_zero_headroom() -> None:
    # Issue 13: a 3 W part at 2.1 W under a 70 % power factor is at the limit (0.7 x 3 W
    # rounds to 2.0999999999999996 in binary); the workshop policy's power factor is 0.70.
    three = part("QB003", ptot=3.0, ptot_ref="ambient", package="TO-126")
    r = check_operating_point(three, 2.1, 1.0, power=2.1)
    power = next(lim for lim in r.limits if lim.parameter == "power")
    assert power.status == "ok" and power.headroom == 0.0
    above = check_operating_point(three, 2.1, 1.0, power=2.1 * (1 + 1e-6))
    assert next(lim for lim in above.limits if lim.parameter == "power").status == "marginal"
