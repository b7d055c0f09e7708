"""The device form shows the fields of the record's kind: bipolar ratings for a bjt, the MOSFET
ones when the kind typed is mosfet (keys pressed through Textual's pilot), and a FET saved from it
reads back through the catalog service."""

from __future__ import annotations

from typing import Any

import pytest
from textual.widgets import Input

from partsdb.services import catalog
from tui.app import build_app
from tui.device_form import DeviceForm

SIZE = (80, 24)


def _shown(form: DeviceForm, name: str) -> bool:
    return bool(form.query_one(f"#row-{name}").display)


async def test_typing_the_kind_switches_the_fields_and_a_mosfet_saves(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0, start="devices")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.view("devices").action_add()
        await pilot.pause()
        form = app.screen
        assert isinstance(form, DeviceForm)
        assert _shown(form, "vceo") and not _shown(form, "rds_on") and not _shown(form, "mode")
        await pilot.press(*"HX-N61")
        kind = form.query_one("#fd-kind", Input)
        kind.focus()
        kind.value = ""
        await pilot.press(*"mosfet")
        await pilot.pause()
        assert _shown(form, "rds_on") and _shown(form, "mode") and _shown(form, "qg")
        assert not _shown(form, "vceo")
        assert _shown(form, "idss_min")  # a depletion MOSFET carries Idss
        assert not _shown(form, "hfe_min")
        values = {"polarity": "n", "vds": "60V", "id_max": "20A", "rds_on": "40mΩ",
                  "rds_on_vgs": "4.5V", "vgs_th_min": "1V", "vgs_th_max": "2.5V", "qg": "18nC",
                  "pinout": "GDS", "vceo": "45V"}  # vceo typed, but hidden: sent blank
        for name, value in values.items():
            form.query_one(f"#fd-{name}", Input).value = value
        await pilot.pause()
        form.action_save()
        await pilot.pause()
        assert not isinstance(app.screen, DeviceForm)
    with shop_db.session() as session:
        saved = catalog.get_device(session, "HX-N61")
    assert saved is not None
    assert (saved.kind, saved.mode, saved.polarity, saved.vceo) == ("mosfet", "enhancement", "n",
                                                                    None)
    assert saved.rds_on == pytest.approx(0.040) and saved.qg == pytest.approx(18e-9)
