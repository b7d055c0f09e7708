"""The docs/ pages cover what the code defines: every device field, config key, exit code and
environment variable (each list derived from the code, not kept by hand here)."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

from partsdb import errors
from partsdb.device import FIELDS
from partsdb.ranking import Weights
from partsdb.services.exchange import STOCK_COLUMNS
from partsdb.services.stock import CONDITIONS

DOCS = Path(__file__).resolve().parents[1] / "docs"
ROOT = DOCS.parent


def table_keys(page: str) -> list[str]:
    """The `key` in the first cell of every Markdown table row of a page."""
    return re.findall(r"^\| `([^`]+)` \|", (DOCS / page).read_text(encoding="utf-8"), flags=re.M)


def test_every_device_field_and_stock_column_is_documented_with_its_unit() -> None:
    text = (DOCS / "csv-columns.md").read_text(encoding="utf-8")
    keys = table_keys("csv-columns.md")
    for spec in FIELDS:
        assert spec.name in keys, spec.name
        row = next(line for line in text.splitlines() if line.startswith(f"| `{spec.name}` |"))
        if spec.unit:
            assert f"| {spec.unit}" in row, (spec.name, spec.unit)
        for choice in spec.choices:
            assert f"`{choice}`" in row, (spec.name, choice)
    for column in STOCK_COLUMNS:
        assert column in keys, column
    for condition in CONDITIONS:
        assert f"`{condition}`" in text


def test_every_config_key_is_documented() -> None:
    keys = table_keys("config.md")
    for field in dataclasses.fields(Weights):
        assert field.name in keys, field.name
    # The keys a policy table takes (derating.policy_from_mapping refuses any other).
    for key in ("voltage", "current", "power", "tj_margin", "tj_cap", "source", "description"):
        assert key in keys, key
    from partsdb.services.config import PROFILE_KEYS

    for key in PROFILE_KEYS:
        assert key in keys, key
    assert "require_job" in keys  # [stock]


def test_every_header_spelling_and_outline_is_documented() -> None:
    from partsdb.columns import KNOWN_COLUMNS, OUTLINE_PTOT_REF, SPELLINGS

    text = (DOCS / "csv-columns.md").read_text(encoding="utf-8")
    for name in KNOWN_COLUMNS:
        row = next(line for line in text.splitlines() if line.startswith(f"| {name} |"))
        for spelling in SPELLINGS.get(name, ()):
            assert f"`{spelling}`" in row, (name, spelling)
    for outline in OUTLINE_PTOT_REF:
        assert re.search(rf"[| ,]{re.escape(outline)}[,| ]", text), outline


def test_every_exit_code_is_documented() -> None:
    text = (DOCS / "exit-codes.md").read_text(encoding="utf-8")
    codes = {v for k, v in vars(errors).items() if k.startswith("EXIT_")}
    assert codes == {0, 1, 2, 3}
    for code in codes:
        assert re.search(rf"^\| {code} \|", text, flags=re.M), code


def test_every_environment_variable_read_by_the_code_is_documented() -> None:
    documented = set(table_keys("environment.md"))
    documented |= {v.strip("` ") for k in table_keys("environment.md") for v in k.split(",")}
    read = set()
    for path in [*(ROOT / "partsdb").rglob("*.py"), *(ROOT / "tui").rglob("*.py")]:
        source = path.read_text(encoding="utf-8")
        read |= set(re.findall(r"environ(?:\.get)?\(\s*\"([A-Z_]+)\"", source))
        read |= set(re.findall(r"^ENV_VAR = \"([A-Z_]+)\"", source, flags=re.M))
    assert {"PARTSDB_DB", "PARTSDB_CONFIG", "PARTSDB_SEED"} <= read
    assert read <= documented, sorted(read - documented)


def test_docs_are_linked_from_the_readme_and_their_links_resolve() -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert "docs/README.md" in readme
    index = (DOCS / "README.md").read_text(encoding="utf-8")
    for page in DOCS.glob("*.md"):
        if page.name != "README.md":
            assert f"]({page.name})" in index, page.name
        for target in re.findall(r"\]\(([^)#]+)\)", page.read_text(encoding="utf-8")):
            if "://" not in target:
                assert (page.parent / target).exists(), (page.name, target)


def test_readme_csv_examples_match_their_files_in_docs_examples() -> None:
    """A ```csv NAME block of the README that also ships as docs/examples/NAME (for the Jobs
    view to open from a checkout) is the same text, so the two cannot drift apart."""
    import re

    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    blocks = dict(re.findall(r"^```csv (\S+)\n(.*?)^```", readme, flags=re.S | re.M))
    shipped = [name for name in blocks if (ROOT / "docs" / "examples" / name).exists()]
    assert "unit-kit.csv" in shipped
    for name in shipped:
        assert (ROOT / "docs" / "examples" / name).read_text(encoding="utf-8") == blocks[name]
