#!/usr/bin/env bash
# Runs every fuzz target for a fixed number of executions (see tests/fuzz/README.md).
#
#   bash tests/fuzz/run.sh [RUNS] [TARGET...]     (default 20000 executions, every target)
#
# Seeds come from the repository (fixture bags, parameter files, scenarios, CDR cases) and are
# copied into corpus/<target>/ (git-ignored; libFuzzer adds what it finds there).
# Engine, in order of preference:
#   1. libFuzzer through cargo-fuzz (installed from crates.io if missing) on a nightly toolchain;
#   2. the same on the stable toolchain with RUSTC_BOOTSTRAP=1 (cargo-fuzz's -Z flags);
#   3. the coverage-free mutation driver examples/drive.rs (FUZZ_ENGINE=driver forces it).
# FUZZ_FLAGS adds libFuzzer options, e.g. FUZZ_FLAGS=-malloc_limit_mb=8192 to get past a known
# out-of-memory finding.
# Prints one line per target: executions, time, crashes; exit status 1 if any target crashed.
# Each target's log is kept in artifacts/<target>/run.log; the build comes before the timings
# (libFuzzer's own build step inside `cargo fuzz run` is then a no-op).
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
cd "$here"
runs="${1:-20000}"
shift || true
all=(cdr_decode mcap_reader sqlite_reader params_text params_values scenario_text)
targets=("$@")
[[ ${#targets[@]} -gt 0 ]] || targets=("${all[@]}")
engine="${FUZZ_ENGINE:-}"

seed() { # seed TARGET: fill corpus/TARGET from the repository's files
    local t="$1" d="corpus/$1"
    mkdir -p "$d"
    case "$t" in
        mcap_reader)
            cp "$root"/tests/fixtures/bags/mcap_ros2.mcap "$root"/tests/fixtures/bags/rosbags_mcap/*.mcap "$d/" ;;
        sqlite_reader)
            cp "$root"/tests/fixtures/bags/rosbags_sqlite3/*.db3 "$d/" ;;
        params_text)
            for f in "$root"/config/*.yaml; do cp "$f" "$d/params-$(basename "$f")"; done ;;
        scenario_text)
            for f in "$root"/config/scenarios/*.yaml; do cp "$f" "$d/scenario-$(basename "$f")"; done ;;
        params_values)
            # kind byte, key index (u16 LE), YAML value
            local i=0
            for v in 1.0 0 -1 0.001 1e9 true '"x"' '[1.0, 2.0, 3.0]' .nan; do
                for k in 0 1 2 3; do printf "\\x0$k\\x0$((i % 8))\\x00%s" "$v" > "$d/seed-$k-$i"; done
                i=$((i + 1))
            done ;;
        cdr_decode)
            # Each CDR fixture case, prefixed with the index of its type in the vocabulary
            # (the order of sillage_core::any::DEFINITIONS, read from any.rs).
            python3 - "$root" "$d" <<'EOF'
import json, re, sys
from pathlib import Path
root, out = Path(sys.argv[1]), Path(sys.argv[2])
src = (root / "nodes/core/src/any.rs").read_text()
order = re.findall(r"^\s+(\w+),$", src.split("vocabulary!(")[-1].split(");")[0], re.M)
order += re.findall(r"\(<(\w+) as RosMessage>::TYPE_NAME, <\w+ as RosMessage>::DEFINITION\)", src)
for i, case in enumerate(json.loads((root / "tests/fixtures/cdr/cdr_cases.json").read_text())):
    name = case["type"].rsplit("/", 1)[-1]
    if name in order:
        (out / f"case-{i}").write_bytes(bytes([order.index(name)]) + bytes.fromhex(case["cdr_hex"]))
EOF
            ;;
    esac
}

pick_engine() {
    [[ -n "$engine" ]] && return
    if ! command -v cargo-fuzz >/dev/null 2>&1; then
        echo "run.sh: installing cargo-fuzz from crates.io" >&2
        cargo install --locked cargo-fuzz >&2 || { engine=driver; return; }
    fi
    if cargo +nightly --version >/dev/null 2>&1 && cargo +nightly fuzz build -O >&2; then
        engine=nightly
    elif RUSTC_BOOTSTRAP=1 cargo fuzz build -O >&2; then
        engine=bootstrap
    else
        engine=driver
    fi
}

pick_engine
echo "run.sh: engine $engine, $runs executions per target" >&2
status=0
summary=()
for t in "${targets[@]}"; do
    seed "$t"
    mkdir -p "artifacts/$t"
    log="artifacts/$t/run.log"
    start=$(date +%s.%N)
    case "$engine" in
        nightly | bootstrap)
            pre=(cargo +nightly fuzz)
            [[ "$engine" == bootstrap ]] && pre=(env RUSTC_BOOTSTRAP=1 cargo fuzz)
            set +e
            "${pre[@]}" run -O "$t" "corpus/$t" -- -runs="$runs" -rss_limit_mb=2048 -timeout=20 -max_len=1048576 -print_final_stats=1 ${FUZZ_FLAGS:-} > "$log" 2>&1
            rc=$?
            set -e
            done_runs=$(grep -oE "^Done [0-9]+ runs" "$log" | grep -oE "[0-9]+" || true)
            execs=$(grep -oE "stat::number_of_executed_units: *[0-9]+" "$log" | grep -oE "[0-9]+$" || true)
            execs="${done_runs:-${execs:-?}}"
            crashes=0
            if [[ $rc -ne 0 ]]; then
                crashes=1
                echo "---- $t: stopped by a finding (exit $rc):" >&2
                grep -E "panicked|ERROR|SUMMARY|Test unit written|artifact" "$log" | head -20 >&2
            fi ;;
        driver)
            cargo build -q --release --example drive
            set +e
            "$here/target/release/examples/drive" "$t" "$runs" "corpus/$t" > "$log" 2>&1
            rc=$?
            set -e
            execs=$(grep -oE "$t: [0-9]+ executions" "$log" | grep -oE "[0-9]+" | head -1 || true)
            crashes=$(grep -oE "[0-9]+ crashing inputs" "$log" | grep -oE "^[0-9]+" || echo "?")
            grep "crash at" "$log" >&2 || true ;;
    esac
    secs=$(python3 -c "print(f'{$(date +%s.%N) - $start:.1f}')")
    summary+=("$(printf '%-14s %-9s %10s executions %8s s  crashes: %s' "$t" "$engine" "${execs:-?}" "$secs" "$crashes")")
    [[ "$crashes" == 0 ]] || status=1
done
printf '%s\n' "${summary[@]}"
exit "$status"
