#!/usr/bin/env bash
# Check that every fixture made by a reference script is reproducible and committed:
# regenerate each one into a temp dir, compare it with the file in the work tree (JSON values
# exactly except floats, within 1e-9 relative / 1e-12 absolute: numpy/scipy differ in the last bits between
# CPUs; see same_fixture.py), then fail if tests/fixtures differs from the last commit (git diff) or holds untracked
# files. BLESS=1 regenerates the fixtures in place instead (review with git diff, then commit).
#
#   bash tests/refs/check_fixtures.sh          # check (CI)
#   BLESS=1 bash tests/refs/check_fixtures.sh  # rewrite the fixtures
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
cd "$root"

# One entry a line: "<script> <output>", paths relative to the repo root. Each script takes
# its output path as its only (optional) argument.
FIXTURES=(
    "tests/refs/make_cdr_fixtures.py tests/fixtures/cdr/cdr_cases.json"
    "tests/refs/world_refs.py nodes/world/tests/fixtures/world_refs.json"
    "tests/refs/world_field_refs.py nodes/world/tests/fixtures/world_field_refs.json"
    "tests/refs/plume_filters.py tests/fixtures/plume/plume_filters.json"
    "tests/refs/bag_make_fixtures.py tests/fixtures/bags/expected.jsonl"
    "tests/refs/bearing_xcorr.py tests/fixtures/bearing/xcorr_cases.json"
    "tests/refs/bearing_planewave.py tests/fixtures/bearing/planewave_cases.json"
    "tests/refs/wilson_ci.py tests/fixtures/stats/wilson_cases.json"
    "tests/refs/mapper_refs.py tests/fixtures/mapper/mapper_refs.json"
)

python="$(bash "$here/venv.sh")"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
failed=0

for entry in "${FIXTURES[@]}"; do
    read -r script out <<<"$entry"
    if [[ "${BLESS:-0}" == 1 ]]; then
        "$python" "$script" "$out"
        continue
    fi
    fresh="$tmp/$out"
    mkdir -p "$(dirname "$fresh")"
    if ! "$python" "$script" "$fresh"; then
        echo "check_fixtures: FAIL: $script exited with an error" >&2
        failed=1
    elif [[ ! -f "$out" ]]; then
        echo "check_fixtures: FAIL: $out is missing (run BLESS=1 $0 and commit it)" >&2
        failed=1
    elif ! "$python" "$here/same_fixture.py" "$out" "$fresh"; then
        echo "check_fixtures: FAIL: $script makes a $out that differs from the one in the tree" >&2
        failed=1
    fi
done

if [[ "${BLESS:-0}" == 1 ]]; then
    git --no-pager diff --stat -- tests/fixtures >&2 || true
    echo "check_fixtures: fixtures rewritten; review and commit them" >&2
    exit 0
fi

if git rev-parse --is-inside-work-tree >/dev/null 2>&1; then
    base=()
    git rev-parse --verify --quiet HEAD >/dev/null && base=(HEAD)
    if ! git --no-pager diff --exit-code --stat "${base[@]}" -- tests/fixtures >&2; then
        echo "check_fixtures: FAIL: tests/fixtures differs from the last commit (shown above)" >&2
        failed=1
    fi
    untracked="$(git ls-files --others --exclude-standard -- tests/fixtures)"
    if [[ -n "$untracked" ]]; then
        echo "check_fixtures: FAIL: untracked files in tests/fixtures:" >&2
        echo "$untracked" >&2
        failed=1
    fi
else
    echo "check_fixtures: FAIL: $root is not a git work tree, cannot compare with the commit" >&2
    failed=1
fi

if [[ "$failed" != 0 ]]; then
    exit 1
fi
echo "check_fixtures: ${#FIXTURES[@]} fixture file(s) regenerated and matching, all committed" >&2
