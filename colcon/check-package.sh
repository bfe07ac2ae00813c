#!/usr/bin/env bash
# Checks the colcon/ament wrapper without ROS: configures colcon/CMakeLists.txt against stub
# ament_cmake and message packages and a stand-in `cargo`, then checks that an unsupported
# ROS_DISTRO is refused, that cargo is called with the colcon profile, the ros2 feature and an
# IDL filter naming sillage_msgs and rosgraph_msgs, and that the install tree has the binaries
# in lib/sillage/, `sillage` in bin/, and launch/ and config/ in share/sillage/.
# Needs cmake (apt-get install -y cmake). Called by .ci/run.
set -euo pipefail
repo=$(cd "$(dirname "$0")/.." && pwd)
command -v cmake >/dev/null || { echo "check-package: cmake is not installed (apt-get install -y cmake)" >&2; exit 1; }
stub=$(mktemp -d)
trap 'rm -rf "$stub"' EXIT
for p in ament_cmake sillage_msgs std_msgs builtin_interfaces geometry_msgs sensor_msgs nav_msgs diagnostic_msgs rosgraph_msgs rcl_interfaces std_srvs; do
  mkdir -p "$stub/prefix/share/$p/cmake"
  printf 'macro(ament_package)\nendmacro()\n' > "$stub/prefix/share/$p/cmake/${p}Config.cmake"
done
mkdir -p "$stub/bin"
cat > "$stub/bin/cargo" <<'CARGO'
#!/bin/sh
echo "$* IDL_PACKAGE_FILTER=$IDL_PACKAGE_FILTER" > "$CARGO_TARGET_DIR.args"
mkdir -p "$CARGO_TARGET_DIR/colcon"
for b in sillage_event_encoder sillage_bearing_decoder sillage_plume_estimator sillage_arbiter sillage_source_mapper sillage_stack sillage_world sillage; do
  printf '#!/bin/sh\n' > "$CARGO_TARGET_DIR/colcon/$b"
done
CARGO
chmod +x "$stub/bin/cargo"
export PATH="$stub/bin:$PATH"
fail() { echo "check-package: FAIL: $*" >&2; exit 1; }

if ROS_DISTRO=kilted cmake -S "$repo/colcon" -B "$stub/build-kilted" -DCMAKE_PREFIX_PATH="$stub/prefix" >"$stub/kilted.log" 2>&1; then
  fail "ROS_DISTRO=kilted was accepted"
fi
grep -q "which sillage does not support" "$stub/kilted.log" || fail "no clear message for an unsupported distribution"

ROS_DISTRO=jazzy cmake -S "$repo/colcon" -B "$stub/build" -DCMAKE_PREFIX_PATH="$stub/prefix" -DCMAKE_INSTALL_PREFIX="$stub/install" >"$stub/configure.log" 2>&1 \
  || { cat "$stub/configure.log"; fail "configure"; }
cmake --build "$stub/build" >"$stub/build.log" 2>&1 || { cat "$stub/build.log"; fail "build"; }
cmake --install "$stub/build" >/dev/null || fail "install"
args=$(cat "$stub/build/cargo.args")
for want in "--profile colcon" "-p sillage-ros2 --features sillage-ros2/ros2" "-p sillage-cli" "sillage_msgs" "rosgraph_msgs"; do
  [[ "$args" == *"$want"* ]] || fail "cargo was called without '$want': $args"
done
for f in lib/sillage/sillage_event_encoder lib/sillage/sillage_bearing_decoder lib/sillage/sillage_plume_estimator \
         lib/sillage/sillage_arbiter lib/sillage/sillage_source_mapper lib/sillage/sillage_stack lib/sillage/sillage_world bin/sillage \
         share/sillage/launch/robot.launch.xml share/sillage/launch/stack.launch.xml share/sillage/launch/sim.launch.xml \
         share/sillage/config/sillage.yaml share/sillage/config/robot_example.yaml share/sillage/config/scenarios/demo.yaml; do
  [[ -e "$stub/install/$f" ]] || fail "missing $f in the install tree"
done
[[ -x "$stub/install/lib/sillage/sillage_arbiter" ]] || fail "binaries are not executable"
echo "check-package: ok (distro check, cargo call, install layout)"
