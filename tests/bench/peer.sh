#!/usr/bin/env bash
# sillage replay against a Python peer on the same one-hour bag (see tests/bench/README.md).
#
#   bash tests/bench/peer.sh [PAIRS]        (default 3 pairs; env: BAG_SECONDS=3600, OUT=out/bench)
#
# 1. builds `sillage` and the bag generator in release;
# 2. writes the bag: 2 MOX channels at 100 Hz, wind 10 Hz, odometry 50 Hz (tests/bench/synth.rs);
# 3. makes the pinned Python venv (tests/refs/venv.sh: rosbags, numpy, scipy);
# 4. runs, alternately, the Python pipeline (tests/bench/peer_pipeline.py) and `sillage replay`
#    (output bag + summary + plots, as a user runs it), then `sillage replay --no-plots`, then
#    `sillage replay --no-plots --no-bag` (summary only), PAIRS times, timing each whole command
#    (wall clock and CPU time, process start to exit);
# 5. prints every time, the medians, the ratio Python / sillage and both real-time factors.
# Targets: sillage at least 50x faster than the Python pipeline and at least 20000x real time.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
cd "$root"
pairs="${1:-3}"
seconds="${BAG_SECONDS:-3600}"
out="${OUT:-$root/out/bench}"
bag="$out/hour_bag"
mkdir -p "$out"

echo "== building (release)" >&2
cargo build --release --locked -q -p sillage-cli --bin sillage
cargo build --release --locked -q -p sillage-tests --example bench_bag
target="$(cargo metadata --format-version 1 --no-deps | python3 -c 'import json,sys; print(json.load(sys.stdin)["target_directory"])')"
sillage="$target/release/sillage"

if [[ ! -f "$bag/metadata.yaml" || "$(cat "$out/hour_bag.seconds" 2>/dev/null)" != "$seconds" ]]; then
    echo "== writing the bag ($seconds s)" >&2
    "$target/release/examples/bench_bag" "$bag" "$seconds" 1
    echo "$seconds" > "$out/hour_bag.seconds"
fi
PY=$(bash tests/refs/venv.sh)

timed() { python3 tests/bench/timed.py "$out" "$@"; }
: > "$out/times"
for i in $(seq 1 "$pairs"); do
    echo "== pair $i of $pairs" >&2
    timed python "$PY" tests/bench/peer_pipeline.py "$bag"
    timed sillage "$sillage" replay "$bag" --out "$out/replay" --quiet
    timed sillage_no_plots "$sillage" replay "$bag" --out "$out/replay_no_plots" --quiet --no-plots
    timed sillage_no_bag "$sillage" replay "$bag" --out "$out/replay_no_bag" --quiet --no-plots --no-bag
    grep -h "python peer timing" "$out/python.stderr" >&2 || true
done
echo "== results" >&2
head -n 1 "$out/python.stdout"
grep -E "^(bag time|  /odor_events|  /plume_features|  /cmd_vel) " "$out/sillage.stdout" || sed -n 1,12p "$out/sillage.stdout"
python3 - "$out/times" "$seconds" <<'EOF'
import statistics, sys
wall, cpu = {}, {}
for line in open(sys.argv[1]):
    name, w, c = line.split()
    wall.setdefault(name, []).append(float(w))
    cpu.setdefault(name, []).append(float(c))
bag_s = float(sys.argv[2])
med = statistics.median
for name in wall:
    print(f"{name:>17}: wall " + ", ".join(f"{t:.2f}" for t in wall[name]) + f" s (median {med(wall[name]):.2f} s, "
          f"real-time factor {bag_s / med(wall[name]):,.0f}); cpu " + ", ".join(f"{t:.2f}" for t in cpu[name])
          + f" s (median {med(cpu[name]):.2f} s, real-time factor {bag_s / med(cpu[name]):,.0f})")
for name in ("sillage", "sillage_no_plots", "sillage_no_bag"):
    for kind, d in (("wall", wall), ("cpu", cpu)):
        r = [p / s for p, s in zip(d["python"], d[name])]
        print(f"ratio python / {name} ({kind}): per pair " + ", ".join(f"{x:.1f}" for x in r) + f"; median {med(r):.1f}x")
for kind, d in (("wall", wall), ("cpu", cpu)):
    sil = med(d["sillage"])
    ok_ratio = med(d["python"]) / sil >= 50
    ok_rtf = bag_s / sil >= 20000
    print(f"targets ({kind}, default replay): >= 50x the Python pipeline: {'met' if ok_ratio else 'MISSED'} "
          f"({med(d['python']) / sil:.1f}x); >= 20000x real time: {'met' if ok_rtf else 'MISSED'} ({bag_s / sil:,.0f}x)")
print("(cpu = user + sys of the process and its threads; on a loaded machine wall > cpu)")
EOF
