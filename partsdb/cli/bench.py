"""CLI: ``bench``, the performance harness (see :mod:`partsdb.perf.bench` for what each figure means).

Works in a temporary directory of its own; it never opens the database named by ``--db``.
Progress goes to stderr, the result to stdout.
"""

from __future__ import annotations

from typing import Any

import click

from partsdb.cli.common import emit_json, fail, format_option

_UNITS = {"import_rows_per_s": "rows/s", "import_mapped_rows_per_s": "rows/s",
          "rank_ms": "ms", "rank_cold_ms": "ms",
          "rank_floor_ms": "ms", "rank_ratio": "x", "find_ms": "ms", "find_floor_ms": "ms",
          "find_ratio": "x", "cli_help_s": "s", "cli_substitute_s": "s", "peak_rss_mb": "MiB"}


def _number(value: float | None) -> str:
    if value is None:
        return "—"
    if value >= 1000:
        return f"{value:,.0f}"
    if value >= 10:
        return f"{value:.1f}"
    return f"{value:.3g}"


@click.command()
@click.option("--devices", type=click.IntRange(min=100), default=200_000, show_default=True,
              help="Rows in the synthetic catalog.")
@click.option("--repeat", type=click.IntRange(min=1, max=1000), default=5, show_default=True,
              help="Timed runs per figure (the median is reported), after one warm-up run.")
@format_option("table", "json")
def bench(devices: int, repeat: int, fmt: str) -> None:
    """Measure import, substitute ranking, fuzzy find and start-up on a synthetic catalog.

    Builds an invented catalog of DEVICES rows (fixed seed) in a temporary database through the
    normal importer, then times each step as the median of REPEAT runs and compares it with the
    project's targets. Your own database is not touched.
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

        try:
            result = run_bench(devices, repeat, progress=report)
        except ValueError as err:
            fail(str(err))
    for note in result.notes:
        if "not measured" in note:
            click.echo(f"warning: {note}", err=True)
    if fmt == "json":
        emit_json(result.to_json())
        return
    _print_table(result)


def _print_table(result: Any) -> None:
    from rich.console import Console
    from rich.table import Table

    from partsdb.perf.bench import DEFAULT_DEVICES, METRICS, TARGETS, meets_target

    machine = result.machine
    table = Table(title=f"partsdb bench: {result.devices:,} devices, {machine['cores']} cores, "
                        f"Python {machine['python']}", header_style="bold")
    for column in ("Figure", "Value", "Unit", "Target", "Met"):
        table.add_column(column, justify="right" if column in ("Value", "Target") else "left")
    for name in METRICS:
        value = result.metrics.get(name)
        target = TARGETS.get(name)
        # The targets are set for the default catalog size; other sizes are shown, not judged.
        met = meets_target(name, value) if result.devices == DEFAULT_DEVICES else None
        table.add_row(name, _number(value), _UNITS[name],
                      f"{target[0]} {target[1]:,g}" if target else "",
                      "—" if met is None else ("[green]yes[/]" if met else "[red]no[/]"))
    console = Console()
    console.print(table)
    if result.devices != DEFAULT_DEVICES:
        console.print(f"note: the targets are set for {DEFAULT_DEVICES:,} devices; at "
                      f"{result.devices:,} the figures are shown, not judged", highlight=False)
    for note in result.notes:
        console.print(f"note: {note}", markup=False, highlight=False)
