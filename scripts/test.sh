#!/usr/bin/env bash
# The one test command: prepare the pinned scipy reference in a local virtual environment
# (.venv-reference/, made once, reused while requirements.txt is unchanged), then run every test.
# Extra arguments go to `cargo test`, for example: scripts/test.sh --test verify
set -euo pipefail
cd "$(dirname "$0")/.."
venv=.venv-reference
req=tests/scipy_reference/requirements.txt
stamp="$venv/.requirements"
if [ ! -x "$venv/bin/python" ] || ! cmp -s "$req" "$stamp"; then
  echo "scripts/test.sh: preparing $venv with the pinned reference packages ($req)" >&2
  python3 -m venv "$venv"
  "$venv/bin/python" -m pip install --quiet --disable-pip-version-check -r "$req"
  cp "$req" "$stamp"
fi
NADIR_PYTHON="$PWD/$venv/bin/python" exec cargo test --release "$@"
