"""Times sympy's SOPform on the benchmark functions and prints the ratio to detent.

Input (stdin): the JSON written by detent's example binary, which generates the fixed
seeded set of `detent_compiler::logic::testgen::benchmark_functions` and adds, per
function, detent's exact literal count and best-of-3 time:

    cargo run --release -p detent-compiler --example logic_export -- --sizes 6,8,10 --count 3 \
      | $DETENT_PYTHON tests/python/bench_sopform.py

Output: one line per function (variables, literals, times, ratio) and the totals per size.
SOPform is timed once per function (it is slow at 10 variables).
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
    per_size = defaultdict(lambda: [0.0, 0.0, 0, 0])
    for f in functions:
        n = len(f["vars"])
        syms = [Symbol(v) for v in f["vars"]]
        on_set = set(f["on"])
        on = [minterm_bits(m, n) for m in f["on"]]
        dc = [minterm_bits(m, n) for m in f["dc"] if m not in on_set]
        start = time.perf_counter()
        expr = SOPform(syms, on, dc)
        seconds = time.perf_counter() - start
        literals, _ = count(expr)
        rust = f["rust_seconds"]
        print(
            f"n={n:2} literals detent={f['rust_literals']:5} sympy={literals:5} "
            f"time detent={rust:.6f}s sympy={seconds:.4f}s ratio={seconds / max(rust, 1e-9):8.1f}x"
        )
        s = per_size[n]
        s[0] += rust
        s[1] += seconds
        s[2] += f["rust_literals"]
        s[3] += literals
    for n in sorted(per_size):
        rust, sym, rl, sl = per_size[n]
        print(
            f"total n={n:2}: detent {rust:.4f}s sympy {sym:.3f}s ratio {sym / max(rust, 1e-9):.1f}x; "
            f"literals detent {rl} sympy {sl}"
        )


if __name__ == "__main__":
    main()
