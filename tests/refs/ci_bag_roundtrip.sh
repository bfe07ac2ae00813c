#!/usr/bin/env bash
# Round trips of rosbag2 bags between sillage and rosbags / mcap-ros2-support (see
# bag_roundtrip.py). Called by .ci/run (tests/refs/ci_*.sh).
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
python="$(bash "$here/venv.sh")"
exec "$python" "$here/bag_roundtrip.py"
