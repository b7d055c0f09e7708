"""The kit service's line switch: the candidates of one line with what the drawers still hold
for it, and switching a line with the drawers re-counted across every line.

The shop and the five-line kit are tests/kit_shop.py. Every expected count below is worked out
by hand from its lots (QK10: 2 in C1/D02 + 1 in C1/D01; QK23: 3 in C2/D05; QK24: 2 in C2/D07)
and the kit's quantities (Q1 QK10 x2, Q2 QK20 x1, Q3 QK10 x1, Q4 QK20 x2, Q5 QK30 x1).
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from partsdb.services import kit, swaplog
from partsdb.storage.database import open_database
from tests.kit_shop import fill_kit_shop, held, write_kit


@pytest.fixture
def shop(db_url: str) -> Iterator[Any]:
    db = open_database(db_url, notify=None)
    fill_kit_shop(db)
    yield db
    db.dispose()


@pytest.fixture
def plan(shop: Any, tmp_path: Path) -> kit.KitPlan:
    return kit.plan_kit(shop, kit.read_kit(write_kit(tmp_path)))


def test_options_count_what_the_other_lines_take(shop: Any, plan: kit.KitPlan) -> None:
    options = {o.designation: o for o in kit.line_options(shop, plan, 3)}  # Q4: 2 x QK20
    assert next(iter(options)) == "QK20" and options["QK20"].verdict is None  # original first
    assert options["QK20"].left == 0  # none in the drawers
    # QK23: 3 held, Q2 (the other line sharing it) takes 1: 3 - 1 = 2 left for Q4's 2.
    assert (options["QK23"].left, options["QK23"].enough, options["QK23"].current) == (2, True,
                                                                                       True)
    # QK10 fits QK20 too (25 V is 78 % of 32 V), but Q1 and Q3 take all three: 3 - 2 - 1 = 0.
    assert (options["QK10"].left, options["QK10"].enough) == (0, False)
    # QK24: 25 V is 83 % of its 30 V, above the workshop's 80 %: marginal, and after QK23.
    assert options["QK24"].verdict == "marginal" and options["QK24"].left == 2
    names = list(options)
    assert names.index("QK23") < names.index("QK24")
    # QK22 (20 V, under-rated at 25 V) is no option at all.
    assert "QK22" not in options


def test_switch_recounts_the_drawers_across_lines(shop: Any, plan: kit.KitPlan) -> None:
    switched = kit.switch_line(shop, plan, 3, "qk-24")  # Q4 -> QK24: 2 held, 2 needed
    q4 = switched.lines[3]
    assert (q4.action, q4.part, q4.verdict, q4.picks) == ("substitute", "QK24", "marginal",
                                                           [("C2/D07", "new", 2)])
    assert plan.lines[3].part == "QK23"  # the plan given is left as it was
    # The pick list by hand: QK10 2 + 1 (Q1, Q3), QK23 now only Q2's 1, QK24 Q4's 2, QK30 1.
    assert switched.pick_list() == [("C1/D01", "QK10", 1), ("C1/D02", "QK10", 2),
                                    ("C2/D05", "QK23", 1), ("C2/D07", "QK24", 2),
                                    ("C3/D01", "QK30", 1)]
    # Q2 to QK24 as well: 2 held - 2 for Q4 = 0 left for Q2's 1: refused, naming the count.
    with pytest.raises(kit.KitError, match=r"Q2\): the drawers hold 0 QK24 .* needs 1"):
        kit.switch_line(shop, switched, 1, "QK24")
    # Q2 to QK10: 3 held - 2 (Q1) - 1 (Q3) = 0: refused too.
    with pytest.raises(kit.KitError, match="hold 0 QK10"):
        kit.switch_line(shop, switched, 1, "QK10")
    # Q2 back to its original QK20: none held.
    with pytest.raises(kit.KitError, match="hold 0 QK20"):
        kit.switch_line(shop, switched, 1, "QK20")


def test_switch_refuses_a_part_that_is_no_option(shop: Any, plan: kit.KitPlan) -> None:
    with pytest.raises(kit.KitError, match="'QK22' is not a suitable or marginal substitute"):
        kit.switch_line(shop, plan, 1, "QK22")  # under-rated at 25 V
    with pytest.raises(kit.KitError, match="number 9 is not valid; expected 1 to 5"):
        kit.switch_line(shop, plan, 8, "QK23")


def test_taking_a_switched_plan_logs_each_line_as_switched(shop: Any,
                                                           plan: kit.KitPlan) -> None:
    switched = kit.switch_line(shop, plan, 3, "QK24")
    # 2 (Q1) + 1 (Q2) + 1 (Q3) + 2 (Q4) + 1 (Q5) = 7 parts.
    assert kit.take_kit(shop, switched, "J-88") == 7
    now = held(shop)
    assert now[("QK23", "C2/D05")] == 3 - 1 and now[("QK24", "C2/D07")] == 2 - 2
    with shop.session() as session:
        swaps = swaplog.list_swaps(session, job="J-88")
    assert sorted((s.original, s.substitute) for s in swaps) == [("QK20", "QK23"),
                                                                 ("QK20", "QK24")]


def test_picks_prefer_the_best_condition_and_one_drawer(db_url: str, tmp_path: Path) -> None:
    # The pick rule (common practice of a parts counter): the best condition first, and one
    # lot when one lot holds enough. QK40 lots, worked by hand: 9 pulled in C3/D01 (largest),
    # 3 new in C1/D02, 2 tested in C1/D05. Q1 needs 2 and Q2 needs 1: the new lot holds both
    # in turn (3 - 2 = 1 left for Q2), so one drawer, C1/D02, is opened and no pulled part is
    # taken. Q3 needs 4: no lot but the pulled one holds 4 whole, so it comes from C3/D01.
    from partsdb.services import catalog, stock
    from partsdb.services.substitution import clear_cache
    from tests.kit_shop import kit_part

    db = open_database(db_url, notify=None)
    try:
        with db.session() as session:
            catalog.add_device(session, kit_part("QK40"))
            stock.receive(session, "QK40", 9, "C3/D01", condition="pulled", create=True)
            stock.receive(session, "QK40", 3, "C1/D02", condition="new", create=True)
            stock.receive(session, "QK40", 2, "C1/D05", condition="tested", create=True)
        clear_cache()
        text = "Ref,Designation,Qty\nQ1,QK40,2\nQ2,QK40,1\n"
        plan = kit.plan_kit(db, kit.read_kit(write_kit(tmp_path, text)))
        assert [p.picks for p in plan.lines] == [[("C1/D02", "new", 2)], [("C1/D02", "new", 1)]]
        plan = kit.plan_kit(db, kit.read_kit(write_kit(tmp_path, "Ref,Designation,Qty\n"
                                                       "Q3,QK40,4\n", "q3.csv")))
        assert plan.lines[0].picks == [("C3/D01", "pulled", 4)]
        # 13 of them: no lot holds 13, so best condition first: 3 new, 2 tested, 8 of 9 pulled
        plan = kit.plan_kit(db, kit.read_kit(write_kit(tmp_path, "Ref,Designation,Qty\n"
                                                       "Q4,QK40,13\n", "q4.csv")))
        assert plan.lines[0].picks == [("C1/D02", "new", 3), ("C1/D05", "tested", 2),
                                       ("C3/D01", "pulled", 8)]
    finally:
        db.dispose()
