#!/usr/bin/env python3
"""Instructions, branches and simulated branch misses per event of each (size, form) of
the dispatch benchmark, from valgrind's cachegrind (the benchmark machine has no
hardware counters: `perf stat` reports them as not supported).

    cargo build --release -p detent-bench --example dispatch_one
    python3 scripts/dispatch_counts.py [passes]       # default 20

Each count is (run with `passes` passes) - (run with 0 passes), divided by the events
stepped, so the buffer set-up is not counted. Cachegrind's branch predictor is a simple
simulated one (2-bit counters for conditional branches, a branch-target buffer for
indirect ones), not the CPU's: the misses show where unpredictable branches are, not
how many a real core would miss.
"""

import os
import re
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TARGET = os.environ.get("CARGO_TARGET_DIR", os.path.join(ROOT, "target"))
BIN = os.path.join(TARGET, "release", "examples", "dispatch_one")
EVENTS = 16384


def counts(size, form, passes):
    out = subprocess.run(
        ["valgrind", "--tool=cachegrind", "--cache-sim=no", "--branch-sim=yes",
         "--cachegrind-out-file=/dev/null", BIN, size, form, str(passes)],
        capture_output=True, text=True, check=True).stderr
    num = lambda s: int(s.replace(",", ""))
    i = num(re.search(r"I\s+refs:\s+([\d,]+)", out).group(1))
    b = re.search(r"Branches:\s+([\d,]+)\s+\(\s*([\d,]+) cond \+\s*([\d,]+) ind\)", out)
    m = re.search(r"Mispredicts:\s+([\d,]+)\s+\(\s*([\d,]+) cond \+\s*([\d,]+) ind\)", out)
    return [i] + [num(x) for x in b.groups()] + [num(x) for x in m.groups()]


def main():
    passes = int(sys.argv[1]) if len(sys.argv) > 1 else 20
    n = passes * EVENTS
    print("| size | form | instructions | branches (cond + indirect) | simulated misses (cond + indirect) |")
    print("|---|---|---:|---:|---:|")
    for size in ["small", "medium", "large"]:
        for form in ["hand", "table", "matched"]:
            base = counts(size, form, 0)
            full = counts(size, form, passes)
            d = [(f - b) / n for f, b in zip(full, base)]
            print(f"| {size} | {form} | {d[0]:.1f} | {d[1]:.2f} ({d[2]:.2f} + {d[3]:.2f}) "
                  f"| {d[4]:.2f} ({d[5]:.2f} + {d[6]:.2f}) |")


if __name__ == "__main__":
    main()
