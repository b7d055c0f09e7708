"""CLI: ``bench``, the performance harness (see :mod:`partsdb.perf.bench` for what each figure means).

Works in a temporary directory of its own. The global ``--db`` and ``PARTSDB_DB`` are never
opened; the command's own ``--db URL`` (after ``bench``) runs the figures on an *empty*
PostgreSQL database instead of SQLite files, refusing any database that holds a table.
Progress goes to stderr, the result to stdout.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import click

from partsdb.cli.common import emit_json, fail, format_option

_UNITS = {"import_rows_per_s": "rows/s", "import_mapped_rows_per_s": "rows/s",
          "rank_ms": "ms", "rank_cold_ms": "ms", "rank_uncached_ms": "ms",
          "rank_floor_ms": "ms", "rank_ratio": "x", "find_ms": "ms", "find_floor_ms": "ms",
          "find_ratio": "x", "find_agreement": "share", "cli_help_s": "s",
          "cli_substitute_s": "s", "cli_substitute_catalog_s": "s", "peak_rss_mb": "MiB",
          "tui_first_screen_s": "s", "tui_first_screen_pilot_s": "s", "tui_keystroke_ms": "ms",
          "tui_keystroke_pilot_ms": "ms"}


class _Sizes(click.ParamType):
    """One catalog size or several, comma-separated (``200000,1000000``)."""

    name = "N[,N...]"

    def convert(self, value: Any, param: Any, ctx: Any) -> list[int]:
        if isinstance(value, list):
            return value
        sizes: list[int] = []
        for part in str(value).replace("_", "").split(","):
            if not part.strip().isdigit() or int(part) < 100:
                self.fail(f"{value!r} is not valid; expected whole numbers of 100 or more, "
                          "separated by commas", param, ctx)
            sizes.append(int(part))
        return sizes


def _number(value: float | None) -> str:
    if value is None:
        return "—"
    if value >= 1000:
        return f"{value:,.0f}"
    if value >= 10:
        return f"{value:.1f}"
    return f"{value:.3g}"


@click.command()
@click.option("--devices", type=_Sizes(), default="200000", show_default=True,
              help="Rows in the synthetic catalog; several sizes (200000,1000000) run one after "
                   "the other and print how each figure grew.")
@click.option("--repeat", type=click.IntRange(min=1, max=1000), default=5, show_default=True,
              help="Timed runs per figure (the median is reported), after one warm-up run.")
@click.option("--tui", "with_tui", is_flag=True,
              help="Also time the terminal UI on the catalog (first screen, one search key).")
@click.option("--db", "server", metavar="URL",
              help="Run on this EMPTY PostgreSQL database instead of SQLite files of its own: "
                   "the bench creates its tables there, empties them before each import and "
                   "drops them at the end. A database holding any table is refused, untouched. "
                   "(The global --db and PARTSDB_DB are never used by the bench.)")
@format_option("table", "json")
def bench(devices: list[int], repeat: int, with_tui: bool, server: str | None,
          fmt: str) -> None:
    """Measure import, substitute ranking, fuzzy find and start-up on a synthetic catalog.

    Builds an invented catalog of DEVICES rows (fixed seed) in a temporary database through the
    normal importer, then times each step as the median of REPEAT runs and compares it with the
    project's targets (set for 200,000 and 1,000,000 devices). Your own database is not touched.
    """
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    from partsdb.perf.bench import run_bench

    with Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.completed:,}"
                  "/{task.total:,}"), TimeElapsedColumn(), console=Console(stderr=True),
                  transient=True) as progress:
        tasks: dict[str, Any] = {}

        def report(step: str, done: int, total: int) -> None:
            if step not in tasks:
                tasks[step] = progress.add_task(step, total=total)
            progress.update(tasks[step], completed=done, total=total)

        extra: Callable[[str], dict[str, float]] | None = None
        if with_tui:
            from tui.timing import measure_tui

            extra = measure_tui
        results = []
        for size in devices:
            try:
                results.append(run_bench(size, repeat, progress=report, extra=extra,
                                         db_url=server))
            except ValueError as err:
                fail(str(err))
            tasks.clear()
    for result in results:
        for note in result.notes:
            if "not measured" in note:
                click.echo(f"warning: {note}", err=True)
    if fmt == "json":
        if len(results) == 1:
            emit_json(results[0].to_json())
        else:
            emit_json({"runs": [r.to_json() for r in results],
                       "growth": growth(results[0], results[-1])})
        return
    for result in results:
        _print_table(result)
    if len(results) > 1:
        _print_growth(results[0], results[-1])


def growth(small: Any, large: Any) -> dict[str, float | None]:
    """How much each figure's time grew from ``small`` to ``large`` (a rate as the time of the
    whole catalog; a share and memory as they are)."""
    from partsdb.perf.bench import METRICS, TUI_METRICS

    grown: dict[str, float | None] = {}
    for name in (*METRICS, *TUI_METRICS):
        a, b = small.metrics.get(name), large.metrics.get(name)
        if a is None or b is None or a == 0 or b == 0:
            grown[name] = None
        elif name.endswith("_per_s"):
            grown[name] = (large.devices / b) / (small.devices / a)
        else:
            grown[name] = b / a
    return grown


def _print_growth(small: Any, large: Any) -> None:
    from rich.console import Console
    from rich.table import Table

    rows = large.devices / small.devices
    table = Table(title=f"growth from {small.devices:,} to {large.devices:,} devices "
                        f"({rows:g}x the rows)", header_style="bold")
    for column in ("Figure", "Growth", "Faster than linear"):
        table.add_column(column, justify="right" if column == "Growth" else "left")
    for name, grown in growth(small, large).items():
        if name.endswith(("_ratio", "_agreement")) or grown is None:
            continue  # a ratio or a share, not a cost
        over = grown > rows * 1.0001
        table.add_row(name + (" (whole import)" if name.endswith("_per_s") else ""),
                      f"{grown:.2f}x", "[red]yes[/]" if over else "no")
    Console().print(table)


def _print_table(result: Any) -> None:
    from rich.console import Console
    from rich.table import Table

    from partsdb.perf.bench import METRICS, TARGETS, TARGETS_BY_SIZE, TUI_METRICS, meets_target

    machine = result.machine
    judged = result.devices in TARGETS_BY_SIZE
    # Other sizes show the 200,000-device targets, not judged.
    targets = TARGETS_BY_SIZE.get(result.devices, TARGETS)
    table = Table(title=f"partsdb bench: {result.devices:,} devices, {machine['cores']} cores, "
                        f"Python {machine['python']}", header_style="bold")
    for column in ("Figure", "Value", "Unit", "Target", "Met"):
        table.add_column(column, justify="right" if column in ("Value", "Target") else "left")
    for name in (*METRICS, *(m for m in TUI_METRICS if m in result.metrics)):
        value = result.metrics.get(name)
        target = targets.get(name)
        # The targets are set for two catalog sizes; other sizes are shown, not judged.
        met = meets_target(name, value, result.devices)
        table.add_row(name, _number(value), _UNITS[name],
                      f"{target[0]} {target[1]:,g}" if target else "",
                      "—" if met is None else ("[green]yes[/]" if met else "[red]no[/]"))
    console = Console()
    console.print(table)
    if not judged:
        sizes = " and ".join(f"{size:,}" for size in TARGETS_BY_SIZE)
        console.print(f"note: the targets are set for {sizes} devices; at "
                      f"{result.devices:,} the figures are shown, not judged", highlight=False)
    for note in result.notes:
        console.print(f"note: {note}", markup=False, highlight=False)
