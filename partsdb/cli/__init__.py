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
from partsdb.errors import EXIT_INVALID, PartsdbError


class PartsdbGroup(click.Group):
    """Turns service errors into a clear message on stderr and an exit code, never a traceback."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except click.BadParameter as err:
            # A value that does not read (a unit typo, a bad choice): one line, like every
            # other refusal, rather than click's usage block.
            click.echo(f"error: {err.format_message()}", err=True)
            sys.exit(EXIT_INVALID)
        except (click.exceptions.Exit, click.ClickException, click.Abort):
            raise
        except PartsdbError as err:
            from partsdb.storage.database import mask_url

            click.echo(f"error: {mask_url(str(err))}", err=True)
            sys.exit(err.exit_code)
        except BrokenPipeError:
            # The reader of our output went away (``| head``): stop quietly, as other tools do.
            import os

            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
            sys.exit(0)
        except OSError as err:
            # The machine refused (disk full, no permission, missing folder): one line, exit 3.
            from partsdb.errors import EXIT_ENVIRONMENT
            from partsdb.storage.database import mask_url

            where = f" ({err.filename})" if err.filename else ""
            click.echo(f"error: {mask_url(err.strerror or str(err))}{mask_url(where)}", err=True)
            sys.exit(EXIT_ENVIRONMENT)
        except Exception as err:
            if not type(err).__module__.startswith(("sqlalchemy", "sqlite3")):
                raise
            # A database failure no service turned into a message: its first line, masked.
            from partsdb.errors import EXIT_ENVIRONMENT
            from partsdb.storage.database import mask_url

            text = str(getattr(err, "orig", None) or err).strip().splitlines()
            click.echo(f"error: database trouble: {mask_url(text[0] if text else type(err).__name__)}",
                       err=True)
            sys.exit(EXIT_ENVIRONMENT)


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
        kit_cmd,
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
                    shop.copy, shop.backup, shop.restore, shop.upgrade, labels_cmd.labels, kit_cmd.kit,
                    bench.bench, ui.tui):
        main.add_command(command)
    _add_completion(main)
    _add_late_db(main)


def _late_db_given(ctx: click.Context, param: click.Parameter, value: str | None) -> None:
    if value is not None:
        ctx.ensure_object(CliState).db_url = value


def _add_late_db(group: click.Group) -> None:
    """`--db` after the command too (`partsdb stock where OC375 --db shop.sqlite`), the same as
    the global option before it; `demo` has its own."""
    for command in group.commands.values():
        if isinstance(command, click.Group):
            _add_late_db(command)
        elif not any("--db" in getattr(p, "opts", ()) for p in command.params):
            command.params.append(click.Option(
                ["--db", "late_db"], metavar="PATH|URL", expose_value=False, is_eager=True,
                callback=_late_db_given, help="Database, as the global --db (which it overrides)."))


DESIGNATION_PARAMS = frozenset({"designation", "original", "substitute_part", "device_name",
                                "substitute"})
"""Parameters naming a stored device, completed from the database (``device add`` excepted:
it names a new one)."""
PLACE_PARAMS = frozenset({"to", "from_", "at", "location"})
"""Options of the ``stock`` commands naming a place (``copy --from/--to`` name databases)."""


def _complete_designation(ctx: click.Context, param: click.Parameter,
                          incomplete: str) -> list[str]:
    from partsdb.services.completion import complete_designations

    return complete_designations(ctx.find_root().params.get("db_url"), incomplete)


def _complete_place(ctx: click.Context, param: click.Parameter, incomplete: str) -> list[str]:
    from partsdb.services.completion import complete_places

    return complete_places(ctx.find_root().params.get("db_url"), incomplete)


def _add_completion(group: click.Group, path: tuple[str, ...] = ()) -> None:
    """Give designation and place parameters completion from the database (bash, zsh, fish
    through click's ``_PARTSDB_COMPLETE``; docs/shell.md). Set here, by parameter name, rather
    than on each of the thirty-odd parameters."""
    for name, command in group.commands.items():
        where = (*path, name)
        if isinstance(command, click.Group):
            _add_completion(command, where)
            continue
        for param in command.params:
            if param.name in DESIGNATION_PARAMS and where != ("device", "add") and \
                    isinstance(param, click.Argument | click.Option) and not \
                    (isinstance(param, click.Option) and param.is_flag):
                if param.opts == ["--new-designation"]:
                    continue
                param._custom_shell_complete = _complete_designation  # click's hook (8.0+)
            elif param.name in PLACE_PARAMS and where[0] == "stock":
                param._custom_shell_complete = _complete_place


_register()
