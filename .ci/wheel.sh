#!/usr/bin/env bash
# CI: build the sdist and wheel, install the wheel as a tool with pipx and with uv tool (the
# README's Install section, with the postgres extra) into throwaway homes, and run the demo
# from each; then check the sdist carries the test suite. Needs .venv (as .ci/run makes it).
set -euo pipefail
cd "$(dirname "$0")/.."
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
.venv/bin/pip install -q build pipx uv
rm -rf dist
.venv/bin/python -m build --outdir dist . >/dev/null 2>&1
wheel=$(ls dist/*.whl)
export PIPX_HOME="$work/pipx" PIPX_BIN_DIR="$work/bin" UV_TOOL_DIR="$work/uv" UV_TOOL_BIN_DIR="$work/uvbin"
.venv/bin/pipx install -q "$wheel[postgres]" >/dev/null
"$work/bin/partsdb" demo --no-ui --db "$work/pipx.sqlite" >"$work/out" && head -1 "$work/out"
"$work/bin/partsdb" --db "$work/pipx.sqlite" substitute OC375 --in-stock --format json >/dev/null
.venv/bin/uv tool install -q "$wheel[postgres]"
"$work/uvbin/partsdb" demo --no-ui --db "$work/uv.sqlite" >"$work/out" && head -1 "$work/out"
"$UV_TOOL_DIR/partsdb-drawers/bin/python" -c 'import psycopg'   # the postgres extra
tar tzf dist/*.tar.gz >"$work/sdist"
grep -q '/tests/conftest.py$' "$work/sdist"
grep -q '/tests/tui/__snapshots__/test_snapshots/.*\.svg$' "$work/sdist"
grep -q '/seed_data/devices.csv$' "$work/sdist"
echo "wheel: installed with pipx and uv tool, demo ran; sdist carries the tests"
