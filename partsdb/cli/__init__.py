"""The ``partsdb`` command: a thin click face over the services.

Only click is imported at start-up; each command imports what it needs, so ``partsdb --help``
stays fast. Errors from the services become one-line messages with the documented exit codes.
"""

from __future__ import annotations

import sys
from typing import Any

import click

from partsdb import __version__
from partsdb.cli.common import CliState
from partsdb.errors import PartsdbError


class PartsdbGroup(click.Group):
    """Turns service errors into a clear message on stderr and an exit code, never a traceback."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except (click.exceptions.Exit, click.ClickException, click.Abort):
            raise
        except PartsdbError as err:
            from partsdb.storage.database import mask_url

            click.echo(f"error: {mask_url(str(err))}", err=True)
            sys.exit(err.exit_code)


@click.group(cls=PartsdbGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--db", "db_url", metavar="PATH|URL", envvar="PARTSDB_DB",
              help="Database file or SQLAlchemy URL (default: a SQLite file in your user data "
                   "directory; also $PARTSDB_DB).")
@click.option("--read-only", is_flag=True, help="Refuse every change (for look-up terminals).")
@click.option("-q", "--quiet", is_flag=True, help="No notices on stderr (schema upgrades).")
@click.version_option(__version__, prog_name="partsdb")
@click.pass_context
def main(ctx: click.Context, db_url: str | None, read_only: bool, quiet: bool) -> None:
    """partsdb: the transistor drawers of a repair bench, and the substitutes they hold.

    Keep stock by cabinet and drawer, find a substitute for a failed or obsolete part ranked
    against what the circuit needs, and check what a swap does to the stage.

    Caution: mains and high-voltage equipment can kill. Verify every substitution in circuit;
    follow local codes and qualified practice.
    """
    ctx.obj = CliState(db_url=db_url, read_only=read_only, quiet=quiet)


def _register() -> None:
    from partsdb.cli import (
        bench,
        catalog_cmds,
        circuit,
        designations,
        exchange_cmds,
        labels_cmd,
        places_cmds,
        shop,
        stock_cmds,
        substitute,
        ui,
    )

    for command in (*catalog_cmds.COMMANDS, *exchange_cmds.COMMANDS, *stock_cmds.COMMANDS,
                    *places_cmds.COMMANDS,
                    designations.decode, designations.find, circuit.check, circuit.bias,
                    circuit.spice, substitute.substitute, substitute.swaplog, substitute.policies,
                    shop.copy, shop.backup, shop.restore, labels_cmd.labels, bench.bench, ui.tui):
        main.add_command(command)


_register()
