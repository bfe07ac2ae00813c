#!/usr/bin/env bash
# Wire test of the DDS executor (nodes/dds, `sillage_dds`) against an independent DDS
# implementation: Cyclone DDS from PyPI (`cyclonedds`, pinned in requirements.txt) plays the
# scene of tests/refs/dds_wire_peer.py into the running stack and checks what comes back,
# including an e-stop publisher of each QoS combination (reliable or best effort, volatile or
# transient local) and the time from its e-stop to a zero twist.
# Called by .ci/run (tests/refs/ci_*.sh); needs root for `ip netns`.
#
# Isolation: both peers run in a network namespace made here (loopback only, multicast on,
# 224.0.0.0/4 routed to lo), on a domain id of this run; no packet leaves the namespace,
# which is deleted on exit (trap). Without `ip netns` the test FAILS: it never passes by
# skipping. Every wait is bounded; the scene itself is bounded by its --budget.
#
#   bash tests/refs/ci_dds_wire.sh                      # build, then run
#   SILLAGE_DDS_BIN=target/debug/sillage_dds bash ...   # run a binary built before
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
cd "$root"
t_start=$SECONDS
ns="sillage-wire-$$"
domain=$(( 20 + $$ % 200 ))
namespace=/robot7
work="$(mktemp -d)"
pid=""
passed=0
failed=0

say() { printf 'ci_dds_wire: %s\n' "$*" >&2; }
check() { # check NAME CONDITION-EXIT-STATUS DETAIL
    if [[ "$2" == 0 ]]; then passed=$((passed + 1)); say "PASS $1: $3"; else failed=$((failed + 1)); say "FAIL $1: $3"; fi
}

cleanup() {
    if [[ -n "$pid" ]] && kill -0 "$pid" 2>/dev/null; then
        kill -KILL "$pid" 2>/dev/null || true
    fi
    ip netns del "$ns" 2>/dev/null || true
    rm -rf "$work"
}
trap cleanup EXIT

# --- 1. the network namespace (fail loudly if it cannot be made) --------------------------
if ! ip netns add "$ns"; then
    say "FAIL: cannot create the network namespace '$ns' (ip netns needs root or CAP_SYS_ADMIN)."
    say "FAIL: the DDS wire test cannot run isolated here, so it does not run at all."
    exit 1
fi
ip netns exec "$ns" ip link set lo up
ip netns exec "$ns" ip link set lo multicast on
ip netns exec "$ns" ip route add 224.0.0.0/4 dev lo
links="$(ip netns exec "$ns" ls /sys/class/net | tr '\n' ' ')"
if [[ "$links" != "lo " ]]; then
    say "FAIL: namespace $ns has interfaces other than lo: $links"
    exit 1
fi
say "namespace $ns (interfaces: $links), DDS domain $domain"

# --- 2. build and tools (SILLAGE_DDS_BIN: use that binary instead of building) -------------
t=$SECONDS
if [[ -n "${SILLAGE_DDS_BIN:-}" ]]; then
    bin="$SILLAGE_DDS_BIN"
else
    cargo build --locked -p sillage-dds --features dds --bin sillage_dds
    target="$(cargo metadata --format-version 1 --no-deps | python3 -c 'import json, sys; print(json.load(sys.stdin)["target_directory"])')"
    bin="$target/debug/sillage_dds"
fi
build_s=$((SECONDS - t))
t=$SECONDS
python="$(bash "$here/venv.sh")"
venv_s=$((SECONDS - t))

# --- 3. the parameter file: every node's defaults, simulated time, tighter caps, and a
# shorter plume window (the arbiter needs finite plume features, which take half a window of
# data: 2 s instead of 10 s) ------------------------------------------------------------------
params="$work/params.yaml"
{
    cat config/sillage.yaml
    cat <<EOF

/**:
  ros__parameters:
    use_sim_time: true
$namespace/arbiter:
  ros__parameters:
    guard:
      max_linear: 0.12
      max_angular: 0.4
$namespace/plume_estimator:
  ros__parameters:
    features:
      window: 4.0
      rate_cv_window: 2.0
    bouts:
      learn_time: 2.0
EOF
} > "$params"

# --- 4. sillage_dds in the namespace ------------------------------------------------------
ip netns exec "$ns" env -u ROS_DOMAIN_ID "$bin" --params-file "$params" --namespace "$namespace" \
    -r odom:=odom_filtered --domain-id "$domain" --max-input-rate 200 > "$work/sillage.log" 2>&1 &
pid=$!
up=1
for _ in $(seq 1 100); do
    if grep -q "running .* on DDS domain $domain" "$work/sillage.log"; then up=0; break; fi
    if ! kill -0 "$pid" 2>/dev/null; then break; fi
    sleep 0.1
done
check "sillage_dds starts in the namespace" "$up" "$(grep -m1 'running' "$work/sillage.log" || tail -n 5 "$work/sillage.log")"
if [[ "$up" != 0 ]]; then
    cat "$work/sillage.log" >&2
    exit 1
fi

# --- 5. the scene -------------------------------------------------------------------------
t=$SECONDS
set +e
ip netns exec "$ns" timeout 240 "$python" "$here/dds_wire_peer.py" --domain "$domain" --namespace "$namespace" \
    --odom-topic odom_filtered --params "$params" --budget 150 --report "$work/report.json"
peer_rc=$?
set -e
scene_s=$((SECONDS - t))
check "the peer's checks" "$peer_rc" "dds_wire_peer.py exited with $peer_rc"
if [[ -f "$work/report.json" ]]; then
    say "e-stop to zero twist [ms] per publisher QoS: $(python3 -c 'import json, sys; print(json.load(open(sys.argv[1])).get("e_stop_latency_ms"))' "$work/report.json")"
fi

# --- 6. sillage survived, stops cleanly on SIGTERM, and logged every kind of bad input ----
alive=1
kill -0 "$pid" 2>/dev/null && alive=0
check "sillage_dds survived the scene" "$alive" "pid $pid"
kill -TERM "$pid" 2>/dev/null || true
rc=""
for _ in $(seq 1 100); do
    if ! kill -0 "$pid" 2>/dev/null; then break; fi
    sleep 0.1
done
if kill -0 "$pid" 2>/dev/null; then
    rc="still running 10 s after SIGTERM"
else
    set +e
    wait "$pid"
    rc=$?
    set -e
fi
pid=""
check "sillage_dds exits 0 on SIGTERM" "$([[ "$rc" == 0 ]] && echo 0 || echo 1)" "exit status $rc"
log="$work/sillage.log"
for pattern in "dropped a malformed sample" "announces type std_msgs::msg::dds_::String_" "flood on $namespace/chem" \
    "stopped (zero velocity published on velocity outputs)" "stopped: samples="; do
    n="$(grep -c -F "$pattern" "$log" || true)"
    check "log: '$pattern'" "$([[ "$n" -ge 1 ]] && echo 0 || echo 1)" "$n line(s)"
done
say "sillage's summary: $(grep -F 'stopped: samples=' "$log" | tail -n 1)"
lines="$(wc -l < "$log")"
check "the log stays bounded under the flood" "$([[ "$lines" -lt 2000 ]] && echo 0 || echo 1)" "$lines lines"
if [[ "$failed" != 0 ]]; then
    say "sillage log (last 60 lines):"
    tail -n 60 "$log" >&2
fi

say "timings: build ${build_s} s, venv ${venv_s} s, scene ${scene_s} s, total $((SECONDS - t_start)) s"
echo "ci_dds_wire: $passed passed, $failed failed"
[[ "$failed" == 0 ]]
