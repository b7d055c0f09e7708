"""The swap log: substitutions made in repairs, their circuit stress, outcome and a re-check.

Bench knowledge feeds the ranking (a substitute that worked before for the same original gets a
bonus, one that failed a penalty), and :func:`audit` re-grades every recorded swap against the
current device data and a policy, so a corrected datasheet value or a stricter policy shows which
past repairs to revisit.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from partsdb.derating import Policy
from partsdb.designations import normalize
from partsdb.errors import InvalidInput
from partsdb.ranking import Candidate, Requirement, SpecError, Stress, assess
from partsdb.services import catalog
from partsdb.spec_fields import STRESS_FIELDS
from partsdb.storage.models import SwapRow

OUTCOMES = ("worked", "failed")


class SwapError(InvalidInput):
    """A swap-log entry refused; the message names the field and value."""


@dataclass(frozen=True)
class SwapView:
    id: int
    at: datetime
    original: str
    substitute: str
    job: str
    outcome: str | None
    stress: Stress
    policy: str | None
    note: str | None

    def to_json(self) -> dict[str, Any]:
        return {"id": self.id, "at": self.at.isoformat(timespec="seconds"),
                "original": self.original, "substitute": self.substitute, "job": self.job,
                "outcome": self.outcome, "stress": self.stress.to_json(), "policy": self.policy,
                "note": self.note}


def _view(row: SwapRow) -> SwapView:
    stress = Stress.from_values({f.name: getattr(row, f.name) for f in STRESS_FIELDS})
    return SwapView(row.id, row.at, row.original, row.substitute, row.job, row.outcome, stress,
                    row.policy, row.note)


def add(session: Session, original: str, substitute: str, job: str,
        stress: Stress | None = None, *, policy: str | None = None, outcome: str | None = None,
        note: str | None = None, **stress_values: float | None) -> SwapView:
    """Record a substitution. The substitute must be a stored device (the audit re-checks it);
    the original may be a part that was never stored.

    The circuit stress is given as a :class:`Stress`, or as its values by name
    (``vce_peak=20.0``, the rows of :data:`partsdb.spec_fields.STRESS_FIELDS`).
    """
    if not original or not normalize(original):
        raise SwapError("original: empty; expected the designation of the part replaced")
    if not job or not job.strip():
        raise SwapError("job: empty; expected the job reference (such as J-2611)")
    if outcome is not None and outcome not in OUTCOMES:
        raise SwapError(f"outcome: {outcome!r} is not valid; expected worked or failed")
    if normalize(original) == normalize(substitute):
        raise SwapError(f"substitute: {substitute!r} is the original itself")
    device = catalog.get_device(session, substitute)
    if device is None:
        hint = catalog.did_you_mean(session, substitute)
        raise catalog.NotFound(f"substitute {substitute!r} is not a stored device{hint}; add it "
                               "first so the swap can be re-checked later")
    if stress is not None and stress_values:
        raise SwapError("stress: given twice; give a Stress or its values, not both")
    try:
        if stress is None:
            stress = Stress.from_values(stress_values)
    except SpecError as err:
        raise SwapError(str(err)) from err
    if policy is not None:
        from partsdb.services.config import load_policy

        load_policy(policy)  # refuses an unknown name now rather than at audit time
    stored = catalog.get_device(session, original)
    row = SwapRow(original=stored.designation if stored else original.strip(),
                  original_key=normalize(original), substitute=device.designation,
                  substitute_key=device.key, job=job.strip(), outcome=outcome,
                  **{f.name: getattr(stress, f.name) for f in STRESS_FIELDS},
                  policy=policy, note=note)
    session.add(row)
    session.flush()
    return _view(row)


def list_swaps(session: Session, original: str | None = None) -> list[SwapView]:
    """Recorded swaps, newest first; only those for ``original`` when given."""
    query = select(SwapRow).order_by(SwapRow.at.desc(), SwapRow.id.desc())
    if original:
        query = query.where(SwapRow.original_key == normalize(original))
    return [_view(r) for r in session.scalars(query)]


@dataclass
class AuditItem:
    swap: SwapView
    verdict: str
    """suitable, marginal, under-rated, incompatible, or unchecked (substitute gone)."""
    policy: str
    problems: list[str] = field(default_factory=list)
    candidate: Candidate | None = None

    @property
    def under_rated(self) -> bool:
        return self.verdict in ("under-rated", "incompatible")

    def to_json(self) -> dict[str, Any]:
        return {"swap": self.swap.to_json(), "verdict": self.verdict, "policy": self.policy,
                "problems": list(self.problems),
                "checks": [c.to_json() for c in self.candidate.checks] if self.candidate else []}


def audit(session: Session, policy: Policy | str | None = None) -> list[AuditItem]:
    """Re-check every recorded swap against current device data.

    The policy is ``policy`` when given, else the one recorded with the swap (when still
    defined), else the default. The requirement is the original's stored record (when stored)
    plus the recorded stress; a swap whose original was never stored is checked against its
    stress only.
    """
    from partsdb.services.config import ConfigError, load_policy

    fixed = policy if isinstance(policy, Policy) else (load_policy(policy) if policy else None)
    items: list[AuditItem] = []
    for swap in reversed(list_swaps(session)):
        if fixed is not None:
            pol = fixed
        else:
            try:
                pol = load_policy(swap.policy)
            except ConfigError:
                pol = load_policy(None)
        device = catalog.get_device(session, swap.substitute)
        if device is None:
            items.append(AuditItem(swap, "unchecked", pol.name,
                                   [f"{swap.substitute} is no longer a stored device"]))
            continue
        original = catalog.get_device(session, swap.original)
        if original is not None:
            requirement = Requirement.from_device(original)
        else:
            requirement = Requirement(polarity=device.polarity, kind=device.kind,
                                      designation=swap.original, source="given")
        cand = assess(device, requirement, swap.stress, pol)
        problems = [f"{c.parameter}: {c.status} ({c.note})" for c in cand.checks
                    if c.status in ("under-rated",)]
        problems += [f.message for f in cand.flags if f.code == "incompatible"]
        verdict = cand.verdict
        if original is None and not swap.stress.given:
            verdict = "unchecked"
            problems.append(f"{swap.original} is not stored and no stress was recorded: "
                            "nothing to check against")
        items.append(AuditItem(swap, verdict, pol.name, problems, cand))
    return items
