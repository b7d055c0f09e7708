"""The swap log: substitutions made in repairs, their circuit stress, outcome and a re-check.

Bench knowledge feeds the ranking (a substitute that worked before for the same original gets a
bonus, one that failed a penalty), and :func:`audit` re-grades every recorded swap against the
current device data and a policy, so a corrected datasheet value or a stricter policy shows which
past repairs to revisit.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime, timedelta
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from partsdb.derating import Policy
from partsdb.designations import normalize
from partsdb.device import FET_KINDS
from partsdb.errors import InvalidInput, NotFoundError
from partsdb.ranking import LABEL, Candidate, Requirement, SpecError, Stress, assess
from partsdb.ranking.fet_engine import FetRequirement, assess_fet
from partsdb.ranking.model import FET_LABELS
from partsdb.services import catalog
from partsdb.spec_fields import STRESS_FIELDS
from partsdb.storage.models import SwapRow

OUTCOMES = ("worked", "failed")
SET_OUTCOMES = (*OUTCOMES, "unknown")
"""What ``set_outcome`` takes: ``unknown`` clears a recorded outcome (stored as NULL)."""


class SwapError(InvalidInput):
    """A swap-log entry refused; the message names the field and value."""


class SwapNotFound(NotFoundError):
    """No swap with that id."""


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


def list_swaps(session: Session, original: str | None = None, *,
               substitute: str | None = None, job: str | None = None,
               outcome: str | None = None, since: date | None = None,
               until: date | None = None) -> list[SwapView]:
    """Recorded swaps, newest first, filtered by each criterion given: the original and the
    substitute (by designation key), the job reference (exact, ignoring case), the outcome
    (``unknown``: none recorded) and the day recorded (``since`` and ``until`` both included,
    days in UTC as stored)."""
    query = select(SwapRow).order_by(SwapRow.at.desc(), SwapRow.id.desc())
    if original:
        query = query.where(SwapRow.original_key == normalize(original))
    if substitute:
        query = query.where(SwapRow.substitute_key == normalize(substitute))
    if job:
        from sqlalchemy import func

        query = query.where(func.lower(SwapRow.job) == job.strip().lower())
    if outcome is not None:
        if outcome not in SET_OUTCOMES:
            raise SwapError(f"outcome: {outcome!r} is not valid; expected worked, failed or "
                            "unknown")
        query = query.where(SwapRow.outcome.is_(None) if outcome == "unknown"
                            else SwapRow.outcome == outcome)
    if since is not None and until is not None and since > until:
        raise SwapError(f"since: {since.isoformat()} is after until {until.isoformat()}; "
                        "expected since on or before until")
    if since is not None:
        query = query.where(SwapRow.at >= datetime.combine(since, datetime.min.time()))
    if until is not None:
        query = query.where(SwapRow.at < datetime.combine(until + timedelta(days=1),
                                                          datetime.min.time()))
    return [_view(r) for r in session.scalars(query)]


def set_outcome(session: Session, swap_id: int, outcome: str,
                note: str | None = None) -> SwapView:
    """Set how swap ``swap_id`` turned out (worked, failed, or unknown to clear it); ``note``
    replaces the note when given. Raises :class:`SwapNotFound` for an unknown id."""
    from partsdb.limits import check_text

    if outcome not in SET_OUTCOMES:
        raise SwapError(f"outcome: {outcome!r} is not valid; expected worked, failed or unknown")
    row = session.get(SwapRow, swap_id)
    if row is None:
        raise SwapNotFound(f"swap: #{swap_id} is not in the swap log; expected an id from "
                           "'partsdb swaplog list'")
    row.outcome = None if outcome == "unknown" else outcome
    if note is not None:
        row.note = check_text("note", note) if note.strip() else None
    session.flush()
    return _view(row)


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


def _label(parameter: str) -> str:
    """A check's parameter by its engineering label (Vceo, Rds(on)), as every face shows it."""
    return LABEL.get(parameter) or FET_LABELS.get(parameter, (parameter, ""))[0]


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
        if original is not None and original.kind in FET_KINDS:
            cand = assess_fet(device, FetRequirement.from_device(original), swap.stress, pol)
        elif original is None and device.kind in FET_KINDS:
            # a field-effect swap whose original was never stored: checked against itself
            # under the recorded stress (its ratings against what the circuit does)
            cand = assess_fet(device, FetRequirement.from_device(device), swap.stress, pol)
        else:
            requirement = Requirement.from_device(original) if original is not None else \
                Requirement(polarity=device.polarity, kind=device.kind,
                            designation=swap.original, source="given")
            cand = assess(device, requirement, swap.stress, pol)
        # Named by the engineering label (Vceo), as every face shows parameters.
        problems = [f"{_label(c.parameter)}: {c.status} ({c.note})"
                    for c in cand.checks
                    if c.status in ("under-rated",)]
        problems += [f.message for f in cand.flags if f.code == "incompatible"]
        verdict = cand.verdict
        if original is None and not swap.stress.given:
            verdict = "unchecked"
            problems.append(f"{swap.original} is not stored and no stress was recorded: "
                            "nothing to check against")
        items.append(AuditItem(swap, verdict, pol.name, problems, cand))
    return items
