"""The substitution engine: rank the catalog's transistors as substitutes for a requirement.

One job per module, dependencies one way (model <- columns <- checks <- fastpath <- engine;
notes and result beside them): :mod:`.model` (requirement, stress, weights, past swaps),
:mod:`.columns` (the catalog as columns), :mod:`.checks` (checks and scores, the reference
path), :mod:`.fastpath` (the grouped evaluation of large groups), :mod:`.notes` (prose),
:mod:`.result` (checks, flags, problems, candidates) and :mod:`.engine` (:func:`rank`,
:func:`assess`). The rest of the code imports from here.

Score = 100 x sum(w_i s_i) / sum(w_i) over the sub-scores of :mod:`.checks`. Default weights
(override in the config file's ``[weights]`` table, see :mod:`partsdb.services.config`):

    vceo 20, vcbo 5, vebo 3, ic_max 15, ptot 15, tj_max 5, ft 10, hfe 10,
    package 8, pinout 4, material 8, stock 10, history 10
"""

from partsdb.derating import STATUSES, VERDICTS
from partsdb.ranking.columns import CatalogColumns
from partsdb.ranking.engine import assess, history_scores, rank
from partsdb.ranking.model import (
    DEFAULT_WEIGHTS,
    KINDS,
    LABEL,
    MATERIALS,
    PARAMETERS,
    POLARITIES,
    UNIT,
    PastSwaps,
    Requirement,
    SpecError,
    Stress,
    Weights,
    outline_key,
)
from partsdb.ranking.notes import lead_mapping
from partsdb.ranking.result import ORDER_TEXT, Candidate, Check, Flag, Problem, RankResult

__all__ = [
    "DEFAULT_WEIGHTS",
    "KINDS",
    "LABEL",
    "MATERIALS",
    "ORDER_TEXT",
    "PARAMETERS",
    "POLARITIES",
    "STATUSES",
    "UNIT",
    "VERDICTS",
    "Candidate",
    "CatalogColumns",
    "Check",
    "Flag",
    "PastSwaps",
    "Problem",
    "RankResult",
    "Requirement",
    "SpecError",
    "Stress",
    "Weights",
    "assess",
    "history_scores",
    "lead_mapping",
    "outline_key",
    "rank",
]
