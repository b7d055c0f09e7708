#!/usr/bin/env bash
# CI: install the lowest versions pyproject.toml allows for every direct dependency (uv's
# "lowest-direct" resolution; indirect ones as new as those allow) into a second environment,
# .venv-lowest, and run the test suite there. The floors in pyproject.toml are the versions this
# step passes on: raise a floor rather than work around an old release.
# Usage: .ci/lowest.sh [pytest args]   (needs .venv with uv, as .ci/run makes it)
set -euo pipefail
cd "$(dirname "$0")/.."
uv=.venv/bin/uv
[ -x "$uv" ] || .venv/bin/pip install -q uv
python=$(.venv/bin/python -c 'import sys; print(sys.executable)')
pins=$(mktemp)
trap 'rm -f "$pins"' EXIT
"$uv" pip compile -q pyproject.toml --extra test --resolution lowest-direct \
    --python "$python" -o "$pins"
rm -rf .venv-lowest
"$uv" venv -q --python "$python" .venv-lowest
VIRTUAL_ENV=.venv-lowest "$uv" pip install -q -r "$pins"
VIRTUAL_ENV=.venv-lowest "$uv" pip install -q --no-deps -e .
echo "lowest direct versions:" $(grep -E '^(sqlalchemy|alembic|pandas|numpy|scipy|textual|rapidfuzz|quantiphy|platformdirs|click|rich)==' "$pins")
.venv-lowest/bin/python -m pytest -p no:cacheprovider "$@"
