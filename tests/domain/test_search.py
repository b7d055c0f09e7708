"""Fuzzy find: sloppy spellings reach the intended part.

The catalog is invented designations in the shapes of Pro Electron, JIS C 7012, JEDEC EIA-370
and the older European scheme, with look-alike distractors. The oracle is the spelling
transformation itself: each query is made from the intended designation by one named slip
(applied by the helpers below), so the right answer is known by construction.
"""

from __future__ import annotations

import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from partsdb.designations import normalize
from partsdb.search import Hit, SearchIndex, describe_slip

CATALOG: list[str] = [
    "BC384", "BC384A", "BC384B", "BC348", "BC385", "BC394", "BC584", "BD384", "BC483",
    "BC572B", "BC527", "BC573", "BC752",
    "2SC3377", "2SC3377-Y", "2SA3377", "2SC3771", "2SD3377",
    "2N4409", "2N4490", "2N4419", "2N4049", "2N4400",
    "2N7781", "2N7718", "2N7881", "2N7791",
    "BFQ77", "BFQ71", "BFR77",
    "OC83", "OC38", "AC183",
]
NOTES: list[str | None] = [None] * len(CATALOG)
NOTES[CATALOG.index("BD384")] = "Output stage of the bench amplifier; matched pair"
NOTES[CATALOG.index("2N7781")] = "salvaged from a tuner board"


@pytest.fixture(scope="module")
def index() -> SearchIndex:
    return SearchIndex(CATALOG, NOTES)


def top(index: SearchIndex, query: str, n: int = 3) -> list[str]:
    return [h.designation for h in index.find(query, limit=n)]


# ---------------------------------------------------------------- the spelling slips

def lower(d: str) -> str:
    return d.lower()


def stray_separators(d: str) -> str:
    return f" {d[:2]}-{d[2:4]} {d[4:]} "


def add_gain_letter(d: str) -> str:
    return d + "C"


def drop_gain_letter(d: str) -> str:
    assert d[-1] in "ABC"
    return d[:-1]


def zero_as_letter_o(d: str) -> str:
    i = d.rindex("0")
    return d[:i] + "O" + d[i + 1:]


def letter_o_as_zero(d: str) -> str:
    assert d.startswith("O")
    return "0" + d[1:]


def transpose_last_digits(d: str) -> str:
    return d[:-2] + d[-1] + d[-2]


def one_wrong_digit(d: str) -> str:
    i = max(i for i, c in enumerate(d) if c.isdigit())
    return d[:i] + str((int(d[i]) + 5) % 10) + d[i + 1:]


@pytest.mark.parametrize(("slip", "intended"), [(lower, "BC384B"), (stray_separators, "2SC3377"),
                                               (lower, "OC83")])
def test_case_and_separator_slips_are_exact(index: SearchIndex, slip: object,
                                            intended: str) -> None:
    query = slip(intended)  # type: ignore[operator]
    hit = index.find(query, limit=1)[0]
    assert (hit.designation, hit.reason, hit.score) == (intended, "exact", 100)


@pytest.mark.parametrize(("slip", "intended"), [
    (add_gain_letter, "BD384"),         # BD384C not in the catalog
    (drop_gain_letter, "BC572B"),       # BC572 not in the catalog; BC527, BC573 distract
    (zero_as_letter_o, "2N4409"),       # 2N44O9; 2N4490, 2N4419, 2N4049 distract
    (zero_as_letter_o, "2N4400"),
    (letter_o_as_zero, "OC83"),         # 0C83; OC38, AC183 distract
    (transpose_last_digits, "2N7791"),  # 2N7719; 2N7718 is one digit off, 2N7781 near
    (transpose_last_digits, "BC394"),   # BC349; BC348 is one digit off
    (transpose_last_digits, "BFQ71"),   # BFQ17; BFQ77 distracts
    (one_wrong_digit, "2N7881"),        # 2N7886; 2N7781, 2N7718 distract
    (one_wrong_digit, "BC752"),         # BC757
])
def test_slip_finds_the_intended_part_in_top_three(index: SearchIndex, slip: object,
                                                   intended: str) -> None:
    query = slip(intended)  # type: ignore[operator]
    assert normalize(query) not in {normalize(c) for c in CATALOG}  # a slip, not another name
    assert intended in top(index, query), (query, index.find(query, limit=5))


def test_transposition_ranks_above_one_wrong_digit(index: SearchIndex) -> None:
    # 2N7719 is 2N7791 with two digits swapped and 2N7718 with one digit wrong: OSA distance 1
    # to both, but the explicit swap look-up puts the transposition first.
    hits = index.find("2N7719", limit=3)
    assert hits[0].designation == "2N7791"
    assert hits[0].reason == "transposed characters"
    assert hits[1].designation == "2N7718" and hits[1].reason == "one wrong digit"


def test_exact_first_then_prefix(index: SearchIndex) -> None:
    hits = index.find("bc 384", limit=4)
    assert hits[0].designation == "BC384" and hits[0].reason == "exact" and hits[0].score == 100
    assert [h.designation for h in hits[1:3]] == ["BC384A", "BC384B"]
    assert all(h.reason.startswith("prefix") for h in hits[1:3])
    assert hits[1].reason == "prefix (gain group A)"


def test_marking_without_2s_maps_to_registered_name_and_says_so(index: SearchIndex) -> None:
    # JIS C 7012 body markings omit "2S": C3377 is 2SC3377.
    hits = index.find("C3377", limit=3)
    assert hits[0].designation == "2SC3377"
    assert "without 2S" in hits[0].reason and "2SC3377" in hits[0].reason
    assert hits[1].designation == "2SC3377-Y"


def test_ranking_order_exact_prefix_2s_close() -> None:
    idx = SearchIndex(["C3377", "C3377B", "2SC3377", "C3378"])
    reasons = [h.reason for h in idx.find("C3377", limit=4)]
    assert reasons[0] == "exact"
    assert reasons[1].startswith("prefix")
    assert reasons[2].startswith("without 2S")
    assert reasons[3] == "one wrong digit"
    scores = [h.score for h in idx.find("C3377", limit=4)]
    assert scores == sorted(scores, reverse=True)


def test_words_in_notes_are_a_weaker_match(index: SearchIndex) -> None:
    hits = index.find("tuner", limit=3)
    assert hits[0].designation == "2N7781" and hits[0].reason == "in notes"
    assert hits[0].score < 85
    both = index.find("matched output", limit=3)
    assert both[0].designation == "BD384"


def test_no_notes_no_notes_pass() -> None:
    assert SearchIndex(["BC384"]).find("tuner") == []


def test_empty_and_bad_arguments() -> None:
    idx = SearchIndex(CATALOG)
    assert idx.find("  - ") == []
    with pytest.raises(ValueError, match="limit"):
        idx.find("BC384", limit=0)
    with pytest.raises(ValueError, match="notes"):
        SearchIndex(["BC384", "BC385"], ["only one"])
    assert SearchIndex([]).find("BC384") == []


def test_limit_is_respected_and_positions_point_into_input(index: SearchIndex) -> None:
    hits = index.find("BC", limit=5)
    assert len(hits) == 5
    for h in hits:
        assert isinstance(h, Hit) and CATALOG[h.position] == h.designation
        assert 0 <= h.score <= 100


@pytest.mark.parametrize(("query", "key", "reason"), [
    ("2N44O9", "2N4409", "letter O for zero"),
    ("BC483", "BC438", "transposed characters"),
    ("BC483", "BC487", "one wrong digit"),
    ("BC384C", "BC384", "without the gain-group letter C"),
    ("BC384C", "BC384B", "different gain group"),
    ("BC34", "BC384", "one character missing"),
    ("BC3884", "BC384", "one character extra"),
    ("XY", "BC384", "close spelling"),
])
def test_describe_slip(query: str, key: str, reason: str) -> None:
    assert describe_slip(query, key) == reason


# ---------------------------------------------------------------- property

_designation = st.text(alphabet="ABCDOSN0123456789 -", min_size=1, max_size=10).filter(
    lambda s: normalize(s) != "")


@settings(max_examples=150, deadline=None)
@given(st.lists(_designation, min_size=1, max_size=40), st.data())
def test_exact_normalised_form_comes_first(designations: list[str], data: st.DataObject) -> None:
    i = data.draw(st.integers(0, len(designations) - 1))
    key = normalize(designations[i])
    hits = SearchIndex(designations).find(key, limit=len(designations))
    assert hits[0].reason == "exact" and normalize(hits[0].designation) == key
    exact_positions = {h.position for h in hits if h.reason == "exact"}
    assert i in exact_positions


# ---------------------------------------------------------------- larger catalog

def _invented(rng: random.Random) -> str:
    r = rng.random()
    if r < 0.3:
        return f"B{rng.choice('CDFLSU')}{rng.randint(100, 999)}{rng.choice(['', 'A', 'B', 'C'])}"
    if r < 0.6:
        return f"2S{rng.choice('ABCDJK')}{rng.randint(11, 5999)}"
    return f"2N{rng.randint(100, 7999)}"


def test_slips_rank_on_a_dense_catalog() -> None:
    # 5,000 invented designations; slips (O for zero, gain letter, transposition, case) of a
    # sample must keep the intended part in the top three, unless the slip made another name
    # or the start of one (prefix hits rank above close spellings by design).
    rng = random.Random(7)
    catalog = list(dict.fromkeys(_invented(rng) for _ in range(5000)))
    keys = set(catalog)
    idx = SearchIndex(catalog)
    checked = 0
    for intended in rng.sample(catalog, 300):
        queries = [transpose_last_digits(intended) if intended[-1].isdigit() else None,
                   zero_as_letter_o(intended) if "0" in intended else None,
                   add_gain_letter(intended) if intended[-1].isdigit() else None,
                   intended.lower()]
        for query in filter(None, queries):
            q = normalize(query)
            if q != intended and any(k.startswith(q) for k in keys):
                continue
            checked += 1
            assert intended in top(idx, query), (query, idx.find(query, limit=5))
    assert checked > 500


def test_keys_are_the_normalised_designations_in_input_order() -> None:
    # The keys must be exactly normalize() of each designation, blanks and separators included.
    names = ["bc 547-b", "", "2sc\n1815", "  ", "BC547B", "2N3904", "oc_71/x", "A.B"]
    idx = SearchIndex(names)
    assert idx.keys == [normalize(n) for n in names]
    assert [h.position for h in idx.find("BC547B", limit=5)][:2] == [0, 4]
    assert SearchIndex([]).keys == []
    assert SearchIndex([]).find("BC547") == []
