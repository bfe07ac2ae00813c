#!/usr/bin/env bash
# Soak run: 24 hours of stream time through the default stack (tests/bench/soak.rs), RSS
# (VmRSS of /proc/self/status) printed every 2 hours of stream time; exit status 1 when the RSS
# grew by more than 16 MiB after the first interval. Not run in CI.
#
#   bash tests/bench/soak.sh [HOURS] [--bag]     (--bag: also write the output bag, as replay does)
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
cd "$root"
hours="${1:-24}"
extra=()
if [[ "${2:-}" == "--bag" ]]; then
    mkdir -p out/bench
    extra=(--bag "$root/out/bench/soak_bag")
fi
cargo build --release --locked -q -p sillage-tests --example soak
target="$(cargo metadata --format-version 1 --no-deps | python3 -c 'import json,sys; print(json.load(sys.stdin)["target_directory"])')"
"$target/release/examples/soak" --hours "$hours" --every 2 "${extra[@]}"
