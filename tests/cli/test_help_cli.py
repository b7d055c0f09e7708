"""Every command has help text and is shown in the README."""

from __future__ import annotations

from pathlib import Path

from partsdb.cli import main


def test_every_command_has_help_text() -> None:
    # A command without help is a defect (and must be documented in the README).
    import click

    readme = (Path(__file__).parents[2] / "README.md").read_text(encoding="utf-8")

    def walk(cmd: click.Command, path: list[str]):  # type: ignore[no-untyped-def]
        yield path, cmd
        if isinstance(cmd, click.Group):
            for name, sub in cmd.commands.items():
                yield from walk(sub, [*path, name])

    for path, cmd in walk(main, []):
        if not path:
            continue
        assert (cmd.help or "").strip(), f"partsdb {' '.join(path)} has no help text"
        assert f"partsdb {path[0]}" in readme, f"partsdb {path[0]} is not in the README"
