#!/usr/bin/env bash
# Create (if missing) the Python venv for the reference scripts, install the pinned
# requirements, and print the path of the venv's python on stdout (nothing else goes there).
#
#   PY=$(bash tests/refs/venv.sh) && "$PY" tests/refs/make_cdr_fixtures.py
#
# Environment: SILLAGE_VENV  venv folder (default: <repo root>/.venv)
#              SILLAGE_PYTHON interpreter that creates the venv (default: python3, >= 3.11)
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
venv="${SILLAGE_VENV:-$root/.venv}"
base_python="${SILLAGE_PYTHON:-python3}"
requirements="$here/requirements.txt"
stamp="$venv/.sillage-requirements.sha256"

if [[ ! -x "$venv/bin/python" ]]; then
    if ! "$base_python" -c 'import sys; sys.exit(sys.version_info < (3, 11))' 2>/dev/null; then
        echo "venv.sh: $base_python is missing or older than Python 3.11 (set SILLAGE_PYTHON)" >&2
        exit 1
    fi
    echo "venv.sh: creating $venv" >&2
    "$base_python" -m venv "$venv" >&2
fi

# Reinstall only when requirements.txt changed since the last successful install.
want="$(sha256sum "$requirements" | cut -d' ' -f1)"
if [[ ! -f "$stamp" || "$(cat "$stamp")" != "$want" ]]; then
    echo "venv.sh: installing $requirements" >&2
    "$venv/bin/python" -m pip install --quiet --disable-pip-version-check \
        -r "$requirements" >&2
    echo "$want" > "$stamp"
fi

echo "$venv/bin/python"
