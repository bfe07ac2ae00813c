#!/usr/bin/env bash
# Runs every benchmark of the workspace, one bench target at a time, and prints a Markdown
# table of the criterion figures of this run (the table of docs/performance.md).
#
#   bash tests/bench/criterion.sh [WARMUP_S] [MEASURE_S]     (default 1 s and 3 s)
#
# - criterion benches (benches/*.rs with criterion_main!): `cargo bench -p CRATE --bench NAME
#   -- --warm-up-time W --measurement-time M --noplot` (per bench target, so that no
#   library test harness gets criterion's options);
# - other bench binaries (harness = false with their own main, e.g. sillage-cli's
#   bag_throughput) run with BENCH_ARGS_<name> if set (bag_throughput: `--minutes 10`).
# Figures of this run only (estimates newer than its start) go into out/bench/criterion.md.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
cd "$root"
warm="${1:-1}"
measure="${2:-3}"
out="$root/out/bench"
mkdir -p "$out"
stamp="$out/criterion.start"
touch "$stamp"
target="$(cargo metadata --format-version 1 --no-deps | python3 -c 'import json,sys; print(json.load(sys.stdin)["target_directory"])')"

# "package bench-name path" for every bench target of the workspace.
cargo metadata --format-version 1 --no-deps | python3 -c '
import json, sys
for p in json.load(sys.stdin)["packages"]:
    for t in p["targets"]:
        if "bench" in t["kind"]:
            print(p["name"], t["name"], t["src_path"])
' > "$out/benches.txt"

: > "$out/other_benches.txt"
while read -r pkg name path; do
    echo "== $pkg --bench $name" >&2
    if grep -q "criterion_main" "$path"; then
        cargo bench --locked -q -p "$pkg" --bench "$name" -- --warm-up-time "$warm" --measurement-time "$measure" --noplot 2>&1 \
            | grep -vE "^(Gnuplot|Benchmarking|Warning: Unable)" >&2
    else
        var="BENCH_ARGS_$name"
        default_args=""
        [[ "$name" == bag_throughput ]] && default_args="--minutes 10"
        # shellcheck disable=SC2086
        cargo bench --locked -q -p "$pkg" --bench "$name" -- ${!var:-$default_args} 2>&1 | tee -a "$out/other_benches.txt" >&2
    fi
done < "$out/benches.txt"

python3 - "$target/criterion" "$stamp" "$out/criterion.md" <<'EOF'
import json, os, sys
from pathlib import Path
root, stamp, dest = Path(sys.argv[1]), os.path.getmtime(sys.argv[2]), Path(sys.argv[3])
def fmt(ns):
    for unit, k in (("s", 1e9), ("ms", 1e6), ("µs", 1e3)):
        if ns >= k:
            return f"{ns / k:.3g} {unit}"
    return f"{ns:.3g} ns"
rows = []
for est in root.glob("**/new/estimates.json"):
    if est.stat().st_mtime < stamp:
        continue
    bench = json.loads((est.parent / "benchmark.json").read_text())
    e = json.loads(est.read_text())
    mean, lo, hi = e["mean"]["point_estimate"], e["mean"]["confidence_interval"]["lower_bound"], e["mean"]["confidence_interval"]["upper_bound"]
    thr = bench.get("throughput") or {}
    per = ""
    if "Elements" in thr:
        per = f"{thr['Elements'] / (mean * 1e-9):,.0f} elements/s"
    elif "Bytes" in thr:
        per = f"{thr['Bytes'] / (mean * 1e-9) / 2**20:,.1f} MiB/s"
    rows.append((bench["full_id"], fmt(mean), f"{fmt(lo)} .. {fmt(hi)}", per))
rows.sort()
lines = ["| benchmark | mean | 95 % interval | throughput |", "| --- | --- | --- | --- |"]
lines += [f"| `{a}` | {b} | {c} | {d} |" for a, b, c, d in rows]
dest.write_text("\n".join(lines) + "\n")
print("\n".join(lines))
EOF
echo "(other bench binaries' output: $out/other_benches.txt)" >&2
