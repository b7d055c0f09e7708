"""Close spellings without scoring every key: length buckets and character signatures first.

:func:`scan_close` is the definition: score every key against the query with the
optimal-string-alignment similarity (rapidfuzz ``OSA.normalized_similarity``, 1 - distance /
longer length), keep those at or above the cutoff, and return the best ``k`` ordered by
similarity, then position (so ties are decided the same way every time).
:class:`CloseIndex` returns exactly the same list while scoring only the keys that could
still enter it.

Why a key can be skipped (a lower bound on its OSA distance to the query, from two cheap
facts; the tests check them by hand):

* Length: each edit changes the length by at most one, so distance >= |len(q) - len(key)|.
* Characters: a key's signature holds, per character, a bit for "occurs at least once" and a
  bit for "occurs at least twice". Inserting or deleting a character changes one count by one
  (at most one bit flips), substituting changes two counts (at most two bits), and swapping
  two neighbours changes none. So if the signatures of query and key differ in ``h`` bits,
  distance >= ceil(h / 2).

Characters share the 64 bit positions of a signature (digits and letters have their own; any
other character shares one with others): sharing can only hide a difference, so the bound
stays a lower bound.

The keys are kept in buckets of equal length. A query skips every length whose length bound
is already below the cutoff, computes the signature bound of the other keys with one XOR and
bit count per key (numpy, no Python loop over keys), and scores groups of keys in order of
falling bound until the next bound is below the k-th similarity found. The result is exact,
not approximate; only the amount of work depends on the catalog.
"""

from __future__ import annotations

import heapq
import operator
from collections.abc import Sequence

import numpy as np
from rapidfuzz import process
from rapidfuzz.distance import OSA

FLIPS_PER_EDIT = 2
"""Signature bits one OSA edit can flip (see the module docstring)."""
SCAN_SHARE = 4
"""Past 1/SCAN_SHARE of the keys scored, :func:`scan_close` finishes the query in one pass."""
_BUILD_ROWS = 65_536
_TIE_SLACK = 1e-6
"""Bounds are compared with this slack so that a float rounding never skips a tie."""


def _slot_table() -> np.ndarray:
    slots = np.full(128, 63, dtype=np.uint64)  # any other character: the shared last slot
    for i, ch in enumerate("0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ"):
        slots[ord(ch)] = i
    for code in range(128):
        if slots[code] == 63 and chr(code).isprintable():
            slots[code] = 36 + code % 27  # lower case and signs share slots 36-62
    return slots


_SLOTS = _slot_table()


def scan_close(query: str, keys: Sequence[str], k: int,
               cutoff: float) -> list[tuple[int, float]]:
    """The reference: every key scored; the best ``k`` (position, similarity) >= ``cutoff``."""
    if not keys or k < 1:
        return []
    sims = process.cdist([query], keys, scorer=OSA.normalized_similarity, dtype=np.float32)[0]
    pick = np.flatnonzero(sims >= cutoff)
    return _best(pick, sims[pick], k)


def _best(positions: np.ndarray, sims: np.ndarray, k: int) -> list[tuple[int, float]]:
    """The ``k`` best by similarity (higher first), then position (lower first)."""
    if positions.shape[0] > k:
        # Only the k-th similarity's ties need the position order: cut by similarity first.
        kth = np.partition(-sims, k - 1)[k - 1]
        keep = -sims <= kth
        positions, sims = positions[keep], sims[keep]
    order = np.lexsort((positions, -sims))[:k]
    return [(int(positions[i]), float(sims[i])) for i in order]


def signatures(chars: np.ndarray, lengths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Signatures (once, twice: uint64 each) of keys given as code points, shape (rows, L)."""
    rows, width = chars.shape
    slot = np.where(chars < 128, _SLOTS[np.minimum(chars, 127)], np.uint64(63))
    slot[np.arange(width)[None, :] >= lengths[:, None]] = 64  # past the end: no bit
    slot.sort(axis=1)
    ones = np.left_shift(np.uint64(1), np.minimum(slot, 63)) * (slot < 64)
    once = np.bitwise_or.reduce(ones, axis=1) if width else np.zeros(rows, np.uint64)
    again = np.zeros(rows, dtype=np.uint64)
    if width > 1:
        repeated = (slot[:, 1:] == slot[:, :-1]) & (slot[:, 1:] < 64)
        again = np.bitwise_or.reduce(ones[:, 1:] * repeated, axis=1)
    return once, again


def _signature_of(text: str) -> tuple[np.uint64, np.uint64]:
    chars = np.array([text], dtype=f"<U{max(len(text), 1)}").view(np.uint32).reshape(1, -1)
    once, again = signatures(chars, np.array([len(text)]))
    return once[0], again[0]


class CloseIndex:
    """Keys bucketed by length with their character signatures (see the module docstring).

    Memory per key: 16 bytes of signature, 2 of length, 4 in the length order; the key strings
    themselves belong to the caller.
    """

    def __init__(self, keys: Sequence[str]) -> None:
        self._keys = keys
        n = len(keys)
        lengths = np.fromiter(map(len, keys), dtype=np.int32, count=n)
        once = np.zeros(n, dtype=np.uint64)
        again = np.zeros(n, dtype=np.uint64)
        for start in range(0, n, _BUILD_ROWS):
            block = keys[start:start + _BUILD_ROWS]
            width = max(int(lengths[start:start + len(block)].max()), 1)
            chars = np.array(block, dtype=f"<U{width}").view(np.uint32).reshape(len(block), width)
            part = slice(start, start + len(block))
            once[part], again[part] = signatures(chars, lengths[part])
        order = np.argsort(lengths, kind="stable")
        # Everything in length order, so a bucket is one contiguous slice.
        self._order = order.astype(np.int32)
        self._once, self._again = once[order], again[order]
        self._values, starts = np.unique(lengths[order], return_index=True)
        self._starts = np.append(starts, n)

    def __len__(self) -> int:
        return len(self._keys)

    @property
    def nbytes(self) -> int:
        """Bytes held by the arrays (the keys themselves belong to the caller)."""
        return sum(a.nbytes for a in (self._order, self._once, self._again, self._starts))

    def _bucket_groups(self, i: int, query: str, signature: tuple[np.uint64, np.uint64],
                       floor: float) -> list[tuple[float, np.ndarray]]:
        """(similarity bound, positions) of the keys of length bucket ``i`` that can reach
        ``floor``, one group per bound."""
        length, lq = int(self._values[i]), len(query)
        longer = max(length, lq, 1)
        lo, hi = int(self._starts[i]), int(self._starts[i + 1])
        flips = np.bitwise_count(self._once[lo:hi] ^ signature[0])
        flips += np.bitwise_count(self._again[lo:hi] ^ signature[1])
        low = np.maximum((flips + (FLIPS_PER_EDIT - 1)) // FLIPS_PER_EDIT, abs(length - lq))
        reach = int((1.0 - floor + _TIE_SLACK) * longer)  # the most edits that reach floor
        inside = np.flatnonzero(low <= reach)
        if inside.size == 0:
            return []
        edits = low[inside]
        order = np.argsort(edits, kind="stable")
        inside, edits = inside[order], edits[order]
        cuts = np.flatnonzero(np.diff(edits)) + 1
        return [(1.0 - int(d) / longer, self._order[lo + part])
                for d, part in zip(edits[np.r_[0, cuts]], np.split(inside, cuts), strict=True)]

    def close(self, query: str, k: int, cutoff: float) -> list[tuple[int, float]]:
        """Exactly :func:`scan_close` ``(query, keys, k, cutoff)``, scoring fewer keys."""
        if not self._keys or k < 1:
            return []
        lq = len(query)
        signature = _signature_of(query)
        # Buckets in order of their length bound; a bucket's signatures are read only when
        # that bound can still reach the list.
        buckets = sorted(((1.0 - abs(int(v) - lq) / max(int(v), lq, 1), i)
                          for i, v in enumerate(self._values)), reverse=True)
        pending: list[tuple[float, int, np.ndarray]] = []  # a heap of (-bound, seq, positions)
        found_pos: list[np.ndarray] = []
        found_sim: list[np.ndarray] = []
        held = scored = seq = 0
        floor = cutoff  # the similarity a key must reach to enter the list
        next_bucket = 0
        while True:
            bucket_bound = buckets[next_bucket][0] if next_bucket < len(buckets) else -1.0
            group_bound = -pending[0][0] if pending else -1.0
            if max(bucket_bound, group_bound) < floor - _TIE_SLACK:
                break
            if bucket_bound >= group_bound:
                for bound, part in self._bucket_groups(buckets[next_bucket][1], query,
                                                       signature, floor):
                    heapq.heappush(pending, (-bound, seq, part))
                    seq += 1
                next_bucket += 1
                continue
            _, _, positions = heapq.heappop(pending)
            scored += positions.size
            if scored > len(self._keys) // SCAN_SHARE:
                # Nothing close prunes the rest (a query like no key): one pass is cheaper.
                return scan_close(query, self._keys, k, cutoff)
            picked = operator.itemgetter(*positions.tolist())(self._keys)
            sims = process.cdist([query], [picked] if positions.size == 1 else picked,
                                 scorer=OSA.normalized_similarity, dtype=np.float32)[0]
            keep = sims >= cutoff
            if not keep.any():
                continue
            found_pos.append(positions[keep].astype(np.int64))
            found_sim.append(sims[keep])
            held += int(keep.sum())
            if held >= k:
                best = _best(np.concatenate(found_pos), np.concatenate(found_sim), k)
                found_pos = [np.array([p for p, _ in best], dtype=np.int64)]
                found_sim = [np.array([s for _, s in best], dtype=np.float32)]
                held = k
                floor = max(cutoff, best[-1][1])
        if not found_pos:
            return []
        return _best(np.concatenate(found_pos), np.concatenate(found_sim), k)
