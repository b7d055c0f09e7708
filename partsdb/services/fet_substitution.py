"""Substitution glue for field-effect originals: their records, stock and history, ranked by
:func:`partsdb.ranking.fet_engine.rank_fets`.

:func:`partsdb.services.substitution.rank_substitutes` hands a stored MOSFET or JFET original
here; the candidates are read as device records of the original's kind (few in a workshop, so
no column cache), and with ``show_rejected`` the other field-effect kinds too. The stresses of
the other family are refused here for every face (:func:`check_stress_family`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from types import SimpleNamespace
from typing import Any

from sqlalchemy.orm import Session

from partsdb.derating import Policy
from partsdb.device import FET_KINDS, Device
from partsdb.ranking import RankResult, SpecError, Stress, Weights
from partsdb.ranking.fet_engine import DEVICE_KEYS, FetRequirement, rank_fets
from partsdb.spec_fields import STRESS_FIELDS


def is_fet(device: Device | None) -> bool:
    return device is not None and device.kind in FET_KINDS


def check_stress_family(kind: str, stress: Stress, designation: str | None = None) -> None:
    """Refuse a stress given for the other family (``--vce-peak`` for a MOSFET, ``--drive`` for
    a bipolar part): one line naming the option and what it applies to."""
    family = "fet" if kind in FET_KINDS else "bipolar"
    for row in STRESS_FIELDS:
        if row.applies in ("all", family) or getattr(stress, row.name) is None:
            continue
        who = f"{designation} is a {kind}" if designation else f"the spec is a {kind}"
        want = "field-effect" if row.applies == "fet" else "bipolar"
        raise SpecError(f"{row.name}: {row.option} applies to {want} originals only; {who} "
                        f"(expected " + ", ".join(r.option for r in STRESS_FIELDS
                                                  if r.applies in ("all", family)) + ")")


def read_fets(session: Session, kinds: Sequence[str]) -> list[SimpleNamespace]:
    """The stored devices of ``kinds`` as plain records with the fields the FET checks read
    (one raw query: building 40,000 ORM device objects took about 7 s, this read well under
    one; the kinds are checked against the table of FET kinds and written in)."""
    kinds = [k for k in kinds if k in FET_KINDS]
    if not kinds:
        return []
    names = [k for k in DEVICE_KEYS if k != "designation"]
    sql = ("SELECT designation, " + ", ".join(names) + " FROM devices WHERE kind IN ("
           + ", ".join(f"'{k}'" for k in kinds) + ") ORDER BY key")
    cursor = session.connection().connection.cursor()
    try:
        cursor.execute(sql)
        rows = cursor.fetchall()
    finally:
        cursor.close()
    at = names.index("body_diode")
    out = []
    for row in rows:
        values = dict(zip(names, row[1:], strict=True))
        if row[1 + at] is not None:
            values["body_diode"] = bool(row[1 + at])
        out.append(SimpleNamespace(designation=row[0], **values))
    return out


def rank_fet_substitutes(session: Session, original: Device, spec: Mapping[str, Any],
                         stress: Stress, policy: Policy, weights: Weights, *, limit: int,
                         in_stock_only: bool, show_rejected: bool) -> RankResult:
    """Rank the stored FETs as substitutes for the FET ``original`` (its record is the
    requirement; a spec is not taken for field-effect originals)."""
    from partsdb.services import catalog as catalog_service
    from partsdb.services.stock import stock_summary
    from partsdb.services.substitution import swap_history

    given = sorted(k for k, v in spec.items() if v is not None)
    if given:
        raise SpecError(f"{given[0]}: requirement options apply to bipolar originals; "
                        f"{original.designation} is a {original.kind} and its stored record is "
                        "the requirement (give the circuit stress instead: --vds-peak, "
                        "--id-peak, --drive, --power)")
    check_stress_family(original.kind, stress, original.designation)
    requirement = FetRequirement.from_device(original)
    kinds = sorted(FET_KINDS) if show_rejected else [original.kind]
    devices = read_fets(session, kinds)
    summary = stock_summary(session)
    stock = {key: s.quantity for key, s in summary.items()}
    places = {key: list(s.locations) for key, s in summary.items()}
    history = swap_history(session, original.designation)
    return rank_fets(devices, requirement, stress, policy, weights, stock, history=history,
                     locations=places, limit=limit, in_stock_only=in_stock_only,
                     show_rejected=show_rejected,
                     considered=catalog_service.count_devices(session))
