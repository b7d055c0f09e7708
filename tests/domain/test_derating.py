"""The one grading rule, partsdb.derating.grade, for scalars and arrays.

The rule is the derating practice of MIL-STD-975M Appendix A (a stress within factor x rating
is acceptable; the rating itself is the absolute limit): ok <= factor x rating, marginal up to
the rating, under-rated above it, unknown when a value is missing. The oracle below is that
sentence written in plain Python, one value at a time.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import example, given
from hypothesis import strategies as st

from partsdb.derating import STATUSES, grade

positive = st.floats(min_value=1e-3, max_value=1e4, allow_nan=False, allow_infinity=False)
maybe = st.one_of(st.none(), positive)


def rule(stress: float | None, rating: float | None, factor: float) -> str:
    """The grading rule written out here: limits are compared with a relative tolerance of one
    part in 10^9 (a stress at the limit up to binary rounding is at the limit: issue 13)."""
    if stress is None or rating is None:
        return "unknown"
    if stress <= factor * rating * (1 + 1e-9):
        return "ok"
    return "marginal" if stress <= rating * (1 + 1e-9) else "under-rated"


@given(st.lists(st.tuples(maybe, maybe), min_size=1, max_size=30), st.floats(0.05, 1.0))
@example(pairs=[(1.0, 1.0)], factor=0.9999999999420206)  # found by hypothesis: within 1e-9
def test_grade_follows_the_rule_for_scalars_and_arrays(pairs: list[tuple[float | None, float | None]],
                                                       factor: float) -> None:
    expected = [rule(s, r, factor) for s, r in pairs]
    # One value at a time (as partsdb check grades)...
    assert [STATUSES[grade(s, r, factor)] for s, r in pairs] == expected
    # ...and whole arrays (as the ranking grades), NaN standing for a missing value.
    s = np.array([math.nan if v is None else v for v, _ in pairs])
    r = np.array([math.nan if v is None else v for _, v in pairs])
    assert [STATUSES[c] for c in grade(s, r, factor)] == expected
    # One stress against many ratings takes a shorter path in grade(): the same rule.
    first = pairs[0][0]
    if first is not None:
        assert [STATUSES[c] for c in grade(float(first), r, factor)] == \
            [rule(first, v, factor) for _, v in pairs]


def test_grade_with_an_absolute_limit_and_at_the_boundaries() -> None:
    # MIL-STD-975M App. A: junction at or below 125 °C (the limit), Tj max the rating.
    assert [STATUSES[grade(t, 150.0, limit=125.0)] for t in (125.0, 125.1, 150.0, 150.1)] == \
        ["ok", "marginal", "marginal", "under-rated"]
    # Both sides of the factor boundary: 0.75 x 40 V = 30 V.
    assert [STATUSES[grade(v, 40.0, 0.75)] for v in (30.0, 30.000001, 40.0, 40.000001)] == \
        ["ok", "marginal", "marginal", "under-rated"]
