#!/usr/bin/env python3
"""Make the rosbag2 reference bags in tests/fixtures/bags/ with outside libraries.

Reference libraries (versions pinned in tests/refs/requirements.txt):
  * rosbags 0.11.9 (PyPI, Ternaris): `rosbags.rosbag2.Writer` writes the same messages into
    an MCAP bag (metadata version 9) and an sqlite3 bag (metadata version 8);
  * mcap 1.6.0 + mcap-ros2-support 0.6.0 (PyPI, Foxglove): `mcap_ros2.writer.Writer` writes
    them into a single MCAP file (no metadata.yaml), encoding with its own CDR encoder from
    the rosbag2 schema text.

Messages: every case of tests/refs/cdr_cases.py whose type is a topic type of sillage's
vocabulary, one topic per type (/fx/<type name>), 10 ms apart in an interleaved order, two of
them at the same log time; plus /chatter (std_msgs/msg/String, a type sillage does not use,
which readers must skip). The expected values go to expected.jsonl, one line per message of a
known type in log-time order: {"log_time", "topic", "type", "value"} with the JSON value
convention of tests/fixtures/cdr (ROS field names; Time as {sec, nanosec}).

Usage: python tests/refs/bag_make_fixtures.py [EXPECTED]
  (default: tests/fixtures/bags/expected.jsonl; the bags are written in the same folder).
The output is byte-reproducible (check_fixtures.sh compares expected.jsonl, and
bag_roundtrip.py compares the bags).
"""

from __future__ import annotations

import argparse
import json
import shutil
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from mcap_ros2.writer import Writer as McapRos2Writer  # noqa: E402
from rosbags.interfaces import Qos, QosDurability, QosHistory, QosLiveliness, QosReliability, QosTime  # noqa: E402
from rosbags.rosbag2 import StoragePlugin, Writer  # noqa: E402
from rosbags.typesys import Stores  # noqa: E402

from cdr_cases import CASES  # noqa: E402
from make_cdr_fixtures import check_versions, load_store, to_message  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
DEFAULT_OUT = ROOT / "tests" / "fixtures" / "bags" / "expected.jsonl"
START = 1_700_000_000_000_000_000

# The topic types of sillage's vocabulary (nodes/core/src/any.rs, `vocabulary!`).
TOPIC_TYPES = [
    "sillage_msgs/msg/ChemSample", "sillage_msgs/msg/OdorEventArray", "sillage_msgs/msg/OdorBearing",
    "sillage_msgs/msg/PlumeFeatures", "sillage_msgs/msg/SearchState", "geometry_msgs/msg/Vector3Stamped",
    "nav_msgs/msg/Odometry", "std_msgs/msg/Bool", "std_msgs/msg/Empty", "sensor_msgs/msg/LaserScan",
    "geometry_msgs/msg/Twist", "geometry_msgs/msg/TwistStamped", "geometry_msgs/msg/PointStamped",
    "diagnostic_msgs/msg/DiagnosticArray", "rosgraph_msgs/msg/Clock",
]
UNKNOWN = ("/chatter", "std_msgs/msg/String")

INFINITE = QosTime(9223372036, 854775807)
QOS = [Qos(QosHistory.KEEP_LAST, 10, QosReliability.RELIABLE, QosDurability.VOLATILE,
           INFINITE, INFINITE, QosLiveliness.AUTOMATIC, INFINITE, False)]


def messages():
    """(log_time, topic, type, value) in log-time order; the unknown-type topic included."""
    items = []
    for typename in TOPIC_TYPES:
        for case, value in CASES[typename]:
            items.append((f"/fx/{typename.rsplit('/', 1)[1].lower()}", typename, value))
    # Interleave: round-robin over the per-case list in a fixed permuted order.
    order = sorted(range(len(items)), key=lambda i: (i * 7) % len(items))
    out = []
    for k, i in enumerate(order):
        topic, typename, value = items[i]
        t = START + k * 10_000_000
        out.append((t, topic, typename, value))
    # Two messages at the same log time (different topics): readers keep file order.
    out[3] = (out[2][0], *out[3][1:])
    for j in range(3):
        out.append((START + j * 25_000_000 + 5_000_000, UNKNOWN[0], UNKNOWN[1], {"data": f"hello {j}"}))
    out.sort(key=lambda m: m[0])
    return out


def write_rosbags(store, path: Path, plugin, version: int, msgs):
    with Writer(path, version=version, storage_plugin=plugin) as w:
        conns = {}
        for t, topic, typename, value in msgs:
            if topic not in conns:
                conns[topic] = w.add_connection(topic, typename, typestore=store, offered_qos_profiles=QOS)
            raw = store.serialize_cdr(to_message(store, typename, value, topic), typename)
            w.write(conns[topic], t, raw)


def write_mcap_ros2(store, path: Path, msgs):
    with path.open("wb") as f:
        w = McapRos2Writer(f)
        schemas = {}
        for seq, (t, topic, typename, value) in enumerate(msgs):
            if typename not in schemas:
                text = store.generate_msgdef(typename, ros_version=2)[0]
                schemas[typename] = w.register_msgdef(typename, text)
            w.write_message(topic, schemas[typename], value, log_time=t, publish_time=t, sequence=seq)
        w.finish()


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out", nargs="?", type=Path, default=DEFAULT_OUT)
    args = parser.parse_args()
    check_versions()
    store = load_store(Stores.ROS2_HUMBLE)
    msgs = messages()
    expected: Path = args.out
    out = expected.parent
    out.mkdir(parents=True, exist_ok=True)
    for name in ("rosbags_mcap", "rosbags_sqlite3"):
        shutil.rmtree(out / name, ignore_errors=True)
    write_rosbags(store, out / "rosbags_mcap", StoragePlugin.MCAP, 9, msgs)
    write_rosbags(store, out / "rosbags_sqlite3", StoragePlugin.SQLITE3, 8, msgs)
    write_mcap_ros2(store, out / "mcap_ros2.mcap", msgs)
    with expected.open("w", encoding="utf-8") as f:
        for t, topic, typename, value in msgs:
            if typename != UNKNOWN[1]:
                f.write(json.dumps({"log_time": t, "topic": topic, "type": typename, "value": value}) + "\n")
    print(f"bag_make_fixtures: {len(msgs)} messages into {out}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
