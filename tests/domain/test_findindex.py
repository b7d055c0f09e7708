"""The close-spelling index: the same list as scoring every key, and the bounds it prunes with.

Oracles: the distances are counted by hand below (optimal string alignment: insert, delete,
substitute one character or swap two neighbours, each costing 1, no character edited twice:
Damerau's 1964 edits in their restricted form, from memory); the reference list is rapidfuzz scoring every key
(``scan_close``), a library outside the project, against which the index must agree exactly.
"""

from __future__ import annotations

import random

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rapidfuzz.distance import OSA

from partsdb.findindex import FLIPS_PER_EDIT, CloseIndex, _signature_of, scan_close


def _flips(a: str, b: str) -> int:
    sa, sb = _signature_of(a), _signature_of(b)
    return int(np.bitwise_count(sa[0] ^ sb[0]) + np.bitwise_count(sa[1] ^ sb[1]))


@pytest.mark.parametrize(("a", "b", "distance", "flips"), [
    # swap 4 and 7: one edit; the same characters, so no bit differs
    ("BC547", "BC574", 1, 0),
    # 4 -> 5: one edit; 4 no longer occurs (its once-bit), 5 now occurs twice (its twice-bit)
    ("BC547", "BC557", 1, 2),
    # drop the gain letter B: one edit; B still occurs once (in BC), so only B's twice-bit
    ("BC547B", "BC547", 1, 1),
    # 2SC1815 -> 2SA1015: C->A and 8->0, two edits; bits: C once, A once, 8 once, 0 once,
    # and 1 still twice in both: four bits
    ("2SC1815", "2SA1015", 2, 4),
])
def test_signature_bound_by_hand(a: str, b: str, distance: int, flips: int) -> None:
    assert OSA.distance(a, b) == distance
    assert _flips(a, b) == flips
    assert -(-flips // FLIPS_PER_EDIT) <= distance


def test_finds_the_same_as_scoring_every_key_on_a_dense_catalog() -> None:
    rng = random.Random(11)
    keys = list(dict.fromkeys(
        f"{rng.choice(['2SC', '2SA', 'BC', '2N', 'OC', 'HX'])}{rng.randint(10, 99999)}"
        f"{rng.choice(['', '', 'A', 'B', 'GR'])}" for _ in range(20_000)))
    index = CloseIndex(keys)
    for key in rng.sample(keys, 60):
        query = key[:-2] + key[-1] + key[-2]
        assert index.close(query, 40, 0.5) == scan_close(query, keys, 40, 0.5), query
    # A query like no key: nothing prunes, the answer is still the same (the one-pass path).
    assert index.close("QQQQQQQQ", 40, 0.5) == scan_close("QQQQQQQQ", keys, 40, 0.5) == []


def test_ties_are_decided_by_position() -> None:
    # Every key is one substitution from the query (similarity 0.8): the first k positions win.
    keys = ["BC548", "BC549", "BC546", "BC540", "BC541"]
    assert CloseIndex(keys).close("BC547", 3, 0.5) == [(0, 0.800000011920929),
                                                       (1, 0.800000011920929),
                                                       (2, 0.800000011920929)]


def test_empty_and_degenerate() -> None:
    assert CloseIndex([]).close("BC547", 10, 0.5) == []
    index = CloseIndex(["", "A", "BC547"])
    assert index.close("", 10, 0.5) == scan_close("", ["", "A", "BC547"], 10, 0.5)
    assert index.close("BC547", 0, 0.5) == []
    assert len(index) == 3 and index.nbytes > 0


_key = st.text(alphabet="ABCOS0125789-é", min_size=0, max_size=9)


@settings(max_examples=300, deadline=None)
@given(st.lists(_key, min_size=1, max_size=60), _key, st.integers(1, 12),
       st.sampled_from([0.3, 0.5, 0.75]))
def test_agrees_with_scoring_every_key(keys: list[str], query: str, k: int,
                                       cutoff: float) -> None:
    assert CloseIndex(keys).close(query, k, cutoff) == scan_close(query, keys, k, cutoff)


@settings(max_examples=300, deadline=None)
@given(_key, _key)
def test_bounds_never_exceed_the_distance(a: str, b: str) -> None:
    distance = OSA.distance(a, b)
    assert abs(len(a) - len(b)) <= distance
    assert -(-_flips(a, b) // FLIPS_PER_EDIT) <= distance
