"""Through the service (SQL group and full-catalog reads): a bipolar original is never offered a
FET, and a FET original is refused by the bipolar finder (common practice: a FET does not drop
into a bipolar stage)."""

from __future__ import annotations

import pytest

from partsdb.ranking.model import SpecError
from tests.domain.test_fet_not_offered import BIG_JFET, BIG_MOSFET, BIPOLAR_SUB, ORIGINAL


def test_the_service_never_offers_a_fet(empty_db) -> None:  # type: ignore[no-untyped-def]
    from partsdb.services import catalog, substitution

    with empty_db.session() as session:
        for raw in (ORIGINAL, BIPOLAR_SUB, BIG_MOSFET, BIG_JFET):
            catalog.add_device(session, raw)
    for show_rejected in (False, True):
        result = substitution.rank_substitutes(empty_db, "QX-300", limit=50,
                                               show_rejected=show_rejected)
        offered = {c.designation for c in result.candidates}
        assert "QX-301" in offered and not offered & {"HX-N900", "HX-J900"}
    with pytest.raises(SpecError, match="not a bipolar part"):
        substitution.rank_substitutes(empty_db, "HX-N900")
