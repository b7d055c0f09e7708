"""The kit sheet: a repair kit as a printable sheet for the bench.

A kit (see :mod:`partsdb.services.kit`) is turned into a :class:`KitSheet` of plain text: the
job reference and date at the top, one row per line of the parts list (reference,
designation, quantity, action, the part fitted and its verdict), the pick list sorted by
drawer with the lines each pick serves and a box to tick, the lines to buy, the safety
cautions, and blank fields for the technician and the date. The Markdown renderer lives here;
the PDF one (fpdf2) in :mod:`partsdb.services.kitsheet`. Pure: no database, no files.
"""

from __future__ import annotations

from dataclasses import dataclass

from partsdb.cautions import SAFETY_CAUTIONS

BLANK = "______________________"
SIGN_FIELDS = ("Picked by", "Technician", "Date", "Notes")
"""The fields left blank for the bench to fill in by hand."""
LINE_HEADINGS = ("Ref.", "Designation", "Qty", "Action", "Part fitted", "Verdict")
PICK_HEADINGS = ("Drawer", "Part", "Qty", "For", "Picked")


@dataclass(frozen=True)
class KitSheetLine:
    """One line of the parts list as planned."""

    reference: str
    designation: str
    quantity: int
    action: str
    """stock, substitute or buy."""
    part: str
    verdict: str
    """The substitute's verdict; "—" for the original itself or a part with none."""


@dataclass(frozen=True)
class KitPick:
    """One stop at a drawer: how many of a part to take there, and for which lines."""

    location: str
    part: str
    quantity: int
    references: tuple[str, ...]


@dataclass(frozen=True)
class KitSheet:
    """Everything a kit sheet shows, as text (renderers only place it)."""

    job: str
    """The job reference; empty when not known yet (a blank to fill in is printed)."""
    date: str
    lines: tuple[KitSheetLine, ...]
    picks: tuple[KitPick, ...]
    cautions: tuple[str, ...] = SAFETY_CAUTIONS

    @property
    def title(self) -> str:
        return f"Repair kit {self.job}" if self.job else "Repair kit"

    @property
    def job_text(self) -> str:
        return self.job or BLANK

    @property
    def to_buy(self) -> tuple[KitSheetLine, ...]:
        return tuple(line for line in self.lines if line.action == "buy")

    @property
    def parts_to_pick(self) -> int:
        return sum(p.quantity for p in self.picks)

    def line_cells(self, line: KitSheetLine) -> tuple[str, ...]:
        return (line.reference, line.designation, str(line.quantity), line.action, line.part,
                line.verdict)

    def pick_cells(self, pick: KitPick) -> tuple[str, ...]:
        return (pick.location, pick.part, str(pick.quantity), ", ".join(pick.references), "[ ]")

    def buy_text(self) -> str:
        """The lines the drawers cannot meet, as one sentence (empty when none)."""
        if not self.to_buy:
            return ""
        return ("Not in the drawers, to buy before the job: "
                + "; ".join(f"{ln.reference} {ln.designation} x{ln.quantity}"
                            + (f" (best substitute {ln.part}, {ln.verdict})"
                               if ln.part != ln.designation else "")
                            for ln in self.to_buy) + ".")


def _md(text: object) -> str:
    """Text for a Markdown table cell: only the pipe needs escaping there."""
    return " ".join(str(text).replace("|", "/").split())


def _table(headings: tuple[str, ...], rows: list[tuple[str, ...]]) -> list[str]:
    out = ["| " + " | ".join(headings) + " |", "|" + "---|" * len(headings)]
    out += ["| " + " | ".join(_md(c) for c in row) + " |" for row in rows]
    return out


def render_markdown(sheet: KitSheet) -> str:
    out = [f"# {_md(sheet.title)}", "", f"Job: **{_md(sheet.job_text)}** · Date: "
           f"{_md(sheet.date)} · {len(sheet.lines)} lines, {sheet.parts_to_pick} parts to pick",
           "", "## Lines", ""]
    out += _table(LINE_HEADINGS, [sheet.line_cells(ln) for ln in sheet.lines])
    out += ["", "## Pick list (by drawer)", ""]
    if sheet.picks:
        out += _table(PICK_HEADINGS, [sheet.pick_cells(p) for p in sheet.picks])
    else:
        out.append("Nothing to take from the drawers.")
    if sheet.to_buy:
        out += ["", "## To buy", "", _md(sheet.buy_text())]
    out += ["", "## Cautions", ""] + [f"- {_md(c)}" for c in sheet.cautions]
    out += ["", "## Sign-off", ""] + [f"- {name}: {BLANK}" for name in SIGN_FIELDS]
    return "\n".join(out) + "\n"
