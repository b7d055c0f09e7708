"""Properties of the ranking, proved over generated parts (hypothesis).

The grading rule is MIL-STD-975M / policy style (ok <= factor x rating < marginal <= rating <
under-rated), checked against partsdb.derating.grade itself; the others are the ranking's own
promises: headroom never hurts, dominance, stock preference, zero weights.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from partsdb.derating import BUILTIN_POLICIES, grade
from partsdb.device import Device
from partsdb.ranking import (
    STATUS_NAMES,
    VERDICTS,
    CatalogColumns,
    Requirement,
    Stress,
    Weights,
    grade_codes,
    rank,
)

POLICIES = list(BUILTIN_POLICIES.values())
RATINGS = ("vceo", "vcbo", "ic_max", "ptot", "ft")

positive = st.floats(min_value=1e-3, max_value=1e4, allow_nan=False, allow_infinity=False)


@st.composite
def devices(draw: Any, name: str = "QA1") -> Device:
    vceo = draw(st.floats(5, 500))
    hfe_min = draw(st.floats(10, 500))
    return Device(
        designation=name, kind="bjt", polarity="npn", material=draw(st.sampled_from(["si", "ge"])),
        vceo=vceo, vcbo=vceo * draw(st.floats(1, 2)), ic_max=draw(st.floats(0.01, 20)),
        ptot=draw(st.floats(0.05, 100)), ptot_ref=draw(st.sampled_from(["ambient", "case"])),
        tj_max=draw(st.floats(75, 200)), hfe_min=hfe_min,
        hfe_max=hfe_min * draw(st.floats(1, 5)), ft=draw(st.floats(1e5, 1e9)),
        package=draw(st.sampled_from(["TO-92", "TO-5", "TO-220"])),
        pinout=draw(st.sampled_from(["EBC", "ECB", "BCE"])))


@st.composite
def stresses(draw: Any) -> Stress:
    def maybe(strategy: Any) -> Any:
        return draw(st.one_of(st.none(), strategy))

    return Stress(vce_peak=maybe(st.floats(1, 400)), ic_peak=maybe(st.floats(1e-3, 10)),
                  power=maybe(st.floats(1e-3, 20)), ambient=draw(st.floats(25, 70)),
                  freq=maybe(st.floats(100, 1e6)), heatsink=maybe(st.floats(0.5, 20)))


def scores(devs: list[Device], req: Requirement, stress: Stress, policy: Any,
           weights: Weights | None = None, stock: dict[str, int] | None = None
           ) -> tuple[dict[str, Any], list[str]]:
    cat = CatalogColumns.from_devices(devs)
    qty = None
    if stock is not None:
        qty = np.zeros(cat.size, dtype=np.int64)
        for name, q in stock.items():
            qty[cat.index_of(name)] = q
    result = rank(cat, req, stress, policy, weights, qty, limit=len(devs))
    return {c.designation: c for c in result.candidates}, [c.designation for c in
                                                         result.candidates]


@given(st.lists(st.one_of(st.none(), positive), min_size=1, max_size=30),
       st.lists(st.one_of(st.none(), positive), min_size=1, max_size=30),
       st.floats(0.05, 1.0))
def test_grade_codes_match_derating_grade(stress: list[float | None],
                                          rating: list[float | None], factor: float) -> None:
    # The vectorised grading must equal the shared rule in partsdb.derating.grade exactly.
    n = min(len(stress), len(rating))
    s = np.array([np.nan if v is None else v for v in stress[:n]])
    r = np.array([np.nan if v is None else v for v in rating[:n]])
    names = {"ok": "ok", "marginal": "marginal", "over": "under-rated", "unknown": "unknown"}
    expected = [names[g] for g in grade(s, r, factor)]
    assert [STATUS_NAMES[c] for c in grade_codes(s, r, factor)] == expected


@settings(max_examples=150, deadline=None)
@given(devices("QA0"), devices("QA1"), stresses(), st.sampled_from(POLICIES),
       st.sampled_from((*RATINGS, "tj_max")), st.floats(1.0, 10.0))
def test_more_headroom_never_lowers_the_score(original: Device, cand: Device, stress: Stress,
                                              policy: Any, field: str, k: float) -> None:
    if field == "tj_max":
        # A higher Tj max at the same Ptot means a higher rating-derived Rth (module docstring):
        # headroom on Tj max alone is judged without a power stress.
        stress = replace(stress, power=None)
        better = replace(cand, designation="QA2", tj_max=min(cand.tj_max * k, 300.0))
    elif field == "vceo":
        better = replace(cand, designation="QA2", vceo=cand.vceo * k,
                         vcbo=max(cand.vcbo, cand.vceo * k))
    else:
        better = replace(cand, designation="QA2", **{field: getattr(cand, field) * k})
    req = Requirement.from_device(original)
    found, _ = scores([original, cand, better], req, stress, policy)
    assert found["QA2"].score >= found["QA1"].score - 1e-9
    assert VERDICTS.index(found["QA2"].verdict) <= VERDICTS.index(found["QA1"].verdict)


@settings(max_examples=150, deadline=None)
@given(devices("QA0"), devices("QB1"), stresses(), st.sampled_from(POLICIES),
       st.lists(st.sampled_from(RATINGS), min_size=1, unique=True),
       st.floats(1.01, 5.0), st.booleans())
def test_dominating_candidate_never_ranks_below(original: Device, cand: Device, stress: Stress,
                                               policy: Any, fields: list[str], k: float,
                                               name_first: bool) -> None:
    changes = {f: getattr(cand, f) * k for f in fields}
    if "vceo" in changes:
        changes["vcbo"] = max(changes.get("vcbo", cand.vcbo), changes["vceo"])
    # Name order must not decide: the better part sorts before or after by designation.
    better = replace(cand, designation="QA1" if name_first else "QC1", **changes)
    req = Requirement.from_device(original)
    found, order = scores([original, cand, better], req, stress, policy)
    a, b = found["QB1"], found[better.designation]
    assert all(b.subscores[c] >= a.subscores[c] - 1e-12 for c in a.subscores)
    assume(any(b.subscores[c] > a.subscores[c] + 1e-12 for c in a.subscores))
    assert order.index(better.designation) < order.index("QB1")


@settings(max_examples=100, deadline=None)
@given(devices("QA0"), devices("QA1"), stresses(), st.sampled_from(POLICIES),
       st.integers(1, 500))
def test_in_stock_ranks_above_identical_out_of_stock(original: Device, cand: Device,
                                                     stress: Stress, policy: Any,
                                                     qty: int) -> None:
    # "QA1" sorts before "QA2", so the stocked twin must win on stock, not on its name.
    twin = replace(cand, designation="QA2")
    req = Requirement.from_device(original)
    found, order = scores([original, cand, twin], req, stress, policy, stock={"QA2": qty})
    assert order.index("QA2") < order.index("QA1")
    assert found["QA2"].in_stock == qty and found["QA1"].in_stock == 0


@settings(max_examples=100, deadline=None)
@given(devices("QA0"), devices("QA1"), devices("QA2"), stresses(), st.sampled_from(POLICIES),
       st.sampled_from((*RATINGS, "hfe", "package", "pinout", "material")))
def test_zero_weight_removes_a_criterion(original: Device, cand: Device, other: Device,
                                         stress: Stress, policy: Any, criterion: str) -> None:
    weights = replace(Weights(), **{criterion: 0.0})
    if criterion == "ptot":
        # Ptot also sets the Rth behind the tj_max check under a power stress (thermal chain),
        # so that data feeds a second criterion; judge the ptot weight alone without one.
        stress = replace(stress, power=None)
    if criterion == "package":
        # The outline also gives a case-rated part its free-air case-to-ambient Rth when no
        # heat sink is stated (thermal.py); with a sink stated the outline is fit only.
        stress = replace(stress, heatsink=stress.heatsink or 5.0)
    fields = {"hfe": ("hfe_min", "hfe_max")}.get(criterion, (criterion,))
    changed = replace(cand, designation="QA2",
                      **{f: getattr(other, f) for f in fields})
    req = Requirement.from_device(original)
    found, _ = scores([original, cand, changed], req, stress, policy, weights)
    assert abs(found["QA1"].score - found["QA2"].score) < 1e-9
    assert found["QA1"].subscores == {**found["QA2"].subscores,
                                      criterion: found["QA1"].subscores[criterion]}
