#!/usr/bin/env python3
"""Round trips of rosbag2 bags between sillage and outside libraries.

Checks (each prints PASS/FAIL; the last line is "N passed, M failed"):
  1. bag_make_fixtures.py (rosbags 0.11.9, mcap 1.6.0 + mcap-ros2-support 0.6.0) rebuilds the
     committed bags in tests/fixtures/bags/ byte for byte;
  2. sillage reads each of those bags (fresh and committed) with exactly the values the
     libraries were given (expected.jsonl);
  3. bags that sillage writes (copies of the fixture bags, and the demo bag) are read by
     rosbags' AnyReader and by mcap-ros2-support's decoder with exactly the values sillage
     reads from them.
Values are compared by JSON structure with floats by bit pattern.

sillage's side runs through two small example programs of the sillage-bag crate (bag_dump,
bag_copy), built with cargo.

Usage: python tests/refs/bag_roundtrip.py
"""

from __future__ import annotations

import filecmp
import json
import struct
import subprocess
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from mcap.reader import make_reader  # noqa: E402
from mcap_ros2.decoder import DecoderFactory  # noqa: E402
from rosbags.highlevel import AnyReader  # noqa: E402
from rosbags.typesys import Stores  # noqa: E402

from make_cdr_fixtures import check_versions, load_store, to_value  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
FIXTURES = ROOT / "tests" / "fixtures" / "bags"
DEMO = ROOT / "tests" / "fixtures" / "demo" / "demo_bag"
BAGS = ["rosbags_mcap", "rosbags_sqlite3", "mcap_ros2.mcap"]

results: list[tuple[str, bool, str]] = []


def check(name: str, ok: bool, detail: str = "") -> None:
    results.append((name, ok, detail))
    print(f"{'PASS' if ok else 'FAIL'}: {name}{'' if ok else ': ' + detail}", flush=True)


def canon(v):
    """Comparison key: dict keys sorted, floats by bit pattern, ints and bools kept apart."""
    if isinstance(v, dict):
        return ("dict", tuple(sorted((k, canon(x)) for k, x in v.items())))
    if isinstance(v, list):
        return ("list", tuple(canon(x) for x in v))
    if isinstance(v, float):
        return ("float", struct.pack("<d", v))
    return (type(v).__name__, v)


def first_difference(a: list, b: list) -> str:
    if len(a) != len(b):
        return f"{len(a)} messages vs {len(b)}"
    for i, (x, y) in enumerate(zip(a, b)):
        if canon(x) != canon(y):
            return f"message {i}: {json.dumps(x)[:300]} vs {json.dumps(y)[:300]}"
    return ""


def examples() -> Path:
    subprocess.run(["cargo", "build", "-q", "-p", "sillage-bag", "--examples"], cwd=ROOT, check=True)
    meta = json.loads(subprocess.run(["cargo", "metadata", "--format-version", "1", "--no-deps"], cwd=ROOT,
                                     check=True, capture_output=True, text=True).stdout)
    return Path(meta["target_directory"]) / "debug" / "examples"


def sillage_dump(bin_dir: Path, bag: Path) -> list[dict]:
    out = subprocess.run([str(bin_dir / "bag_dump"), str(bag), "--strict"], check=True, capture_output=True, text=True)
    return [json.loads(line) for line in out.stdout.splitlines()]


def rosbags_dump(store, bag: Path) -> list[dict]:
    out = []
    with AnyReader([bag]) as r:
        for conn, t, raw in r.messages():
            msg = r.deserialize(raw, conn.msgtype)
            out.append({"log_time": t, "topic": conn.topic, "type": conn.msgtype,
                        "value": to_value(store, conn.msgtype, msg)})
    return out


def mcap_ros2_dump(store, mcap_file: Path) -> list[dict]:
    out = []
    with mcap_file.open("rb") as f:
        reader = make_reader(f, decoder_factories=[DecoderFactory()])
        for schema, channel, message, decoded in reader.iter_decoded_messages(log_time_order=True):
            typename = schema.name if "/msg/" in schema.name else schema.name.replace("/", "/msg/")
            out.append({"log_time": message.log_time, "topic": channel.topic, "type": typename,
                        "value": to_value(store, typename, decoded)})
    return out


def main() -> int:
    check_versions()
    store = load_store(Stores.ROS2_HUMBLE)
    expected = [json.loads(x) for x in (FIXTURES / "expected.jsonl").read_text(encoding="utf-8").splitlines()]
    bin_dir = examples()
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        fresh = tmp / "fresh"
        subprocess.run([sys.executable, str(Path(__file__).parent / "bag_make_fixtures.py"),
                        str(fresh / "expected.jsonl")], check=True)
        for f in sorted(p.relative_to(fresh) for p in fresh.rglob("*") if p.is_file()):
            same = (FIXTURES / f).is_file() and filecmp.cmp(fresh / f, FIXTURES / f, shallow=False)
            check(f"fixture {f} is rebuilt byte for byte", same, "differs from the committed file")

        for origin, base in (("committed", FIXTURES), ("fresh", fresh)):
            for name in BAGS:
                got = sillage_dump(bin_dir, base / name)
                check(f"sillage reads the {origin} {name} bag with the written values",
                      not first_difference(got, expected), first_difference(got, expected))

        for name in BAGS:
            copy = tmp / f"copy_{name.split('.')[0]}"
            subprocess.run([str(bin_dir / "bag_copy"), str(copy), str(FIXTURES / name)], check=True, capture_output=True)
            mine = sillage_dump(bin_dir, copy)
            check(f"sillage's copy of {name} keeps the values", not first_difference(mine, expected),
                  first_difference(mine, expected))
            theirs = rosbags_dump(store, copy)
            check(f"rosbags AnyReader reads sillage's copy of {name}", not first_difference(theirs, mine),
                  first_difference(theirs, mine))
            theirs = mcap_ros2_dump(store, next(copy.glob("*.mcap")))
            check(f"mcap-ros2-support reads sillage's copy of {name}", not first_difference(theirs, mine),
                  first_difference(theirs, mine))

        mine = sillage_dump(bin_dir, DEMO)
        theirs = rosbags_dump(store, DEMO)
        check("rosbags AnyReader reads the demo bag as sillage does", not first_difference(theirs, mine),
              first_difference(theirs, mine))
        theirs = mcap_ros2_dump(store, next(DEMO.glob("*.mcap")))
        check("mcap-ros2-support reads the demo bag as sillage does", not first_difference(theirs, mine),
              first_difference(theirs, mine))

    passed = sum(ok for _, ok, _ in results)
    failed = len(results) - passed
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
