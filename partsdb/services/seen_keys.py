"""The keys an import has met so far, held compactly, for the repeated-designation check.

A streamed import (:func:`partsdb.services.exchange.import_devices`) checks each chunk's
normalised keys against every earlier chunk's without a Python set of a million strings (about
100 MiB with the line numbers): the keys are kept as UTF-8 bytes in sorted numpy arrays (a few
bytes each, 12 MiB or so at a million designations) with the line each was first met on, in
runs merged two at a time as they grow (so a chunk is looked up in a handful of runs, and each
key is re-sorted only a logarithmic number of times). Exact: keys are compared as bytes, never
by a hash.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np


class SeenKeys:
    """Keys met so far and the line each was first met on."""

    def __init__(self) -> None:
        self._runs: list[tuple[np.ndarray, np.ndarray]] = []  # (sorted keys as bytes, lines)

    def __len__(self) -> int:
        return sum(len(keys) for keys, _ in self._runs)

    @property
    def nbytes(self) -> int:
        return sum(keys.nbytes + lines.nbytes for keys, lines in self._runs)

    def repeats(self, keys: Sequence[str], first_line: int) -> dict[int, int]:
        """``{position: line first met}`` for each key of ``keys`` (lines ``first_line``,
        ``first_line + 1``, ...) met before, in an earlier call or earlier in ``keys``; then
        remembers the keys met for the first time. An empty key is never a repeat."""
        n = len(keys)
        encoded = np.array([k.encode("utf-8") for k in keys], dtype=bytes) if n else \
            np.zeros(0, dtype="S1")
        earlier = np.zeros(n, dtype=np.int64)
        for run, lines in self._runs:
            at = np.minimum(np.searchsorted(run, encoded), len(run) - 1)
            hit = run[at] == encoded
            earlier[hit] = lines[at[hit]]
        found: dict[int, int] = {}
        first: dict[str, int] = {}
        for pos, key in enumerate(keys):
            if not key:
                continue
            if earlier[pos]:
                found[pos] = int(earlier[pos])
            elif key in first:
                found[pos] = first[key]
            else:
                first[key] = first_line + pos
        if first:
            new = np.array([k.encode("utf-8") for k in first], dtype=bytes)
            self._add(new, np.fromiter(first.values(), dtype=np.int32, count=len(first)))
        return found

    def _add(self, keys: np.ndarray, lines: np.ndarray) -> None:
        order = np.argsort(keys, kind="stable")
        self._runs.append((keys[order], lines[order]))
        while len(self._runs) > 1 and len(self._runs[-2][0]) <= 2 * len(self._runs[-1][0]):
            (a, la), (b, lb) = self._runs[-2], self._runs[-1]
            merged, lines = np.concatenate([a, b]), np.concatenate([la, lb])
            order = np.argsort(merged, kind="stable")
            self._runs[-2:] = [(merged[order], lines[order])]
