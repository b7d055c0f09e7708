"""``partsdb tui``: open the terminal UI on the selected database."""

from __future__ import annotations

import click

from partsdb.cli.common import CliState, launch_tui, pass_state


@click.command("tui")
@pass_state
def tui(state: CliState) -> None:
    """Open the terminal UI: drawers, devices, substitutes, bench and ledger.

    Keys are listed in the footer and on the help screen (F1). Caution: mains and high-voltage
    equipment can kill; verify every substitution in circuit.
    """
    launch_tui(state)
