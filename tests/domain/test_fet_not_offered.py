"""A bipolar original is never offered a FET, in the engine and through the service, even when
the FET's ratings cover every need many times over (a MOSFET or JFET does not drop into a
bipolar stage: gate instead of base, no Vbe, no hFE; common practice). A FET original is refused
by the bipolar finder in one line naming the part and why.
"""

from __future__ import annotations

import pytest

from partsdb.device import parse_device
from partsdb.ranking import CatalogColumns, Requirement, rank
from partsdb.ranking.model import SpecError

ORIGINAL = {"designation": "QX-300", "kind": "bjt", "polarity": "npn", "material": "si",
            "vceo": "60V", "ic_max": "1A", "ptot": "1W", "ptot_ref": "ambient",
            "hfe_min": "60", "hfe_max": "200", "package": "TO-92", "pinout": "EBC"}
BIPOLAR_SUB = {**ORIGINAL, "designation": "QX-301", "vceo": "80V"}
BIG_MOSFET = {"designation": "HX-N900", "kind": "mosfet", "polarity": "n", "material": "si",
              "vds": "900V", "id_max": "100A", "id_max_ref": "case", "ptot": "300W",
              "ptot_ref": "case", "rds_on": "10 mΩ", "rds_on_vgs": "10V", "package": "TO-92",
              "pinout": "GDS"}
BIG_JFET = {"designation": "HX-J900", "kind": "jfet", "polarity": "n", "material": "si",
            "vds": "100V", "idss_min": "1A", "idss_max": "2A", "ptot": "100W",
            "ptot_ref": "ambient", "package": "TO-92"}


def _catalog() -> tuple[CatalogColumns, Requirement]:
    devices = [parse_device(r) for r in (ORIGINAL, BIPOLAR_SUB, BIG_MOSFET, BIG_JFET)]
    return CatalogColumns.from_devices(devices), Requirement.from_device(devices[0])


@pytest.mark.parametrize("show_rejected", [False, True])
def test_the_engine_never_offers_a_fet_for_a_bipolar_original(show_rejected: bool) -> None:
    cat, req = _catalog()
    result = rank(cat, req, limit=50, show_rejected=show_rejected)
    offered = [c.designation for c in result.candidates]
    assert "QX-301" in offered  # the ranking ran and found the bipolar part
    assert "HX-N900" not in offered and "HX-J900" not in offered


def test_a_fet_original_is_refused_by_the_bipolar_finder_in_one_line() -> None:
    fet = parse_device(BIG_MOSFET)
    with pytest.raises(SpecError, match=r"^HX-N900: a mosfet \(field-effect transistor\), not a "
                                        r"bipolar part; .*bipolar transistors \(npn/pnp\) only$"):
        Requirement.from_device(fet)
