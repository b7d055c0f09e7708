"""Fixtures for the CLI tests: ``run`` invokes ``partsdb`` on the test's own database."""

from __future__ import annotations

import pytest
from click.testing import CliRunner

from partsdb.cli import main

ADD_QK55 = ["device", "add", "QK 55", "--kind", "bjt", "--polarity", "pnp", "--material", "ge",
            "--vceo", "32V", "--vcbo", "40V", "--ic-max", "150mA", "--ptot", "200mW",
            "--ptot-ref", "ambient", "--hfe-min", "40", "--hfe-max", "120", "--ft", "2MHz"]
"""``partsdb device add`` of an invented germanium PNP part."""


@pytest.fixture
def run(db_url: str):  # type: ignore[no-untyped-def]
    runner = CliRunner()

    def invoke(*args: str):  # type: ignore[no-untyped-def]
        return runner.invoke(main, ["--quiet", "--db", db_url, *args], catch_exceptions=False)

    invoke.url = db_url  # type: ignore[attr-defined]
    return invoke
