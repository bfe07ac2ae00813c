#!/usr/bin/env bash
# Type-checks the r2r executor (`ros2` feature) and the node binaries without a ROS 2
# installation, with r2r's pre-generated `doc-only` bindings: nothing links, so this is a
# compile check only. .ci/run calls it; on a robot build for real (see docs/on-the-robot.md).
#   nodes/ros2/check-ros2.sh            # about 2.5 min cold on 2 cores, 15 s warm
set -euo pipefail
cd "$(dirname "$0")/../.."
# doc-only ignores a sourced ROS, but keep the check the same on every machine.
exec env -u AMENT_PREFIX_PATH -u CMAKE_PREFIX_PATH -u ROS_DISTRO \
  cargo check -p sillage-ros2 --features doc-only --all-targets "$@"
