"""Every command in the README's ```bash blocks runs as written, so the README cannot drift.

The commands run in order, in one temporary folder, against a temporary database built by the
demo (its invented designations), through the click entry point in this process. The README is
the spec here: each command must exit 0. Narrow, explicit exceptions:

- the two top commands (python3 -m venv ... pip install ...) install the package; CI runs them
  itself (.ci/run), so they are skipped here;
- the server URL ``postgresql+psycopg://shop@server/partsdb`` stands for a fresh database on the
  test server named by PARTSDB_TEST_PG; without one, those lines are skipped (reported);
- ``~/.local/share/partsdb/partsdb.sqlite`` (the default bench file on Linux) stands for the
  demo database;
- the example files of docs/examples/ are copied into the working folder (as in a checkout);
- commands that open the terminal UI (``tui``, ``demo`` without --no-ui) run up to the moment the
  UI would start (the UI itself is tested with Textual's pilot in tests/tui).
"""

from __future__ import annotations

import re
import shlex
import tomllib
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

from partsdb.cli import common, main, ui
from partsdb.services.demo import build_demo

README = Path(__file__).resolve().parents[2] / "README.md"
SERVER = "postgresql+psycopg://shop@server/partsdb"
BENCH_FILE = "~/.local/share/partsdb/partsdb.sqlite"


def fenced_blocks(text: str, language: str) -> list[str]:
    return re.findall(rf"^```{language}\n(.*?)^```", text, flags=re.S | re.M)


def readme_commands() -> list[str]:
    """Every command of the ```bash blocks: continuation lines joined, comments dropped."""
    commands = []
    for block in fenced_blocks(README.read_text(encoding="utf-8"), "bash"):
        for line in block.replace("\\\n", " ").splitlines():
            words = shlex.split(line, comments=True)
            if words:
                commands.append(shlex.join(words))
    return commands


def test_the_readme_has_commands_to_check() -> None:
    commands = readme_commands()
    assert len(commands) > 40
    # These two install the package: CI runs them (.ci/run), so the test skips them below.
    assert commands[0].startswith("python3 -m venv .venv") and "pip install -q -e '.[print]'" in commands[0]
    assert commands[1].startswith("python3 -m venv .venv") and "'.[test]'" in commands[1]
    assert all(c.startswith("partsdb ") for c in commands[2:]), \
        [c for c in commands[2:] if not c.startswith("partsdb ")]


@pytest.fixture
def readme_shop(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A demo database named by $PARTSDB_DB, the working folder a temporary one."""
    db_file = tmp_path / "demo.sqlite"
    build_demo(db_file).dispose()
    monkeypatch.setenv("PARTSDB_DB", str(db_file))
    monkeypatch.chdir(tmp_path)
    # Files the README shows as ```csv NAME blocks exist where its commands read them.
    text = README.read_text(encoding="utf-8")
    for name, body in re.findall(r"^```csv (\S+)\n(.*?)^```", text, flags=re.S | re.M):
        (tmp_path / name).write_text(body, encoding="utf-8")
    import shutil

    shutil.copytree(README.parent / "docs" / "examples", tmp_path / "docs" / "examples")
    opened: list[Any] = []
    for face in (common, ui):
        monkeypatch.setattr(face, "launch_tui", lambda state: opened.append(state.database()))
    return db_file


def test_every_readme_command_runs_as_written(readme_shop: Path, request: pytest.FixtureRequest) -> None:
    server = None
    if any(SERVER in c for c in readme_commands()):
        import os

        if os.environ.get("PARTSDB_TEST_PG"):
            server = request.getfixturevalue("pg_url")
    skipped = []
    for command in readme_commands()[2:]:
        if SERVER in command and server is None:
            skipped.append(command)
            continue
        args = shlex.split(command)[1:]
        args = [a.replace(SERVER, server or SERVER).replace(BENCH_FILE, str(readme_shop))
                for a in args]
        redirect = None
        if ">" in args:  # `command > FILE`: standard output into FILE, as the shell would
            at = args.index(">")
            args, redirect = args[:at], args[at + 1]
        result = CliRunner().invoke(main, args)
        assert result.exit_code == 0, f"{command}\n{result.output}"
        assert result.exception is None or isinstance(result.exception, SystemExit), command
        if redirect is not None:
            assert result.stdout, command
            Path(redirect).write_text(result.stdout, encoding="utf-8")
    if skipped:
        print(f"skipped without PARTSDB_TEST_PG: {len(skipped)} server commands")


def test_the_readme_config_example_is_accepted(readme_shop: Path, tmp_path: Path,
                                               monkeypatch: pytest.MonkeyPatch) -> None:
    (block,) = fenced_blocks(README.read_text(encoding="utf-8"), "toml")
    tomllib.loads(block)  # valid TOML
    config = tmp_path / "config.toml"
    config.write_text(block)
    monkeypatch.setenv("PARTSDB_CONFIG", str(config))
    policy = next(iter(tomllib.loads(block)["policies"]))
    listed = CliRunner().invoke(main, ["policies"])
    assert listed.exit_code == 0 and policy in listed.output, listed.output
    ranked = CliRunner().invoke(main, ["substitute", "OC375", "--policy", policy])
    assert ranked.exit_code == 0, ranked.output
