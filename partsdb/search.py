"""Fuzzy find over designations: the sloppy spellings people type at the bench.

A :class:`SearchIndex` is built once from the catalog's designations (and optionally notes):
normalised keys, a sorted key array for prefix look-ups, a dict for exact look-ups, and lower-cased
notes. ``find`` then answers one query without a Python loop over the rows: exact and prefix hits
come from binary searches in the sorted keys, close spellings from rapidfuzz on the keys that
:class:`partsdb.findindex.CloseIndex` cannot rule out (the same result as scoring every key,
which ``find(..., exhaustive=True)`` does), words in notes from numpy's vectorised substring
search.

Ranking, strongest first (the score bands keep the order when hits are merged):
  exact normalised match 100; prefix 91-99; a body marking without "2S" matched to the
  registered JIS name 86-90; an explicit spelling slip (letter O for zero, a gain-group letter
  too many, two characters swapped) 87-88; other close spellings <= 85; words found in the
  notes <= 70.
Close spellings use the optimal-string-alignment distance (Levenshtein plus adjacent
transposition, each edit costing 1), normalised by the longer string. ``fuzz.WRatio`` is not
used: it scores very short strings too high (RECIPES.md).
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np

from partsdb.designations import JIS_MARKING_LETTERS, normalize
from partsdb.findindex import CloseIndex, scan_close

EXACT = 100
PREFIX_BEST, PREFIX_FLOOR = 99, 91
JIS_EXACT = 90
JIS_PREFIX_BEST, JIS_PREFIX_FLOOR = 89, 86
SLIP_O_OR_GAIN = 88
SLIP_TRANSPOSED = 87
FUZZY_CAP = 85
FUZZY_CUTOFF = 0.5
"""Close spellings below this normalised similarity are not shown."""
NOTES_BEST = 70
NOTES_MAX_WORDS = 4
NOTES_MIN_WORD = 3

_GAIN_TAIL = re.compile(r"^(.*\d)([ABC])$")
_O_NEAR_DIGIT = re.compile(r"(?<=\d)O|O(?=\d)")
_WORDS = re.compile(r"[0-9a-z]+")
_JIS_LETTERS = "".join(sorted(JIS_MARKING_LETTERS))
_JIS_MARKING = re.compile(rf"^[{_JIS_LETTERS}]\d")
_JIS_FULL = re.compile(rf"^2S[{_JIS_LETTERS}]\d")


@dataclass(frozen=True)
class Hit:
    """One search result."""

    position: int
    """Index into the designations the index was built from."""
    designation: str
    score: int
    """0-100; bands as in the module docstring."""
    reason: str
    """Why it matched, in words ("exact", "prefix", "without 2S: read as 2SC1815", ...)."""

    def to_json(self) -> dict[str, Any]:
        return asdict(self)


def describe_slip(query: str, key: str) -> str:
    """Name the spelling slip between two normalised strings ("close spelling" if none fits)."""
    if _O_NEAR_DIGIT.sub("0", query) == key or _leading_zero_as_o(query) == key:
        return "letter O for zero"
    if len(query) == len(key):
        diff = [i for i, (a, b) in enumerate(zip(query, key, strict=True)) if a != b]
        if len(diff) == 2 and diff[1] == diff[0] + 1 \
                and query[diff[0]] == key[diff[1]] and query[diff[1]] == key[diff[0]]:
            return "transposed characters"
        if len(diff) == 1:
            i = diff[0]
            if query[i].isdigit() and key[i].isdigit():
                return "one wrong digit"
            if _GAIN_TAIL.match(query) and _GAIN_TAIL.match(key) and i == len(key) - 1:
                return "different gain group"
            return "one wrong character"
    if (g := _GAIN_TAIL.match(query)) and g.group(1) == key:
        return f"without the gain-group letter {g.group(2)}"
    if len(key) == len(query) + 1 and any(key[:i] + key[i + 1:] == query
                                          for i in range(len(key))):
        return "one character missing"
    if len(query) == len(key) + 1 and any(query[:i] + query[i + 1:] == key
                                          for i in range(len(query))):
        return "one character extra"
    return "close spelling"


def _leading_zero_as_o(query: str) -> str:
    # "0C71" typed for the older European "OC71": a zero before letters at the start.
    if len(query) > 1 and query[0] == "0" and query[1].isalpha():
        return "O" + query[1:]
    return query


class SearchIndex:
    """Designations (and notes) prepared once for many fast ``find`` calls."""

    def __init__(self, designations: Sequence[str],
                 notes: Sequence[str | None] | None = None) -> None:
        self._designations: list[str] = list(designations)
        n = len(self._designations)
        self._keys: list[str] = [normalize(d) for d in self._designations]
        self._lengths = np.fromiter(map(len, self._keys), dtype=np.int32, count=n)
        self._max_len = int(self._lengths.max()) if n else 0
        keys_array = np.array(self._keys, dtype=f"<U{max(self._max_len, 1)}")
        self._order = np.argsort(keys_array, kind="stable")
        self._sorted = keys_array[self._order]
        del keys_array
        self._close_index = CloseIndex(self._keys)
        self._note_rows = np.zeros(0, dtype=np.int64)
        self._note_text: np.ndarray | None = None
        self._note_blob = ""
        if notes is not None:
            if len(notes) != n:
                raise ValueError(f"notes: {len(notes)} given for {n} designations; expected one "
                                 "(or None) per designation")
            rows = [i for i, text in enumerate(notes) if text and text.strip()]
            lowered = [str(notes[i]).lower() for i in rows]
            self._note_rows = np.array(rows, dtype=np.int64)
            if lowered:
                self._note_text = np.array(lowered)
                self._note_blob = "\n".join(lowered)

    def __len__(self) -> int:
        return len(self._designations)

    @property
    def keys(self) -> list[str]:
        """The normalised keys, in input order."""
        return self._keys

    # ------------------------------------------------------------------ passes

    def _exact(self, key: str) -> np.ndarray:
        """Positions of the keys equal to ``key``, in input order."""
        if not key or len(key) > self._max_len:
            return self._order[:0]
        lo = int(np.searchsorted(self._sorted, key, side="left"))
        hi = int(np.searchsorted(self._sorted, key, side="right"))
        return self._order[lo:hi]  # a stable sort keeps equal keys in input order

    def _prefixed(self, q: str, limit: int) -> list[tuple[int, int]]:
        """Up to ``limit`` (position, extra length) of keys that start with ``q`` (not equal)."""
        if not q or len(q) >= self._max_len:
            return []  # no key can be longer than q; also keeps q within the array's width
        lo = int(np.searchsorted(self._sorted, q, side="right"))  # skips keys equal to q
        hi = int(np.searchsorted(self._sorted, q + "\U0010ffff", side="left"))
        if hi <= lo:
            return []
        positions = self._order[lo:hi]
        lengths = self._lengths[positions]
        if hi - lo > limit:
            pick = np.argpartition(lengths, limit - 1)[:limit]
            positions, lengths = positions[pick], lengths[pick]
        return [(int(p), int(n) - len(q)) for p, n in zip(positions, lengths, strict=True)]

    def _close(self, q: str, limit: int, exhaustive: bool) -> list[tuple[int, float]]:
        """Up to a few times ``limit`` (position, similarity 0-1) of close spellings: the best
        by similarity, then position."""
        k = max(4 * limit, 40)
        if exhaustive:
            return scan_close(q, self._keys, k, FUZZY_CUTOFF)
        return self._close_index.close(q, k, FUZZY_CUTOFF)

    def _in_notes(self, query: str, limit: int) -> list[tuple[int, float]]:
        """(position, fraction of query words found) for notes holding any query word."""
        if self._note_text is None:
            return []
        words = list(dict.fromkeys(w for w in _WORDS.findall(query.lower())
                                   if len(w) >= NOTES_MIN_WORD))[:NOTES_MAX_WORDS]
        if not words:
            return []
        counts = np.zeros(len(self._note_rows), dtype=np.int16)
        for word in words:
            if word in self._note_blob:  # one C scan; skips the array pass for absent words
                counts += np.char.find(self._note_text, word) >= 0
        found = np.flatnonzero(counts)
        if found.size > limit:
            found = found[np.argpartition(-counts[found], limit - 1)[:limit]]
        return [(int(self._note_rows[i]), counts[i] / len(words)) for i in found]

    # ------------------------------------------------------------------ find

    def find(self, query: str, limit: int = 10, *, exhaustive: bool = False) -> list[Hit]:
        """The best ``limit`` hits for ``query``, strongest first (see the module docstring).

        ``exhaustive`` scores every key for close spellings instead of the keys the index
        cannot rule out: the same hits, slower; the reference the bench compares with.
        """
        if limit < 1:
            raise ValueError(f"limit: {limit!r} is not valid; expected 1 or more")
        q = normalize(query)
        best: dict[int, tuple[int, str]] = {}

        def offer(position: int, score: int, reason: str) -> None:
            if position not in best or best[position][0] < score:
                best[position] = (score, reason)

        def offer_key(key: str, score: int, reason: str) -> None:
            for position in self._exact(key).tolist():
                offer(position, score, reason)

        if q:
            offer_key(q, EXACT, "exact")
            for position, extra in self._prefixed(q, limit):
                tail = self._keys[position][len(q):]
                gain = extra == 1 and tail in "ABC" and q[-1].isdigit()
                offer(position, max(PREFIX_FLOOR, PREFIX_BEST - extra),
                      f"prefix (gain group {tail})" if gain else "prefix")
            self._jis(q, limit, offer, offer_key)
            self._slips(q, offer_key)
            for position, sim in self._close(q, limit, exhaustive):
                if position not in best:
                    offer(position, min(FUZZY_CAP, round(100 * sim)),
                          describe_slip(q, self._keys[position]))
        for position, fraction in self._in_notes(query, limit):
            offer(position, max(1, round(NOTES_BEST * fraction)), "in notes")
        ranked = sorted(best.items(), key=lambda item: (-item[1][0], len(self._keys[item[0]]),
                                                        self._keys[item[0]], item[0]))
        return [Hit(p, self._designations[p], score, reason)
                for p, (score, reason) in ranked[:limit]]

    def _jis(self, q: str, limit: int, offer: Any, offer_key: Any) -> None:
        # JIS C 7012 body markings usually omit "2S": "C1815" is "2SC1815" (an inference).
        if _JIS_MARKING.match(q):
            full = "2S" + q
            offer_key(full, JIS_EXACT, f"without 2S: read as {full}")
            for position, extra in self._prefixed(full, limit):
                offer(position, max(JIS_PREFIX_FLOOR, JIS_PREFIX_BEST - extra),
                      f"without 2S: read as {full}, prefix")
        elif _JIS_FULL.match(q):
            offer_key(q[2:], JIS_EXACT, f"marking without 2S of {q}")

    def _slips(self, q: str, offer_key: Any) -> None:
        # Explicit look-ups for the common slips, so they rank on any catalog size.
        for variant in {_O_NEAR_DIGIT.sub("0", q), _leading_zero_as_o(q)} - {q}:
            offer_key(variant, SLIP_O_OR_GAIN, "letter O for zero")
        if g := _GAIN_TAIL.match(q):
            offer_key(g.group(1), SLIP_O_OR_GAIN, f"without the gain-group letter {g.group(2)}")
        for i in range(len(q) - 1):
            if q[i] != q[i + 1]:
                offer_key(q[:i] + q[i + 1] + q[i] + q[i + 2:], SLIP_TRANSPOSED,
                          "transposed characters")
