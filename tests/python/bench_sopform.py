"""Times sympy's SOPform on the benchmark functions and prints the ratio to detent.

Input (stdin): the JSON written by detent's example binary, which generates the fixed
seeded set of `detent_compiler::logic::testgen::benchmark_functions` and adds, per
function, detent's exact literal count and best-of-3 time:

    cargo run --release -p detent-compiler --example logic_export -- --sizes 6,8,10 --count 3 \
      | $DETENT_PYTHON tests/python/bench_sopform.py

Output: one line per function (variables, literals, times, ratio) and the totals per size.
SOPform is timed once per function (it is slow at 10 variables), both as wall time and as
the CPU time of this process (`time.process_time`); the machine is shared, so the CPU-time
ratio (sympy CPU seconds over detent's best-of-3 wall seconds) is the conservative one.
"""

import json
import sys
import time
from collections import defaultdict

from sympy import Symbol
from sympy.logic import SOPform

sys.path.insert(0, __file__.rsplit("/", 1)[0])
from sopform import count, minterm_bits  # noqa: E402


def main():
    functions = json.load(sys.stdin)
    per_size = defaultdict(lambda: [0.0, 0.0, 0, 0, 0.0])
    for f in functions:
        n = len(f["vars"])
        syms = [Symbol(v) for v in f["vars"]]
        on_set = set(f["on"])
        on = [minterm_bits(m, n) for m in f["on"]]
        dc = [minterm_bits(m, n) for m in f["dc"] if m not in on_set]
        start = time.perf_counter()
        cpu_start = time.process_time()
        expr = SOPform(syms, on, dc)
        cpu = time.process_time() - cpu_start
        seconds = time.perf_counter() - start
        literals, _ = count(expr)
        rust = f["rust_seconds"]
        print(
            f"n={n:2} literals detent={f['rust_literals']:5} sympy={literals:5} "
            f"time detent={rust:.6f}s sympy={seconds:.4f}s (cpu {cpu:.4f}s) "
            f"ratio={seconds / max(rust, 1e-9):8.1f}x cpu ratio={cpu / max(rust, 1e-9):8.1f}x"
        )
        s = per_size[n]
        s[0] += rust
        s[1] += seconds
        s[2] += f["rust_literals"]
        s[3] += literals
        s[4] += cpu
    for n in sorted(per_size):
        rust, sym, rl, sl, cpu = per_size[n]
        print(
            f"total n={n:2}: detent {rust:.4f}s sympy {sym:.3f}s (cpu {cpu:.3f}s) "
            f"ratio {sym / max(rust, 1e-9):.1f}x cpu ratio {cpu / max(rust, 1e-9):.1f}x; "
            f"literals detent {rl} sympy {sl}"
        )


if __name__ == "__main__":
    main()
