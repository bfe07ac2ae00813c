"""Shared helpers of the bearing decoder's reference scripts (bearing_xcorr.py,
bearing_planewave.py): the pinned-version check and the deterministic JSON writer."""

from __future__ import annotations

import argparse
import json
import sys
from importlib.metadata import version
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
REQUIREMENTS = ROOT / "tests" / "refs" / "requirements.txt"
FIXTURE_DIR = ROOT / "tests" / "fixtures" / "bearing"


class FixtureError(Exception):
    """A reference check failed or the environment is not the pinned one."""


def check_versions(names=("numpy", "scipy")):
    """Refuse to run with library versions other than the ones pinned in requirements.txt."""
    pins = {}
    for line in REQUIREMENTS.read_text(encoding="utf-8").splitlines():
        name, sep, ver = line.split("#")[0].strip().partition("==")
        if sep:
            pins[name.lower()] = ver.strip()
    for name in names:
        have = version(name)
        if pins.get(name) != have:
            raise FixtureError(f"{name} {have} is installed but {REQUIREMENTS} pins "
                               f"{pins.get(name)}: run `bash tests/refs/venv.sh`")


def run(doc_string: str, default_out: Path, tag: str, build) -> int:
    """The command line of a fixture script: `[OUTPUT]` (default: the committed path); checks
    the pinned versions, calls build() for the document and writes it."""
    parser = argparse.ArgumentParser(description=doc_string.splitlines()[0])
    parser.add_argument("out", nargs="?", type=Path, default=default_out)
    args = parser.parse_args()
    try:
        check_versions()
        doc = build()
    except FixtureError as e:
        print(f"{tag}: {e}", file=sys.stderr)
        return 1
    write_json(args.out, doc, tag)
    return 0


def write_json(out: Path, doc, tag: str) -> None:
    """Writes doc as indented JSON (floats in Python's shortest round-trip form)."""
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(doc, indent=1, sort_keys=False) + "\n", encoding="utf-8")
    print(f"{tag}: wrote {out}", file=sys.stderr)
