"""Minimize functions with sympy's SOPform and print literal counts and times as JSON.

Reads a JSON list of functions on stdin, each {"vars": [...], "on": [minterms],
"dc": [minterms]} (minterm bit order: first variable = most significant, as in detent),
and prints a JSON list of {"literals": N, "products": N, "seconds": S}: the literal
count of the sum of products that sympy.logic.SOPform returns and the time it took.
Reference: sympy.logic.boolalg.SOPform (sympy documentation); this script only counts.
"""

import json
import sys
import time

from sympy import Symbol
from sympy.logic import SOPform
from sympy.logic.boolalg import And, Or, Not, BooleanTrue, BooleanFalse


def count(expr):
    """(literals, products) of a sum of products returned by SOPform."""
    if isinstance(expr, (BooleanTrue, BooleanFalse)):
        return 0, (1 if isinstance(expr, BooleanTrue) else 0)
    terms = expr.args if isinstance(expr, Or) else (expr,)
    literals = 0
    for term in terms:
        if isinstance(term, And):
            literals += len(term.args)
        elif isinstance(term, (Symbol, Not)):
            literals += 1
        else:
            raise ValueError(f"unexpected term {term!r}")
    return literals, len(terms)


def minterm_bits(m, n):
    return [(m >> (n - 1 - i)) & 1 for i in range(n)]


def main():
    functions = json.load(sys.stdin)
    out = []
    for f in functions:
        n = len(f["vars"])
        syms = [Symbol(v) for v in f["vars"]]
        on = [minterm_bits(m, n) for m in f["on"]]
        on_set = set(f["on"])
        dc = [minterm_bits(m, n) for m in f["dc"] if m not in on_set]
        start = time.perf_counter()
        expr = SOPform(syms, on, dc)
        seconds = time.perf_counter() - start
        literals, products = count(expr)
        out.append({"literals": literals, "products": products, "seconds": seconds})
    json.dump(out, sys.stdout)
    print()


if __name__ == "__main__":
    main()
