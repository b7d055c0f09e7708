"""`partsdb import` / `partsdb export`: a bad line is named and refused, a good file round-trips."""

from __future__ import annotations

from pathlib import Path


def test_import_export_commands(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    src = tmp_path / "d.csv"
    src.write_text("designation,kind,polarity,material,vceo\nQK1,bjt,npn,si,40V\nQK2,bjt,npn,si,fast\n")
    bad = run("import", "devices", str(src))
    assert bad.exit_code == 2 and "line 3" in bad.output
    src.write_text("designation,kind,polarity,material,vceo\nQK1,bjt,npn,si,40V\n")
    assert run("import", "devices", str(src)).exit_code == 0
    out = tmp_path / "out.csv"
    assert run("export", "devices", str(out)).exit_code == 0
    assert "QK1" in out.read_text()
