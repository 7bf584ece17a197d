"""External reference for detent's minimizer: automata-lib's DFA minimization.

Reads a JSON list of complete DFAs from stdin, each
  {"states": N, "alphabet": K, "transitions": [[t, ...] per state], "initial": s,
   "finals": [s, ...]}
(states 0..N-1, symbols 0..K-1), minimizes each with automata-lib's
`automata.fa.dfa.DFA(...).minify()` (which drops unreachable states, then merges
indistinguishable ones), and prints the minimal state count of each, one per line.
"""

import json
import sys

from automata.fa.dfa import DFA


def minimal_count(spec):
    n, k = spec["states"], spec["alphabet"]
    symbols = [f"x{a}" for a in range(k)]
    transitions = {
        s: {symbols[a]: spec["transitions"][s][a] for a in range(k)} for s in range(n)
    }
    dfa = DFA(
        states=set(range(n)),
        input_symbols=set(symbols),
        transitions=transitions,
        initial_state=spec["initial"],
        final_states=set(spec["finals"]),
    )
    return len(dfa.minify().states)


def main():
    specs = json.load(sys.stdin)
    out = [str(minimal_count(spec)) for spec in specs]
    sys.stdout.write("\n".join(out) + "\n")


if __name__ == "__main__":
    main()
