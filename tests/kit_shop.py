"""An invented shop for the repair-kit tests (CLI, service, TUI) and its five-line kit file.

The verdicts follow the workshop policy: a circuit stress above 80 % of a rating is not
``suitable`` and above the rating ``under-rated`` (common practice; a bench rule, not a
published standard). The parts and values are invented and never an oracle: each test states
its expected numbers from the quantities below, worked out by hand.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any


def kit_part(name: str, **kw: Any) -> dict[str, Any]:
    base = {"designation": name, "kind": "bjt", "polarity": "pnp", "material": "ge",
            "vceo": "32V", "vcbo": "40V", "ic_max": "150mA", "ptot": "200mW",
            "ptot_ref": "ambient", "tj_max": "90", "hfe_min": "50", "hfe_max": "150",
            "ft": "2MHz", "package": "TO-1", "pinout": "EBC"}
    base.update(kw)
    return base


KIT = """Ref,Designation,Qty,Vce peak,Policy
Q1,QK10,2,,
Q2,QK20,1,25V,
Q3,QK10,1,,
Q4,QK20,2,25V,workshop
Q5,QK30,1,,
"""
"""QK10: three in the drawers for Q1 and Q3 together. QK20: none in stock; QK22 (Vceo 20 V,
under-rated at 25 V) is in stock but must not be taken; QK23 (60 V) holds exactly the three
that Q2 and Q4 need together; QK24 (30 V: 25 V is 83 % of it, above 80 %, so marginal) holds
two and ranks after QK23 (verdict first). QK30: in stock."""

HELD = (("QK10", 2, "C1/D02"), ("QK10", 1, "C1/D01"), ("QK22", 9, "C2/D01"),
        ("QK23", 3, "C2/D05"), ("QK24", 2, "C2/D07"), ("QK30", 4, "C3/D01"))


def fill_kit_shop(db: Any) -> None:
    """The devices and lots above, through the services; clears the ranking cache."""
    from partsdb.services import catalog, stock
    from partsdb.services.substitution import clear_cache

    with db.session() as session:
        for part in (kit_part("QK10"), kit_part("QK20", obsolete="yes"),
                     kit_part("QK22", vceo="20V"), kit_part("QK23", vceo="60V", vcbo="80V"),
                     kit_part("QK24", vceo="30V"),
                     kit_part("QK30", polarity="npn")):
            catalog.add_device(session, part)
        for name, qty, place in HELD:
            stock.receive(session, name, qty, place, create=True)
    clear_cache()


def write_kit(folder: Path, text: str = KIT, name: str = "unit.csv") -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def held(db: Any) -> dict[tuple[str, str], int]:
    """(designation, location) -> quantity of every lot of the kit shop."""
    from partsdb.services import stock

    with db.session() as session:
        return {(lot.designation, lot.location): lot.quantity
                for name in sorted({h[0] for h in HELD}) for lot in stock.where(session, name)}
