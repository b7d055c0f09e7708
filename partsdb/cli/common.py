"""What every CLI command shares: the database handle, option types, output and errors.

Commands are thin: parse options (units through :class:`QuantityParam`), make one service or
domain call, format the result. Heavy modules (numpy, pandas, sqlalchemy, scipy) are imported
inside command bodies so that ``partsdb --help`` stays fast.

Exit codes (``partsdb.errors``): 0 success, 1 not found, 2 bad usage or invalid input,
3 database or environment trouble (message on stderr).
"""

from __future__ import annotations

import contextlib
import json
import math
import re
import sys
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, NoReturn

import click

from partsdb.errors import EXIT_INVALID, EXIT_NOT_FOUND

if TYPE_CHECKING:
    from partsdb.device import Device
    from partsdb.storage.database import Database



@dataclass
class CliState:
    """Per-invocation state: which database, opened lazily on first use."""

    db_url: str | None = None
    read_only: bool = False
    quiet: bool = False
    _db: Database | None = field(default=None, repr=False)

    def database(self) -> Database:
        if self._db is None:
            from partsdb.storage.database import open_database

            self._refuse_a_new_file_by_mistake()
            self._db = open_database(self.db_url, read_only=self.read_only,
                                     notify=None if self.quiet else _notice)
        return self._db

    def _refuse_a_new_file_by_mistake(self) -> None:
        """A SQLite file named with --db (or $PARTSDB_DB) that does not exist is created only
        by the commands that make a database (`init`, `restore`): a typo in the name of a
        shop's file must not leave a new, empty database behind. The per-user default file is
        still created on first use."""
        import os
        from pathlib import Path

        from partsdb.storage.database import DatabaseError

        named = self.db_url or os.environ.get("PARTSDB_DB")
        if not named or "://" in named:
            return
        ctx = click.get_current_context(silent=True)
        command = ctx.command.name if ctx is not None else None
        path = Path(named).expanduser()
        if command not in CREATING_COMMANDS and not path.exists():
            raise DatabaseError(f"--db: {named!r} does not exist; expected an existing database "
                                f"file (`partsdb --db {named} init` creates one)")


CREATING_COMMANDS = frozenset({"init", "restore", "demo"})
"""Commands that may create the SQLite file named by --db."""


def _notice(message: str) -> None:
    click.echo(message, err=True)


pass_state = click.make_pass_decorator(CliState, ensure=True)


def fail(message: str, code: int = EXIT_INVALID) -> NoReturn:
    """Print ``error: message`` on stderr and exit with ``code`` (nothing is written)."""
    click.echo(f"error: {message}", err=True)
    sys.exit(code)


class QuantityParam(click.ParamType):
    """A click option value in engineering notation ("40V", "200mA", "2k2") -> float, base unit."""

    name = "quantity"

    def __init__(self, unit: str, field: str | None = None, positive: bool = True) -> None:
        self.unit = unit
        self.field = field
        self.positive = positive

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> float:
        from partsdb.units import UnitError, parse_quantity

        if isinstance(value, float):
            return value
        name = self.field or (param.name if param and param.name else "value")
        try:
            number = parse_quantity(value, self.unit, name)
        except UnitError as err:
            self.fail(str(err), param, ctx)
        if self.positive and number <= 0:
            self.fail(f"{name}: {value!r} must be positive", param, ctx)
        return number


class TemperatureParam(click.ParamType):
    """An ambient or case temperature: "45", "45C", "45 °C" (°C) or "318K" (kelvin) -> °C."""

    name = "temperature"

    def __init__(self, field: str | None = None) -> None:
        self.field = field

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> float:
        from partsdb.units import UnitError, parse_temperature

        if isinstance(value, float):
            return value
        name = self.field or (param.name if param and param.name else "temperature")
        try:
            return parse_temperature(value, name)
        except UnitError as err:
            self.fail(str(err), param, ctx)


class RangeParam(click.ParamType):
    """A window such as "60..180" -> (low, high); a single value gives (v, v)."""

    name = "range"

    def __init__(self, unit: str = "", field: str | None = None) -> None:
        self.unit = unit
        self.field = field

    def convert(self, value: Any, param: click.Parameter | None,
                ctx: click.Context | None) -> tuple[float, float]:
        from partsdb.units import UnitError, parse_range

        if isinstance(value, tuple):
            return value
        name = self.field or (param.name if param and param.name else "value")
        try:
            r = parse_range(value, self.unit, name)
        except UnitError as err:
            self.fail(str(err), param, ctx)
        if r.low <= 0:
            self.fail(f"{name}: {value!r} must be positive", param, ctx)
        return (r.low, r.high)


def format_option(*choices: str, default: str = "table") -> Callable[[Callable[..., Any]], Any]:
    """``--format`` with the given choices; the value arrives as the ``fmt`` keyword."""
    return click.option("--format", "fmt", type=click.Choice(choices), default=default,
                        show_default=True, help="Output format.")


def _json_default(value: Any) -> Any:
    if hasattr(value, "item"):  # numpy scalars
        return value.item()
    if hasattr(value, "isoformat"):
        return value.isoformat()
    raise TypeError(f"not JSON serialisable: {type(value).__name__}")


def _clean(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    return value


def emit_json(data: Any) -> None:
    """Print ``data`` as JSON (NaN and infinities become null)."""
    click.echo(json.dumps(_clean(data), indent=2, ensure_ascii=False, default=_json_default))


def emit_csv(columns: Sequence[str], rows: Iterable[Sequence[Any]]) -> None:
    """CSV on stdout, or TSV when the command was given ``--format tsv``: one line per row,
    tab-separated, tabs and line breaks inside a value turned into spaces (for cut/awk/sort)."""
    import csv

    from partsdb.csvsafe import guard

    # Every CSV or TSV partsdb writes goes through the one formula guard (as export does): a
    # spreadsheet opens either.
    ctx = click.get_current_context(silent=True)
    if ctx is not None and ctx.params.get("fmt") == "tsv":
        for line in (columns, *rows):
            cells = ("" if v is None else str(guard(v)) for v in line)
            click.echo("\t".join(re.sub(r"[\t\r\n]+", " ", c) for c in cells))
        return
    writer = csv.writer(sys.stdout, lineterminator="\n")
    writer.writerow([guard(c) for c in columns])
    for row in rows:
        writer.writerow(["" if v is None else guard(v) for v in row])


def print_table(title: str | None, columns: Sequence[str], rows: Iterable[Sequence[Any]],
                caption: str | None = None) -> None:
    """A rich table on stdout."""
    from rich.console import Console
    from rich.table import Table

    table = Table(title=title, caption=caption, header_style="bold")
    for col in columns:
        table.add_column(col)
    for row in rows:
        table.add_row(*["—" if v is None else str(v) for v in row])
    # Written to a pipe or file, a table has no screen to fit: rich would cut it to 80 columns
    # with "…", so it gets all the width its cells need.
    Console(width=None if sys.stdout.isatty() else WIDE).print(table)


WIDE = 10_000
"""Width given to tables written to a pipe or file (they are as wide as their cells need)."""


def load_device(state: CliState, designation: str) -> Device:
    """The stored device for ``designation`` or exit 1 with close spellings suggested."""
    from partsdb.services import catalog

    with state.database().session() as session:
        device = catalog.get_device(session, designation)
        hint = catalog.did_you_mean(session, designation) if device is None else ""
    if device is None:
        fail(f"device {designation!r} not found{hint}", EXIT_NOT_FOUND)
    return device


def launch_tui(state: CliState) -> None:
    """Open the terminal UI on the state's database."""
    from tui.app import run_app

    run_app(state.database())


PROGRESS_DELAY_S = 2.0
"""A long command shows its progress bar only after this long (a quick one never flickers)."""


@contextlib.contextmanager
def busy(state: CliState, what: str, json_mode: bool = False,
         delay: float = PROGRESS_DELAY_S) -> Iterator[None]:
    """A rich progress bar (pulsing, with the time taken) on stderr while a long import, export,
    copy, backup or restore runs: shown after ``delay`` seconds, only when stderr is a terminal,
    never with --quiet or in JSON mode; removed when the work ends."""
    if state.quiet or json_mode or not sys.stderr.isatty():
        yield
        return
    import threading

    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    progress = Progress(TextColumn("{task.description}"), BarColumn(), TimeElapsedColumn(),
                        console=Console(file=sys.stderr), transient=True)
    progress.add_task(what, total=None)
    timer = threading.Timer(delay, progress.start)
    timer.daemon = True
    timer.start()
    try:
        yield
    finally:
        timer.cancel()
        timer.join()
        progress.stop()
