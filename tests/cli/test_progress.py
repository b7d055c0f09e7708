"""The progress bar of long commands (partsdb.cli.common.busy): on stderr only when it is a
terminal, after the delay, never with --quiet or in JSON mode."""

from __future__ import annotations

import io
import sys
import time

import pytest

from partsdb.cli.common import CliState, busy


class FakeTerminal(io.StringIO):
    def isatty(self) -> bool:
        return True


@pytest.mark.parametrize(("quiet", "json_mode", "tty", "shown"), [
    (False, False, True, True), (True, False, True, False), (False, True, True, False),
    (False, False, False, False),
])
def test_bar_only_on_a_terminal_without_quiet_or_json(monkeypatch: pytest.MonkeyPatch,
                                                      quiet: bool, json_mode: bool, tty: bool,
                                                      shown: bool) -> None:
    err = FakeTerminal() if tty else io.StringIO()
    monkeypatch.setattr(sys, "stderr", err)
    with busy(CliState(quiet=quiet), "importing", json_mode, delay=0.05):
        time.sleep(0.4)
    assert ("importing" in err.getvalue()) is shown


def test_a_quick_command_shows_nothing(monkeypatch: pytest.MonkeyPatch) -> None:
    err = FakeTerminal()
    monkeypatch.setattr(sys, "stderr", err)
    with busy(CliState(), "importing", delay=5):
        pass
    assert err.getvalue() == ""
