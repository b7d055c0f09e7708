"""The repair of the demo's failed OC375 from the command line alone, start to finish: the job
sheet of the pick, taking the part for the job, recording the swap, and its outcome later.

Each step is checked through the library (stock.where, swaplog.list_swaps) and the PDF by
reading its text back; the counts are the demo's lots worked out by hand (2SA8150: 50 new in
C1/D06 and 12 pulled in C3/D03, seed_data/stock.csv).
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Any

from click.testing import CliRunner

from partsdb.cli import main
from partsdb.services import stock, swaplog


def test_failed_oc375_sheet_take_log_and_outcome(demo_db: Any, tmp_path: Path) -> None:
    from pypdf import PdfReader

    url = str(demo_db.url)

    def run(*args: str) -> Any:
        result = CliRunner().invoke(main, ["--quiet", "--db", url, *args],
                                    catch_exceptions=False)
        assert result.exit_code == 0, f"{args}: {result.output}"
        return result

    sheet = tmp_path / "job-J-2611.pdf"
    written = run("substitute", "OC375", "--pick", "2SA8150", "--job", "J-2611", "--format",
                  "pdf", "--output", str(sheet))
    assert written.stdout.strip() == f"job sheet written to {sheet.resolve()}"
    text = PdfReader(sheet).pages[0].extract_text()
    assert "Job J-2611" in text and "2SA8150" in text and "C1/D06" in text
    run("stock", "take", "2SA8150", "1", "--from", "C1/D06", "--job", "J-2611")
    with demo_db.session() as session:
        lots = {lot.location: lot.quantity for lot in stock.where(session, "2SA8150")}
    assert lots == {"C1/D06": 50 - 1, "C3/D03": 12}
    added = run("swaplog", "add", "OC375", "2SA8150", "--job", "J-2611", "--vce-peak", "9V")
    swap_id = int(re.search(r"#(\d+)", added.output).group(1))  # type: ignore[union-attr]
    with demo_db.session() as session:
        assert swaplog.list_swaps(session, outcome="worked", job="J-2611") == []
    run("swaplog", "set", str(swap_id), "--outcome", "worked", "--note", "plays")
    listed = json.loads(run("swaplog", "list", "--outcome", "worked", "--format", "json").output)
    mine = [s for s in listed if s["id"] == swap_id]
    assert len(mine) == 1
    assert (mine[0]["original"], mine[0]["substitute"], mine[0]["job"], mine[0]["outcome"]) == (
        "OC375", "2SA8150", "J-2611", "worked")
    with demo_db.session() as session:
        (view,) = [s for s in swaplog.list_swaps(session, outcome="worked") if s.id == swap_id]
    assert view.note == "plays" and view.stress.vce_peak == 9.0
