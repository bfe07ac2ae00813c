"""Shared helpers of the bearing decoder's reference scripts (bearing_xcorr.py,
bearing_planewave.py): the pinned-version check and the deterministic JSON writer."""

from __future__ import annotations

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


def write_json(out: Path, doc, tag: str) -> None:
    """Writes doc as indented JSON (floats in Python's shortest round-trip form)."""
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(doc, indent=1, sort_keys=False) + "\n", encoding="utf-8")
    print(f"{tag}: wrote {out}", file=sys.stderr)
