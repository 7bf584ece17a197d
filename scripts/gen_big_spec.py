#!/usr/bin/env python3
"""Writes a large random machine spec for measuring `detent check`.

    scripts/gen_big_spec.py STATES EVENTS [SEED] > big.detent

Every state handles every event (half of them split by a guard on one of four
inputs), so the spec checks clean apart from possible warnings.
"""
import random
import sys

states = int(sys.argv[1])
events = int(sys.argv[2])
rng = random.Random(int(sys.argv[3]) if len(sys.argv) > 3 else 1)
out = ["#[allow(unreachable_state, dead_end, unused_declaration)]", "machine Big {"]
out.append("    events " + ", ".join(f"E{i}" for i in range(events)) + ";")
out.append("    inputs a, b, c, d;")
out.append("    outputs lamp, motor;")
out.append("    actions log;")
out.append("    start S0;")
for s in range(states):
    emit = " emit lamp" if s % 3 == 0 else ""
    out.append(f"    state S{s}{emit} {{")
    for e in range(events):
        t = rng.randrange(states)
        if e % 2 == 0:
            x = "abcd"[rng.randrange(4)]
            u = rng.randrange(states)
            out.append(f"        E{e} if {x} => S{t}, emit motor;")
            out.append(f"        E{e} if !{x} => S{u}, do log;")
        else:
            out.append(f"        E{e} => S{t};")
    out.append("    }")
out.append("}")
print("\n".join(out))
