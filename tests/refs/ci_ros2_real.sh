#!/usr/bin/env bash
# The node binaries on a real ROS 2 (Jazzy, built from source, the bundled minimal tree): install
# what it needs, build sillage_msgs with colcon and the `ros2` feature for real (every node
# binary and sillage_world link), then run the ROS 2 probe (nodes/ros2/examples/ros2_probe)
# against the binaries started as robot.launch.xml / sim.launch.xml start them, inside a
# network namespace of its own. Called by .ci/run (tests/refs/ci_*.sh); needs root.
#
# Where the bundled ROS 2 is: $SILLAGE_ROS2_SHARED, else <project>/../shared/ros2 (CI clones
# the project beside shared/). Missing, it FAILS: it never passes by skipping.
#
#   bash tests/refs/ci_ros2_real.sh
#   SILLAGE_ROS2_SCENARIOS="replay live" bash tests/refs/ci_ros2_real.sh   # a subset
#
# Install locations (idempotent, reused when unchanged): /opt/ros2-min (the prefix the tree was
# built for), the colcon venv $SILLAGE_ROS2_VENV (default /opt/ros2-venv); colcon's build,
# install and log folders under <cargo target dir>/ros2-real. Cargo builds into the usual
# target folder: the `ros2` feature gets artifacts of its own there (other features, other
# hashes), and shares the dependencies `cargo test --workspace` built before it.
set -eo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
cd "$root"
t_start=$SECONDS
timings=()
step() { printf '\nci_ros2_real: === %s (t=%ds)\n' "$1" "$((SECONDS - t_start))" >&2; t_step=$SECONDS; }
done_step() { timings+=("$1 $((SECONDS - t_step)) s"); }
say() { printf 'ci_ros2_real: %s\n' "$*" >&2; }
fail() { say "FAIL: $*"; exit 1; }

shared="${SILLAGE_ROS2_SHARED:-$root/../shared/ros2}"
tarball="$shared/ros2-jazzy-min-install.tar.zst"
[[ -f "$tarball" ]] || fail "the bundled ROS 2 is missing: no $tarball (set SILLAGE_ROS2_SHARED to the folder that holds it)"
[[ "$(id -u)" == 0 ]] || fail "needs root (apt-get, /opt, ip netns)"
prefix=/opt/ros2-min
venv="${SILLAGE_ROS2_VENV:-/opt/ros2-venv}"
target="${CARGO_TARGET_DIR:-$root/target}"
out="$target/ros2-real"
scenarios="${SILLAGE_ROS2_SCENARIOS:-replay live interop sim}"
mkdir -p "$out"

# --- 1. system packages (the bundled tree's README: build tools, libclang for r2r's bindings,
# and the run-time libraries of rcl) -------------------------------------------------------
step "system packages"
pkgs=(cmake g++ clang libclang-dev libspdlog-dev libyaml-dev libssl-dev iproute2 zstd)
missing=()
for p in "${pkgs[@]}"; do dpkg -s "$p" >/dev/null 2>&1 || missing+=("$p"); done
if [[ ${#missing[@]} -gt 0 ]]; then
    say "installing ${missing[*]}"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq || fail "apt-get update"
    apt-get install -y -qq "${missing[@]}" >/dev/null || fail "apt-get install ${missing[*]}"
fi
done_step "packages"

# --- 2. the install tree, unpacked once per tarball ---------------------------------------
step "unpack $tarball to $prefix"
want="$(sha256sum "$tarball" | cut -d' ' -f1)"
if [[ ! -f "$prefix/.sillage-unpacked" || "$(cat "$prefix/.sillage-unpacked")" != "$want" ]]; then
    rm -rf "$prefix"
    tar --zstd -xf "$tarball" -C /opt || fail "unpacking $tarball"
    [[ -f "$prefix/setup.bash" ]] || fail "$tarball did not unpack to $prefix"
    echo "$want" > "$prefix/.sillage-unpacked"
fi
done_step "unpack"

# --- 3. the colcon venv (pinned: tests/refs/ros2_colcon_requirements.txt) -------------------
step "colcon venv $venv"
req="$here/ros2_colcon_requirements.txt"
want="$(sha256sum "$req" | cut -d' ' -f1)"
if [[ ! -x "$venv/bin/colcon" || ! -f "$venv/.sillage-requirements" || "$(cat "$venv/.sillage-requirements")" != "$want" ]]; then
    python3 -m venv "$venv" || fail "python3 -m venv $venv"
    "$venv/bin/pip" install --quiet --disable-pip-version-check -r "$req" || fail "pip install -r $req"
    echo "$want" > "$venv/.sillage-requirements"
fi
done_step "venv"

# --- 4. the reference: `sillage replay` of the demo bag (no ROS needed) ---------------------
step "sillage replay of the demo bag (the in-process reference)"
cargo build --locked -p sillage-cli --bin sillage
cli="$target/debug/sillage"
# The interop scenario's other two DDS participants: sillage_dds and a Cyclone DDS Python peer.
cargo build --locked -p sillage-dds --features dds --bin sillage_dds
python="$(bash "$here/venv.sh")"
work="$(mktemp -d)"
ns="sillage-ros2-$$"
cleanup() {
    ip netns pids "$ns" 2>/dev/null | xargs -r kill -KILL 2>/dev/null || true
    ip netns del "$ns" 2>/dev/null || true
    rm -rf "$work"
}
trap cleanup EXIT
# The parameter file robot.launch.xml defaults to; simulated time comes from the launch
# argument use_sim_time:=true, as on a robot replaying a bag.
params="$root/config/sillage.yaml"
"$cli" replay tests/fixtures/demo/demo_bag --params "$params" --out "$work/reference" --no-plots --quiet > "$work/reference.txt"
done_step "reference"

# --- 5. ROS 2 environment (setup.bash does not run under set -u) ---------------------------
# shellcheck disable=SC1091
source "$venv/bin/activate"
# shellcheck disable=SC1091
source "$prefix/setup.bash"
export RMW_IMPLEMENTATION=rmw_cyclonedds_cpp
set -u
[[ "${ROS_DISTRO:-}" == jazzy ]] || fail "sourcing $prefix/setup.bash gave ROS_DISTRO='${ROS_DISTRO:-}', not jazzy"

step "colcon build msgs/ (sillage_msgs)"
(
    cd "$out"
    colcon --log-base "$out/colcon-log" build --base-paths "$root/msgs" --build-base "$out/colcon-build" \
        --install-base "$out/colcon-install" --merge-install \
        --cmake-args -DBUILD_TESTING=OFF -DPython3_EXECUTABLE="$venv/bin/python3" >&2
) || fail "colcon build of msgs/"
set +u
# shellcheck disable=SC1091
source "$out/colcon-install/setup.bash"
set -u
done_step "colcon"

# --- 6. the ros2 feature for real ------------------------------------------------------------
step "cargo build -p sillage-ros2 --features ros2 --bins (and the probe)"
# The message packages r2r generates bindings for (colcon/CMakeLists.txt's list, and std_srvs).
export IDL_PACKAGE_FILTER='sillage_msgs;std_msgs;builtin_interfaces;geometry_msgs;sensor_msgs;nav_msgs;diagnostic_msgs;rosgraph_msgs;rcl_interfaces;std_srvs'
cargo build --locked -p sillage-ros2 --features ros2 --bins
cargo build --locked -p sillage-ros2 --features ros2,probe --example ros2_probe
bin_dir="$target/debug"
probe="$bin_dir/examples/ros2_probe"
for b in $(sed -n 's/^name = "\(sillage_[a-z_]*\)"$/\1/p' nodes/ros2/Cargo.toml); do
    [[ -x "$bin_dir/$b" ]] || fail "node binary $b did not link"
done
done_step "cargo"

# --- 7. the network namespace: loopback only, multicast on ---------------------------------
step "network namespace $ns"
ip netns add "$ns" || fail "cannot create the network namespace '$ns' (ip netns needs root)"
ip netns exec "$ns" ip link set lo up
ip netns exec "$ns" ip link set lo multicast on
ip netns exec "$ns" ip route add 224.0.0.0/4 dev lo
links="$(ip netns exec "$ns" ls /sys/class/net | tr '\n' ' ')"
[[ "$links" == "lo " ]] || fail "namespace $ns has interfaces other than lo: $links"
done_step "netns"

# --- 8. the scenarios ------------------------------------------------------------------------
passed=0
failed=0
for s in $scenarios; do
    step "probe scenario: $s"
    extra=()
    case "$s" in
        replay) extra=(--reference "$work/reference/bag") ;;
        sim) extra=(--scenario "$root/config/scenarios/demo.yaml") ;;
        interop) extra=(--dds-bin "$target/debug/sillage_dds" --python "$python") ;;
    esac
    mkdir -p "$work/$s"
    set +e
    ip netns exec "$ns" timeout 420 "$probe" "$s" --root "$root" --bin-dir "$bin_dir" --work "$work/$s" \
        --params "$params" "${extra[@]}" > "$work/$s.out" 2>&1
    rc=$?
    set -e
    grep -v '^start ' "$work/$s.out" | grep -E '^(PASS|FAIL|played|e-stop|cmd_vel|mode transitions|  )' >&2 || true
    p="$(grep -c '^PASS' "$work/$s.out" || true)"
    f="$(grep -c '^FAIL' "$work/$s.out" || true)"
    passed=$((passed + p))
    failed=$((failed + f))
    if [[ "$rc" != 0 ]]; then
        [[ "$f" -gt 0 ]] || failed=$((failed + 1))
        say "scenario $s exited with $rc; its output and the node logs:"
        tail -n 40 "$work/$s.out" >&2
        for log in "$work/$s"/*.log; do
            [[ -f "$log" ]] || continue
            say "--- $log (last 20 lines)"
            tail -n 20 "$log" >&2
        done
    fi
    done_step "scenario $s"
done

say "timings: ${timings[*]/%/,} total $((SECONDS - t_start)) s"
echo "ci_ros2_real: $passed passed, $failed failed"
[[ "$failed" == 0 && "$passed" -gt 0 ]]
