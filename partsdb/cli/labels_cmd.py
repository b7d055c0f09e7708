"""CLI: ``labels``: printable drawer and bin labels (PDF or SVG) from the stock."""

from __future__ import annotations

import click

from partsdb.cli.common import CliState, emit_json, format_option, pass_state


@click.command("labels")
@click.argument("places", nargs=-1, metavar="[PLACE]...")
@click.option("--output", "-o", required=True, metavar="FILE.pdf|FILE.svg",
              help="File to write; .pdf (any number of sheets) or .svg (one sheet).")
@click.option("--paper", type=click.Choice(["a4", "letter"], case_sensitive=False),
              help="Sheet size (default a4, or [labels] paper in the config file).")
@click.option("--rows", type=click.IntRange(min=1, max=40), help="Labels down a sheet (default 8).")
@click.option("--columns", type=click.IntRange(min=1, max=10),
              help="Labels across a sheet (default 3).")
@click.option("--margin", type=click.FloatRange(min=0, max=50), metavar="MM",
              help="Sheet margin on every side in mm (default 10).")
@click.option("--gap", type=click.FloatRange(min=0, max=50), metavar="MM",
              help="Space between labels in mm (default 2).")
@click.option("--code/--no-code", default=None,
              help="Print the place path as a QR code on each label (default on). A scanner "
                   "types the path as stored, which --at/--from/--to accept as it is.")
@click.option("--force", is_flag=True, help="Replace FILE if it exists.")
@format_option("table", "json")
@pass_state
def labels(state: CliState, places: tuple[str, ...], output: str, paper: str | None,
           rows: int | None, columns: int | None, margin: float | None, gap: float | None,
           code: bool | None, force: bool, fmt: str) -> None:
    """Print labels for drawers and bins: one per place that holds stock, at or below each
    PLACE (every place when none is named).

    Each label shows the place path, the place's label text when it has one, and every device
    kept there with polarity and material, Vceo, Ic max, outline and the lead order drawn as a
    small figure. Layout defaults come from the [labels] table of the config file.

    \b
    partsdb labels --output labels.pdf
    partsdb labels C1 C2/D05 --paper letter --rows 10 --columns 3 --output c1.pdf
    partsdb labels C1/D01 --no-code --output d01.svg
    """
    from partsdb.services import labels as svc

    layout = svc.resolve_layout(paper=paper, rows=rows, columns=columns, margin=margin, gap=gap,
                                code=code)
    svc.output_format(output)
    with state.database().session() as session:
        contents = svc.label_contents(session, places)
    from partsdb.services.files import protected_files

    sheets = svc.print_labels(contents, layout, output, force,
                              protected_files(state.database()))
    summary = svc.label_summary(contents, layout, sheets, output)
    if fmt == "json":
        emit_json(summary)
    else:
        w, h = summary["label_mm"]
        click.echo(f"wrote {summary['labels']} labels on {sheets} {layout.paper} sheet(s) "
                   f"({layout.rows} x {layout.columns}, labels {w} x {h} mm) to {output}")
