#!/usr/bin/env python3
"""Make the ROS 2 CDR reference fixtures in tests/fixtures/cdr/cdr_cases.json.

The case values live in cdr_cases.py beside this script.

Reference libraries (exact versions pinned in tests/refs/requirements.txt; the script refuses
to run with other versions):
  * rosbags 0.11.9 (PyPI, Ternaris): typestore ROS2_HUMBLE plus the sillage_msgs types parsed
    from msgs/msg/*.msg; `serialize_cdr(..., little_endian=True)` makes every buffer and
    `deserialize_cdr` must give the value back.
  * mcap-ros2-support 0.6.0 (PyPI, Foxglove): its own CDR encoder and decoder (a separate
    implementation, driven by the rosbag2 concatenated .msg schema text) must give the same
    bytes and the same value.
  * rosbags' ROS2_JAZZY and ROS2_LYRICAL typestores must give the same definitions and bytes
    for every covered type (messages are the same on the distributions sillage supports).
  * The worked example of shared ROS 2 notes (TwistStamped, frame_id "base_link", 76 bytes:
    header, sec, nanosec, u32 10, "base_link\\0", 2 pad bytes, 6 float64) is checked field by
    field on the rosbags buffer.

Output: a JSON array, sorted by (type, case), of
  {"type": "pkg/msg/Name", "case": "...", "value": {ROS field name: value, in .msg order},
   "cdr_hex": "<encapsulation header 00 01 00 00 + little-endian XCDR1 body>"}
with builtin_interfaces/Time as {"sec", "nanosec"}, sequences and fixed arrays as lists,
floats as JSON numbers written by Python's repr (shortest round-trip form; float32 fields hold
the exact double value of the float32). Buffers carry no trailing padding after the last field.

Usage: python tests/refs/make_cdr_fixtures.py [OUTPUT]   (default: the committed fixture path)
"""

from __future__ import annotations

import argparse
import json
import math
import struct
import sys
from importlib.metadata import version
from pathlib import Path

import numpy as np
from mcap_ros2._dynamic import generate_dynamic, serialize_dynamic
from rosbags.interfaces import Nodetype
from rosbags.typesys import Stores, get_types_from_msg, get_typestore

from cdr_cases import CASES, PLACEHOLDER, header, twist, xyz

ROOT = Path(__file__).resolve().parents[2]
MSG_DIR = ROOT / "msgs" / "msg"
DEFAULT_OUT = ROOT / "tests" / "fixtures" / "cdr" / "cdr_cases.json"
REQUIREMENTS = ROOT / "tests" / "refs" / "requirements.txt"
PINNED = ("rosbags", "mcap-ros2-support", "numpy")

MAIN_STORE = Stores.ROS2_HUMBLE
OTHER_STORES = (Stores.ROS2_JAZZY, Stores.ROS2_LYRICAL)

# numpy dtypes rosbags uses for sequences/arrays of each primitive ROS type.
DTYPES = {
    "bool": np.bool_, "byte": np.uint8, "char": np.uint8,
    "int8": np.int8, "uint8": np.uint8, "int16": np.int16, "uint16": np.uint16,
    "int32": np.int32, "uint32": np.uint32, "int64": np.int64, "uint64": np.uint64,
    "float32": np.float32, "float64": np.float64,
}
INT_RANGES = {
    "byte": (0, 2**8 - 1), "char": (0, 2**8 - 1),
    "int8": (-(2**7), 2**7 - 1), "uint8": (0, 2**8 - 1),
    "int16": (-(2**15), 2**15 - 1), "uint16": (0, 2**16 - 1),
    "int32": (-(2**31), 2**31 - 1), "uint32": (0, 2**32 - 1),
    "int64": (-(2**63), 2**63 - 1), "uint64": (0, 2**64 - 1),
}


class FixtureError(Exception):
    """A case value or a reference library disagrees with what the fixtures promise."""


# ---------------------------------------------------------------- JSON value <-> messages

def fields_of(store, typename: str) -> list:
    return store.fielddefs[typename][1]


def check_scalar(prim: str, value, where: str):
    """Raise unless value is the JSON form a field of primitive type prim must have."""
    if prim == "string":
        if not isinstance(value, str):
            raise FixtureError(f"{where}: string field needs a str, got {value!r}")
    elif prim == "bool":
        if not isinstance(value, bool):
            raise FixtureError(f"{where}: bool field needs true/false, got {value!r}")
    elif prim in ("float32", "float64"):
        if not isinstance(value, float) or not math.isfinite(value):
            raise FixtureError(f"{where}: {prim} field needs a finite float, got {value!r}")
        if prim == "float32" and struct.unpack("<f", struct.pack("<f", value))[0] != value:
            raise FixtureError(f"{where}: {value!r} is not exactly a float32 (use f32())")
    elif prim in INT_RANGES:
        lo, hi = INT_RANGES[prim]
        if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
            raise FixtureError(f"{where}: {prim} field needs an int in [{lo}, {hi}], "
                               f"got {value!r}")
    else:
        raise FixtureError(f"{where}: primitive type {prim!r} is not handled")


def to_message(store, typename: str, value: dict, where: str):
    """Build the rosbags message object of typename from its JSON value."""
    fields = fields_of(store, typename)
    names = [name for name, _ in fields]
    if not isinstance(value, dict) or list(value) != names:
        got = list(value) if isinstance(value, dict) else value
        raise FixtureError(f"{where}: {typename} needs keys {names} in .msg order, got {got}")
    kwargs = {}
    for name, (kind, desc) in fields:
        here, item = f"{where}.{name}", value[name]
        if kind == Nodetype.BASE:
            check_scalar(desc[0], item, here)
            kwargs[name] = item
        elif kind == Nodetype.NAME:
            kwargs[name] = to_message(store, desc, item, here)
        elif kind in (Nodetype.ARRAY, Nodetype.SEQUENCE):
            (sub_kind, sub_desc), length = desc
            if not isinstance(item, list):
                raise FixtureError(f"{here}: needs a JSON list, got {item!r}")
            if kind == Nodetype.ARRAY and len(item) != length:
                raise FixtureError(f"{here}: fixed array needs {length} items, got {len(item)}")
            if sub_kind == Nodetype.NAME:
                kwargs[name] = [to_message(store, sub_desc, x, f"{here}[{i}]")
                                for i, x in enumerate(item)]
            else:
                for i, x in enumerate(item):
                    check_scalar(sub_desc[0], x, f"{here}[{i}]")
                kwargs[name] = (list(item) if sub_desc[0] == "string"
                                else np.array(item, dtype=DTYPES[sub_desc[0]]))
        else:
            raise FixtureError(f"{here}: field kind {kind!r} is not handled")
    return store.types[typename](**kwargs)


def to_value(store, typename: str, msg) -> dict:
    """JSON value of a decoded message (rosbags object or mcap_ros2 object)."""
    out = {}
    for name, (kind, desc) in fields_of(store, typename):
        if name == PLACEHOLDER and not hasattr(msg, name):
            # mcap-ros2-support reads the placeholder byte of an empty message and drops it.
            out[name] = 0
            continue
        item = getattr(msg, name)
        if kind == Nodetype.NAME:
            out[name] = to_value(store, desc, item)
        elif kind in (Nodetype.ARRAY, Nodetype.SEQUENCE):
            (sub_kind, sub_desc), _ = desc
            if sub_kind == Nodetype.NAME:
                out[name] = [to_value(store, sub_desc, x) for x in item]
            else:
                out[name] = [plain(sub_desc[0], x) for x in item]
        else:
            out[name] = plain(desc[0], item)
    return out


def plain(prim: str, x):
    """Python scalar of the JSON type that fields of primitive type prim use."""
    if prim == "string":
        return str(x)
    if prim == "bool":
        return bool(x)
    if prim in ("float32", "float64"):
        return float(x)
    return int(x)


def strict(v):
    """Comparison key: floats by bit pattern (keeps -0.0), ints and bools kept apart."""
    if isinstance(v, dict):
        return ("dict", tuple((k, strict(x)) for k, x in v.items()))
    if isinstance(v, list):
        return ("list", tuple(strict(x) for x in v))
    if isinstance(v, float):
        return ("float", struct.pack("<d", v))
    return (type(v).__name__, v)


# ---------------------------------------------------------------- stores and checks

def load_store(store_id: Stores):
    """rosbags typestore of store_id with the sillage_msgs types registered."""
    store = get_typestore(store_id)
    types = {}
    for path in sorted(MSG_DIR.glob("*.msg")):
        types.update(get_types_from_msg(path.read_text(encoding="utf-8"),
                                        f"sillage_msgs/msg/{path.stem}"))
    if not types:
        raise FixtureError(f"no .msg files found in {MSG_DIR}")
    store.register(types)
    return store


def check_versions():
    """Refuse to run with library versions other than the pinned ones."""
    pins = {}
    for line in REQUIREMENTS.read_text(encoding="utf-8").splitlines():
        name, sep, ver = line.split("#")[0].strip().partition("==")
        if sep:
            pins[name.lower()] = ver.strip()
    for name in PINNED:
        have = version(name)
        if pins.get(name) != have:
            raise FixtureError(f"{name} {have} is installed but {REQUIREMENTS} pins "
                               f"{pins.get(name)}: run `bash tests/refs/venv.sh`")


def check_worked_example(store):
    """TwistStamped, frame_id "base_link" = 76 bytes (shared ROS 2 notes, CDR section)."""
    msg = to_message(store, "geometry_msgs/msg/TwistStamped",
                     {"header": header(7, 9, "base_link"),
                      "twist": twist(xyz(1.0, 2.0, 3.0), xyz(4.0, 5.0, 6.0))}, "worked_example")
    raw = bytes(store.serialize_cdr(msg, "geometry_msgs/msg/TwistStamped", little_endian=True))
    expected = (b"\x00\x01\x00\x00" + struct.pack("<iI", 7, 9) + struct.pack("<I", 10)
                + b"base_link\x00" + b"\x00\x00"
                + struct.pack("<6d", 1.0, 2.0, 3.0, 4.0, 5.0, 6.0))
    assert len(expected) == 76
    if raw != expected:
        raise FixtureError(f"worked example: rosbags gave {len(raw)} bytes {raw.hex()}, "
                           f"expected 76 bytes {expected.hex()}")


def mcap_codec(store, typename: str):
    """Encoder and decoder of mcap-ros2-support for typename, from the rosbag2 schema text."""
    schema_name = typename.replace("/msg/", "/")
    schema_text = store.generate_msgdef(typename, ros_version=2)[0]
    return (serialize_dynamic(schema_name, schema_text)[schema_name],
            generate_dynamic(schema_name, schema_text)[schema_name])


def make_case(store, others, typename: str, case: str, value: dict) -> dict:
    where = f"{typename} case {case!r}"
    msg = to_message(store, typename, value, where)
    raw = bytes(store.serialize_cdr(msg, typename, little_endian=True))
    if raw[:4] != b"\x00\x01\x00\x00":
        raise FixtureError(f"{where}: encapsulation header {raw[:4].hex()} is not CDR_LE")

    back = to_value(store, typename, store.deserialize_cdr(raw, typename))
    if strict(back) != strict(value):
        raise FixtureError(f"{where}: rosbags decoded {back!r}, expected {value!r}")

    encode, decode = mcap_codec(store, typename)
    if (other := bytes(encode(value))) != raw:
        raise FixtureError(f"{where}: mcap-ros2-support encoded {other.hex()}, "
                           f"rosbags {raw.hex()}")
    back = to_value(store, typename, decode(raw))
    if strict(back) != strict(value):
        raise FixtureError(f"{where}: mcap-ros2-support decoded {back!r}, expected {value!r}")

    for other_store in others:
        other = bytes(other_store.serialize_cdr(to_message(other_store, typename, value, where),
                                                typename, little_endian=True))
        if other != raw:
            raise FixtureError(f"{where}: another rosbags store encoded {other.hex()}")
    return {"type": typename, "case": case, "value": value, "cdr_hex": raw.hex()}


def check_same_definitions(store, others):
    for typename in CASES:
        text = store.generate_msgdef(typename, ros_version=2)[0]
        for other in others:
            if other.generate_msgdef(typename, ros_version=2)[0] != text:
                raise FixtureError(f"{typename}: definition differs between rosbags stores")


def build() -> list[dict]:
    check_versions()
    store = load_store(MAIN_STORE)
    others = [load_store(s) for s in OTHER_STORES]
    check_same_definitions(store, others)
    check_worked_example(store)
    cases = []
    for typename, entries in CASES.items():
        names = [case for case, _ in entries]
        if len(set(names)) != len(names):
            raise FixtureError(f"{typename}: duplicate case names {names}")
        cases += [make_case(store, others, typename, case, value) for case, value in entries]
    cases.sort(key=lambda c: (c["type"], c["case"]))
    return cases


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out", nargs="?", type=Path, default=DEFAULT_OUT,
                        help=f"output JSON file (default: {DEFAULT_OUT.relative_to(ROOT)})")
    args = parser.parse_args()
    try:
        cases = build()
    except FixtureError as err:
        print(f"make_cdr_fixtures: {err}", file=sys.stderr)
        return 1
    args.out.parent.mkdir(parents=True, exist_ok=True)
    text = json.dumps(cases, indent=1, sort_keys=False, ensure_ascii=False) + "\n"
    args.out.write_text(text, encoding="utf-8")
    print(f"make_cdr_fixtures: wrote {len(cases)} cases of {len(CASES)} types to {args.out}",
          file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
