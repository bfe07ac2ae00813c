#!/usr/bin/env python3
"""Runs a command and appends "NAME WALL_S CPU_S" to a times file (CPU = user + sys of the
process and all its threads and children, from wait4's rusage); stdout and stderr go to
OUT/NAME.stdout and OUT/NAME.stderr.

Usage: python3 tests/bench/timed.py OUT NAME CMD...
"""
import os
import subprocess
import sys
import time

out, name, cmd = sys.argv[1], sys.argv[2], sys.argv[3:]
with open(f"{out}/{name}.stdout", "w") as so, open(f"{out}/{name}.stderr", "w") as se:
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=so, stderr=se)
    _, status, ru = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
if status != 0:
    sys.exit(f"{name} failed:\n" + open(f"{out}/{name}.stderr").read())
with open(f"{out}/times", "a") as f:
    f.write(f"{name} {wall:.3f} {ru.ru_utime + ru.ru_stime:.3f}\n")
