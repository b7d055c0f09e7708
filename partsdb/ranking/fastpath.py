"""The grouped evaluation: score and verdict of a large group per distinct value tuple.

After a group's first ranking it keeps a table of its distinct value tuples per block of checks
and a code per row (:func:`group_scores`); a ranking then runs the reference checks
(:func:`partsdb.ranking.checks.check_columns`) once per distinct tuple and gathers score and
verdict to the rows, bit for bit what :func:`partsdb.ranking.checks.evaluate` gives row by row
(one test compares both).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np

from partsdb.derating import Policy
from partsdb.ranking.checks import (
    Column,
    Evaluation,
    check_columns,
    confidence_verdict,
    evaluate,
    extras,
    most_unknown,
    unknown_part,
    verdict_part,
)
from partsdb.ranking.columns import CatalogColumns
from partsdb.ranking.model import Requirement, Stress, Weights

# The large-group path. A group's rows repeat few distinct values per check (ratings are
# rounded, outlines and lead orders few): 105,000 rows of the bench catalog hold about 2,100
# distinct (Vceo, Vcbo, Ic max) triples and 1,700 thermal tuples. Each check is computed once
# per distinct tuple and gathered to the rows by a code cached with the group, so a ranking
# costs a handful of gathers over the group instead of a hundred array operations.
_BLOCKS: tuple[tuple[tuple[str, ...], tuple[str, ...]], ...] = (
    (("vceo", "vcbo", "vebo", "ic_max"), ("vceo", "vcbo", "vebo", "ic_max")),
    (("ptot", "tj_max", "tj_effective", "case_rated", "case_free_air", "case_sink"),
     ("ptot", "tj_max")),
    (("ft",), ("ft",)),
    (("hfe_min", "hfe_max", "hfe_ic"), ("hfe",)),
    (("package",), ("package",)),
    (("pinout",), ("pinout",)),
    (("material",), ("material",)),
)
"""(fields a block's checks read, the checks): the first block's checks lead PARAMETERS, so
their partial sum is taken per distinct tuple in the same order as :func:`evaluate`."""

KERNEL_MIN_ROWS = 4096
"""Groups smaller than this are evaluated directly (a distinct-value table would not pay)."""
KERNEL_AFTER_USES = 1
"""A group is evaluated directly this many times before its tables are built: building them
costs several rankings' worth, and a one-off ranking (one CLI call) never reuses them."""


@dataclass
class _Block:
    codes: np.ndarray
    """Distinct-tuple index of every row of the group."""
    table: CatalogColumns
    """One row per distinct tuple (the block's fields are exact; other fields are any row's)."""


def _factorize_fields(cat: CatalogColumns, fields_: Sequence[str]) -> _Block:
    """Distinct tuples of ``fields_`` over the rows: a code per row and one row per tuple."""
    joint: np.ndarray | None = None
    for name in fields_:
        values = np.asarray(getattr(cat, name))
        if values.dtype.kind in "iub":
            # Small codes (outline, lead order, material, case flag): offset, no sort needed.
            inverse = values.astype(np.int64) - int(values.min(initial=0))
            size = int(inverse.max(initial=0)) + 1
        else:
            # return_index makes numpy sort stably, which is the faster sort on these columns.
            uniq, first, inverse = np.unique(values, return_index=True, return_inverse=True)
            if len(fields_) == 1:
                return _Block(inverse.astype(np.intp).reshape(-1), cat.take(first))
            size = len(uniq)  # NaNs fold into one value
        joint = inverse.astype(np.int64) if joint is None else joint * size + inverse
    assert joint is not None
    _, first, codes = np.unique(joint, return_index=True, return_inverse=True)
    return _Block(codes.astype(np.intp).reshape(-1), cat.take(first))


_VERDICT_JOINT_FROM = 3
"""Blocks from this index on (the gain window and the three fits) share one verdict code:
their distinct combinations are few (hundreds in a group of 100,000 rows)."""


@dataclass
class _Joint:
    codes: np.ndarray
    """Combination index of every row of the group."""
    parts: list[np.ndarray]
    """Per combination, its code in each of the joined blocks."""
    order: np.ndarray
    """The group's positions by combination (ascending within each): the rows of
    combination c are ``order[start[c]:start[c + 1]]``."""
    start: np.ndarray


def _group_blocks(cat: CatalogColumns) -> tuple[list[_Block], _Joint]:
    hit = cat._memo.get("blocks")
    if hit is None:
        blocks = [_factorize_fields(cat, f) for f, _ in _BLOCKS]
        joint = np.zeros(cat.size, dtype=np.int64)
        for block in blocks[_VERDICT_JOINT_FROM:]:
            joint = joint * block.table.size + block.codes
        _, first, codes = np.unique(joint, return_index=True, return_inverse=True)
        codes = codes.astype(np.intp).reshape(-1)
        start = np.zeros(first.shape[0] + 1, np.intp)
        np.cumsum(np.bincount(codes, minlength=first.shape[0]), out=start[1:])
        hit = (blocks, _Joint(codes, [b.codes[first] for b in blocks[_VERDICT_JOINT_FROM:]],
                              np.argsort(codes, kind="stable"), start))
        cat._memo["blocks"] = hit
    return hit


@dataclass
class Scores:
    """Score and verdict of every row of a group, and how to detail some of them."""

    score: np.ndarray
    verdict: np.ndarray
    detail: Callable[[np.ndarray], Evaluation]
    """The full evaluation of the given positions (equal to :func:`evaluate` on them)."""
    positions: np.ndarray | None = None
    """The group positions that ``score`` and ``verdict`` cover, ascending (None: every row);
    rows left out cannot be among the best ``limit`` (see :func:`group_scores`)."""


_FAST: Literal["clip"] = "clip"
"""Gather mode: every code is in range by construction, and numpy's bounds-checking default
("raise") makes each gather over the group about 1.6 times slower."""


def _gather(col: Column, at: np.ndarray) -> Column:
    """The column's values at ``at`` (a scalar need stays a scalar)."""
    return Column(col.need[at] if isinstance(col.need, np.ndarray) else col.need,
                  col.offered[at], col.status[at], col.sub[at],
                  None if col.ratio is None else col.ratio[at], col.basis,
                  None if col.extra is None else col.extra[at])


def _split_columns(cat: CatalogColumns, b: int, block: _Block, req: Requirement,
                   stress: Stress, policy: Policy, names: Sequence[str]) -> dict[str, Column]:
    """The single-field checks ``names`` over a block's table, each computed once per distinct
    value of its own field and gathered to the table's tuples (the same values, element by
    element): a triple table repeats each rating many times."""
    splits = cat._memo.get(("splits", b))
    if splits is None:
        # Depends on the rows only, so it is kept with the group like the blocks.
        splits = {name: _factorize_fields(block.table, (name,)) for name in names}
        cat._memo[("splits", b)] = splits
    cols: dict[str, Column] = {}
    for name in names:
        part = splits[name]
        col = check_columns(part.table, req, stress, policy, (name,))[0][name]
        at = part.codes
        cols[name] = _gather(col, at)
    return cols


def group_scores(cat: CatalogColumns, rows: np.ndarray, req: Requirement, stress: Stress,
                  policy: Policy, weights: Weights, stock_qty: np.ndarray | None,
                  history_score: np.ndarray | None, limit: int | None = None,
                  keep: np.ndarray | None = None, exclude: int | None = None) -> Scores:
    """Score and verdict of the rows of ``cat``, equal bit for bit to :func:`evaluate`'s.

    The same check functions run on each block's distinct tuples; the weighted sum is then
    gathered and added up in the order of PARAMETERS, exactly as :func:`evaluate` adds it.

    With ``limit`` (and the rows that may be returned: ``keep``, not ``exclude``), only the rows
    that can be among the best ``limit`` are scored: the verdict class orders first, so when
    the better classes hold ``limit`` returnable rows or more, no row of a worse class can be
    returned, and its score is not computed (:attr:`Scores.positions`).
    """
    n = rows.shape[0]

    def direct(top: np.ndarray) -> Evaluation:
        return evaluate(cat.take(top), rows[top], req, stress, policy, weights, stock_qty,
                         history_score)

    uses = cat._memo.get("uses", 0)
    if n < KERNEL_MIN_ROWS or ("blocks" not in cat._memo and uses < KERNEL_AFTER_USES):
        cat._memo["uses"] = uses + 1
        ev = evaluate(cat, rows, req, stress, policy, weights, stock_qty, history_score)
        return Scores(ev.score, ev.verdict, direct)
    w = weights.as_dict()
    blocks, joint = _group_blocks(cat)
    joint_v = np.zeros(len(joint.parts[0]), np.int8)
    joint_u = np.zeros(len(joint.parts[0]), np.int8)
    part_us: list[np.ndarray] = []
    applicable = 0
    computed: list[tuple[_Block, dict[str, Column], np.ndarray | None, np.ndarray | None]] = []
    part_vs: list[np.ndarray] = []
    for b, ((fields_, names), block) in enumerate(zip(_BLOCKS, blocks, strict=True)):
        if len(names) > 1 and fields_ == names:
            # Checks that each read only their own field (the rating triple).
            cols, allowed, tj_est = _split_columns(cat, b, block, req, stress, policy, names), \
                None, None
        else:
            cols, allowed, tj_est = check_columns(block.table, req, stress, policy, names)
        computed.append((block, cols, allowed, tj_est))
        part_v = verdict_part(cols, block.table.size)
        part_u, block_applicable = unknown_part(cols, block.table.size)
        applicable += block_applicable
        if b >= _VERDICT_JOINT_FROM:
            np.maximum(joint_v, part_v[joint.parts[b - _VERDICT_JOINT_FROM]], out=joint_v)
            joint_u += part_u[joint.parts[b - _VERDICT_JOINT_FROM]]
        else:
            part_vs.append(part_v)
            part_us.append(part_u)
    # Confidence: more unknown checks than the policy allows keeps a row from suitable; the
    # counts are summed over the blocks (the verdict codes are a maximum).
    most = most_unknown(applicable, policy)

    def unknown_at(at: np.ndarray) -> np.ndarray:
        out = joint_u.take(joint.codes.take(at))
        for block, part_u in zip(blocks, part_us, strict=False):
            out += part_u.take(block.codes.take(at))
        return out

    def verdict_at(at: np.ndarray) -> np.ndarray:
        out = joint_v.take(joint.codes.take(at))
        for block, part_v in zip(blocks, part_vs, strict=False):
            np.maximum(out, part_v.take(block.codes.take(at)), out=out)
        return confidence_verdict(out, unknown_at(at), most)

    def returnable(within: np.ndarray, worst: int, exclude_verdict: int) -> int:
        count = within.shape[0] if keep is None else int(np.count_nonzero(keep[within]))
        if exclude is not None and exclude_verdict <= worst and (keep is None or keep[exclude]):
            count -= 1
        return count

    positions: np.ndarray | None = None
    verdict: np.ndarray | None = None
    scored_verdict: np.ndarray | None = None
    if limit is not None:
        # The best verdict classes holding ``limit`` returnable rows are all that can be
        # returned (verdict codes are 0 to 3; a worse class sorts after every better row).
        # The suitable rows first, found through the joint checks (few rows pass them all)
        # before the ratings are read: the whole verdict is then seldom needed.
        ex_v = -1 if exclude is None else int(verdict_at(np.array([exclude]))[0])
        # The rows of the combinations that pass, read off the group's rows by combination
        # (no pass over the whole group), then the other blocks on those rows only.
        ok = np.flatnonzero(joint_v == 0)
        lo, count = joint.start[ok], joint.start[ok + 1] - joint.start[ok]
        n_within = int(count.sum())
        ends = np.cumsum(count)
        within = joint.order.take(np.repeat(lo - (ends - count), count) + np.arange(n_within))
        for block, part_v in zip(blocks, part_vs, strict=False):
            within = within[part_v.take(block.codes.take(within)) == 0]
        within = within[unknown_at(within) <= most]
        within.sort(kind="stable")  # ascending runs, one per combination: merged, not sorted
        if returnable(within, 0, ex_v) >= limit:
            positions = within
            scored_verdict = np.zeros(within.shape[0], np.int8)
    if positions is None:
        verdict = np.empty(n, np.int8)
        vbuffer = np.empty(n, np.int8)
        for block, part_v in zip(blocks, part_vs, strict=False):
            np.take(part_v, block.codes, out=vbuffer, mode=_FAST)
            if block is blocks[0]:
                verdict[:] = vbuffer
            else:
                np.maximum(verdict, vbuffer, out=verdict)
        np.take(joint_v, joint.codes, out=vbuffer, mode=_FAST)
        np.maximum(verdict, vbuffer, out=verdict)
        unknown = np.take(joint_u, joint.codes, mode=_FAST)
        for block, part_u in zip(blocks, part_us, strict=False):
            np.take(part_u, block.codes, out=vbuffer, mode=_FAST)
            unknown += vbuffer
        confidence_verdict(verdict, unknown, most)
        if limit is not None:
            within = np.flatnonzero(verdict <= 1)
            if returnable(within, 1, ex_v) >= limit:
                positions = within
        scored_verdict = verdict if positions is None else verdict.take(positions)
    assert scored_verdict is not None
    m = n if positions is None else positions.shape[0]

    def codes_of(block: _Block) -> np.ndarray:
        return block.codes if positions is None else block.codes.take(positions)

    total = np.empty(m)
    buffer = np.empty(m)
    for b, ((_, names), (block, cols, _a, _t)) in enumerate(zip(_BLOCKS, computed, strict=True)):
        if b == 0:
            # The leading checks: their running sum from zero, per distinct tuple.
            lead = np.zeros(block.table.size)
            for name in names:
                if w[name]:
                    lead += w[name] * cols[name].sub
            np.take(lead, codes_of(block), out=total, mode=_FAST)
            continue
        if not any(w[name] for name in names):
            continue
        codes = codes_of(block)
        for name in names:
            if w[name]:
                np.take(w[name] * cols[name].sub, codes, out=buffer, mode=_FAST)
                total += buffer
    scored_rows = rows if positions is None else rows.take(positions)
    in_stock = np.zeros(m, bool) if stock_qty is None else \
        stock_qty.take(scored_rows, mode=_FAST) > 0
    if history_score is None:
        # stock is 0 or 1 and history 0.5 here: the two possible sums, taken as extras does.
        pair = extras(weights, np.array([0.0, 1.0]), np.full(2, 0.5))
        total += np.where(in_stock, pair[1], pair[0])
    else:
        total += extras(weights, in_stock.astype(float), history_score.take(scored_rows))
    total *= 100.0
    total /= weights.total()
    score = total

    def gathered(top: np.ndarray) -> Evaluation:
        # The rows returned, gathered from the distinct-tuple checks already computed.
        cols: dict[str, Column] = {}
        allowed: np.ndarray | None = None
        tj_est: np.ndarray | None = None
        for block, bcols, b_allowed, b_tj in computed:
            at = block.codes[top]
            for name, col in bcols.items():
                cols[name] = _gather(col, at)
            if b_allowed is not None:
                allowed = b_allowed[at]
                tj_est = None if b_tj is None else b_tj[at]
        assert allowed is not None
        grows = rows[top]
        k = grows.shape[0]
        sub = top if positions is None else np.searchsorted(positions, top)
        return Evaluation(grows, cols, stock_qty[grows] if stock_qty is not None
                           else np.zeros(k, int),
                           np.full(k, 0.5) if history_score is None else history_score[grows],
                           score[sub], scored_verdict[sub], allowed, tj_est)

    return Scores(score, scored_verdict, gathered, positions)

