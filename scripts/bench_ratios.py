#!/usr/bin/env python3
"""Prints a criterion group's results as a Markdown table of ratios.

Reads <criterion>/<group>/<variant>/<param>/new/estimates.json (mean) and, per
parameter, divides every variant by the baseline variant given with --base.

    python3 scripts/bench_ratios.py check --base tokenize
    python3 scripts/bench_ratios.py macro_build --base empty

The criterion directory defaults to $CARGO_TARGET_DIR/criterion, else target/criterion.
"""

import argparse
import json
import os
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def fmt(s):
    if s >= 1:
        return f"{s:.2f} s"
    if s >= 1e-3:
        return f"{s * 1e3:.1f} ms"
    return f"{s * 1e6:.1f} us"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("group")
    ap.add_argument("--base", required=True, help="the baseline variant")
    ap.add_argument("--criterion", default=None)
    args = ap.parse_args()
    target = Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target"))
    crit = Path(args.criterion) if args.criterion else target / "criterion"
    data = {}
    for est in sorted((crit / args.group).glob("*/*/new/estimates.json")):
        variant, param = est.parent.parent.parent.name, est.parent.parent.name
        mean = json.loads(est.read_text())["mean"]["point_estimate"] / 1e9
        data.setdefault(param, {})[variant] = mean
    if not data:
        raise SystemExit(f"no results under {crit / args.group}")
    variants = sorted({v for d in data.values() for v in d}, key=lambda v: (v != args.base, v))
    print("| " + " | ".join([args.group] + variants + [f"{v} / {args.base}" for v in variants if v != args.base]) + " |")
    print("|" + "---|" * (1 + 2 * len(variants) - 1))
    for param in sorted(data, key=lambda p: (len(p), p)):
        d = data[param]
        base = d.get(args.base)
        cells = [fmt(d[v]) if v in d else "-" for v in variants]
        ratios = [f"{d[v] / base:.2f}x" if v in d and base else "-" for v in variants if v != args.base]
        print("| " + " | ".join([param] + cells + ratios) + " |")


if __name__ == "__main__":
    main()
