#!/usr/bin/env python3
"""Plot and tabulate the minimization benchmark (compiler/benches/minimize.rs).

Reads criterion's estimates (<target>/criterion/<group>/<bench>/<states>/new/estimates.json),
writes docs/minimize-growth.svg (a hand-written log-log SVG, no matplotlib needed) and
prints the Markdown tables used in BENCHMARKS.md.

    cargo bench -p detent-compiler --bench minimize
    python3 scripts/plot_minimize.py [--criterion DIR] [--out docs/minimize-growth.svg]

The criterion directory defaults to $CARGO_TARGET_DIR/criterion, else target/criterion.
"""

import argparse
import json
import math
import os
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def load(criterion):
    """{(group, bench): {states: mean_seconds}}"""
    data = {}
    for est in criterion.glob("*/*/*/new/estimates.json"):
        states_dir = est.parent.parent
        bench_dir = states_dir.parent
        group = bench_dir.parent.name
        try:
            states = int(states_dir.name)
        except ValueError:
            continue
        mean = json.loads(est.read_text())["mean"]["point_estimate"] / 1e9
        data.setdefault((group, bench_dir.name), {})[states] = mean
    return data


def fmt_time(s):
    if s >= 1:
        return f"{s:.2f} s"
    if s >= 1e-3:
        return f"{s * 1e3:.1f} ms"
    return f"{s * 1e6:.0f} µs"


def nlogn(n):
    return n * math.log2(n)


def tables(data):
    out = []
    for group in ("random", "chain"):
        h = data.get((group, "hopcroft"), {})
        m = data.get((group, "moore"), {})
        w = data.get((group, "walk"), {})
        if not h:
            continue
        out.append(f"\n**{group}** (8 symbols)\n")
        if w:
            out.append("| states | hopcroft | moore | moore / hopcroft | walk | hopcroft / walk | hopcroft growth per doubling | walk growth per doubling | n log n growth per doubling |")
            out.append("|---:|---:|---:|---:|---:|---:|---:|---:|---:|")
        else:
            out.append("| states | hopcroft | moore | moore / hopcroft | hopcroft growth per doubling | n log n growth per doubling |")
            out.append("|---:|---:|---:|---:|---:|---:|")
        sizes = sorted(h)
        for i, n in enumerate(sizes):
            mo = m.get(n)
            ratio = f"{mo / h[n]:.2f}x" if mo else "-"
            wg = "-"
            if i > 0:
                prev = sizes[i - 1]
                steps = math.log2(n / prev)
                g = (h[n] / h[prev]) ** (1 / steps)
                ref = (nlogn(n) / nlogn(prev)) ** (1 / steps)
                growth, refg = f"{g:.2f}x", f"{ref:.2f}x"
                if n in w and prev in w:
                    wg = f"{(w[n] / w[prev]) ** (1 / steps):.2f}x"
            else:
                growth, refg = "-", "-"
            if w:
                wn = w.get(n)
                out.append(
                    f"| {n} | {fmt_time(h[n])} | {fmt_time(mo) if mo else '-'} | {ratio} | "
                    f"{fmt_time(wn) if wn else '-'} | {f'{h[n] / wn:.2f}x' if wn else '-'} | {growth} | {wg} | {refg} |"
                )
            else:
                out.append(f"| {n} | {fmt_time(h[n])} | {fmt_time(mo) if mo else '-'} | {ratio} | {growth} | {refg} |")
        lo, hi = 1 << 14, 1 << 20
        if lo in h and hi in h:
            out.append(f"\n{group}: 2^14 -> 2^20 hopcroft time x{h[hi] / h[lo]:.0f}, n log n x{nlogn(hi) / nlogn(lo):.0f}, n x64.")
        if lo in w and hi in w:
            out.append(f"{group}: 2^14 -> 2^20 walk time x{w[hi] / w[lo]:.0f} for the same k n scanned transitions per state.")
    nomin = data.get(("regex", "ra_build_nomin"), {})
    mini = data.get(("regex", "ra_build_min"), {})
    hop = data.get(("regex", "hopcroft_exported"), {})
    if hop:
        out.append("\n**regex** `[01]*1[01]{N}` (states of the unminimized DFA)\n")
        out.append("| states | ra build (no min) | ra build (min) | ra minimizer (difference) | hopcroft on export | ra minimizer / hopcroft |")
        out.append("|---:|---:|---:|---:|---:|---:|")
        for n in sorted(hop):
            a, b = nomin.get(n), mini.get(n)
            diff = b - a if a is not None and b is not None else None
            out.append(
                f"| {n} | {fmt_time(a) if a else '-'} | {fmt_time(b) if b else '-'} | "
                f"{fmt_time(diff) if diff else '-'} | {fmt_time(hop[n])} | "
                f"{f'{diff / hop[n]:.0f}x' if diff else '-'} |"
            )
    return "\n".join(out)


def svg(data, path):
    series = [
        (("random", "hopcroft"), "hopcroft, random", "#1f77b4", ""),
        (("random", "moore"), "moore, random", "#1f77b4", "6,4"),
        (("random", "walk"), "walk baseline, random", "#9467bd", "2,2"),
        (("chain", "hopcroft"), "hopcroft, chain", "#d62728", ""),
        (("chain", "moore"), "moore, chain", "#d62728", "6,4"),
        (("regex", "hopcroft_exported"), "hopcroft, regex export", "#2ca02c", ""),
    ]
    pts = {}
    for key, *_ in series:
        if key in data:
            pts[key] = sorted(data[key].items())
    nomin = data.get(("regex", "ra_build_nomin"), {})
    mini = data.get(("regex", "ra_build_min"), {})
    ra = sorted((n, mini[n] - nomin[n]) for n in mini if n in nomin and mini[n] > nomin[n])
    if ra:
        pts[("regex", "ra_min")] = ra
        series.append((("regex", "ra_min"), "regex-automata minimizer", "#2ca02c", "6,4"))
    ref = data.get(("random", "hopcroft"), {})
    if 1 << 14 in ref:
        base = ref[1 << 14] / nlogn(1 << 14)
        pts[("ref", "nlogn")] = [(1 << e, base * nlogn(1 << e)) for e in range(10, 21)]
        series.append((("ref", "nlogn"), "n log n (fit at random 2^14)", "#777777", "2,3"))
    if not pts:
        sys.exit("no criterion data found: run `cargo bench -p detent-compiler --bench minimize`")
    xs = [math.log2(n) for v in pts.values() for n, _ in v]
    ys = [math.log10(t) for v in pts.values() for _, t in v if t > 0]
    x0, x1 = math.floor(min(xs)), math.ceil(max(xs))
    y0, y1 = math.floor(min(ys)), math.ceil(max(ys))
    W, H, L, R, T, B = 760, 480, 70, 250, 20, 50
    pw, ph = W - L - R, H - T - B

    def X(n):
        return L + (math.log2(n) - x0) / (x1 - x0) * pw

    def Y(t):
        return T + (y1 - math.log10(t)) / (y1 - y0) * ph

    el = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{W}" height="{H}" font-family="sans-serif" font-size="12">',
          f'<rect width="{W}" height="{H}" fill="white"/>']
    for e in range(x0, x1 + 1):
        x = L + (e - x0) / (x1 - x0) * pw
        el.append(f'<line x1="{x:.1f}" y1="{T}" x2="{x:.1f}" y2="{T + ph}" stroke="#eee"/>')
        el.append(f'<text x="{x:.1f}" y="{T + ph + 16}" text-anchor="middle">2^{e}</text>')
    for e in range(y0, y1 + 1):
        y = T + (y1 - e) / (y1 - y0) * ph
        el.append(f'<line x1="{L}" y1="{y:.1f}" x2="{L + pw}" y2="{y:.1f}" stroke="#eee"/>')
        label = {-6: "1 µs", -5: "10 µs", -4: "100 µs", -3: "1 ms", -2: "10 ms", -1: "100 ms", 0: "1 s", 1: "10 s", 2: "100 s"}.get(e, f"1e{e} s")
        el.append(f'<text x="{L - 6}" y="{y + 4:.1f}" text-anchor="end">{label}</text>')
    el.append(f'<rect x="{L}" y="{T}" width="{pw}" height="{ph}" fill="none" stroke="#444"/>')
    el.append(f'<text x="{L + pw / 2}" y="{H - 10}" text-anchor="middle">states</text>')
    el.append(f'<text x="16" y="{T + ph / 2}" text-anchor="middle" transform="rotate(-90 16 {T + ph / 2})">time per run</text>')
    ly = T + 10
    for key, name, color, dash in series:
        if key not in pts:
            continue
        d = " ".join(f"{X(n):.1f},{Y(t):.1f}" for n, t in pts[key] if t > 0)
        da = f' stroke-dasharray="{dash}"' if dash else ""
        el.append(f'<polyline points="{d}" fill="none" stroke="{color}" stroke-width="2"{da}/>')
        if key[0] != "ref":
            for n, t in pts[key]:
                el.append(f'<circle cx="{X(n):.1f}" cy="{Y(t):.1f}" r="2.5" fill="{color}"/>')
        el.append(f'<line x1="{L + pw + 12}" y1="{ly}" x2="{L + pw + 40}" y2="{ly}" stroke="{color}" stroke-width="2"{da}/>')
        el.append(f'<text x="{L + pw + 46}" y="{ly + 4}">{name}</text>')
        ly += 18
    el.append("</svg>")
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(el) + "\n")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    target = os.environ.get("CARGO_TARGET_DIR", str(ROOT / "target"))
    ap.add_argument("--criterion", default=str(Path(target) / "criterion"))
    ap.add_argument("--out", default=str(ROOT / "docs" / "minimize-growth.svg"))
    args = ap.parse_args()
    data = load(Path(args.criterion))
    svg(data, Path(args.out))
    print(tables(data))
    print(f"\nwrote {args.out}", file=sys.stderr)


if __name__ == "__main__":
    main()
