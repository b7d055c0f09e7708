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


def test_the_reorder_list_keeps_an_obsolete_fet_without_a_suggestion(empty_db) -> None:  # type: ignore[no-untyped-def]
    """An obsolete FET at its low-stock count is listed to buy (2 x 3 - 1 = 5, the default
    target rule), with no substitute suggested, and the list does not fail on it."""
    from partsdb.services import catalog, reorder, stock

    with empty_db.session() as session:
        catalog.add_device(session, {**BIG_MOSFET, "obsolete": "yes", "low_stock": "3"})
        stock.receive(session, "HX-N900", 1, "C1/D01")
        lines = reorder.reorder_list(session)
    assert [(x.designation, x.to_buy, x.substitute) for x in lines] == [("HX-N900", 5, None)]
