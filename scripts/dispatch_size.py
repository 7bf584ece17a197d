#!/usr/bin/env python3
"""Code size of `step` in the dispatch benchmark, per (size, form).

    python3 scripts/dispatch_size.py            # builds, then prints a Markdown table
    python3 scripts/dispatch_size.py --no-build # reuse the last object

Builds the benchmark crate's library in release as an object file,
`cargo rustc --release -p detent-bench --lib -- --emit=obj,link -C codegen-units=1`
(one codegen unit, so there is one object and its sections are per function and per
static: rustc's default function and data sections), then for each form's
`<size>::<form>::step_entry` (the out-of-line `step` the benchmark times) follows the
relocations from its text section to everything it reaches: the functions it calls
that were not inlined (guard and action helpers), jump tables, lookup tables and the
form's static tables (`CELLS`, `RULES`, `MOORE`, `ACTIONS`); of the shared pools of
mergeable constants (`.rodata.cst<N>`) it counts N bytes per constant referenced. It prints the bytes of
code (`.text.*`) and read-only data (`.rodata.*`, `.data.rel.ro.*`) reached, and the
symbols outside the object it references (there should be none: no panic path).
Needs binutils' `readelf`.
"""

import glob
import os
import re
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TARGET = os.environ.get("CARGO_TARGET_DIR", os.path.join(ROOT, "target"))
SIZES = ["small", "medium", "large"]
FORMS = ["hand", "table", "matched"]


def build():
    subprocess.run(
        ["cargo", "rustc", "--release", "-q", "-p", "detent-bench", "--lib", "--",
         "--emit=obj,link", "-C", "codegen-units=1"],
        cwd=ROOT, check=True)


def readelf(args, obj):
    return subprocess.run(["readelf", "-W"] + args + [obj], check=True,
                          capture_output=True, text=True).stdout


def sections(obj):
    """{index: (name, size)}"""
    out = {}
    for line in readelf(["-S"], obj).splitlines():
        m = re.match(r"\s*\[\s*(\d+)\]\s+(\S*)\s+\S+\s+[0-9a-f]+\s+[0-9a-f]+\s+([0-9a-f]+)",
                     line)
        if m:
            out[int(m.group(1))] = (m.group(2), int(m.group(3), 16))
    return out


def symbols(obj):
    """{name: section index or None (undefined)}, plus the list of all names."""
    out = {}
    for line in readelf(["-s"], obj).splitlines():
        parts = line.split()
        if len(parts) < 8 or not parts[0].rstrip(":").isdigit():
            continue
        ndx, name = parts[6], parts[7]
        out[name] = int(ndx) if ndx.isdigit() else None
    return out


def relocations(obj, secs):
    """{section index: [(target symbol or section name)]}"""
    by_name = {name: i for i, (name, _) in secs.items()}
    out = {}
    current = None
    for line in readelf(["-r"], obj).splitlines():
        m = re.match(r"Relocation section '\.rela?(\S+)'", line)
        if m:
            current = by_name.get(m.group(1))
            out.setdefault(current, [])
            continue
        parts = line.split()
        if current is None or len(parts) < 5 or not re.match(r"[0-9a-f]{8,}", parts[0]):
            continue
        addend = parts[6] if len(parts) >= 7 and parts[5] in "+-" else "0"
        out[current].append((parts[4], parts[5] + addend if addend != "0" else "0"))
    return out


def reach(entry_sec, secs, syms, relocs):
    by_name = {name: i for i, (name, _) in secs.items()}
    seen, todo, external, pooled = set(), [entry_sec], set(), set()
    while todo:
        s = todo.pop()
        if s in seen:
            continue
        seen.add(s)
        for target, addend in relocs.get(s, []):
            pool = target if target.startswith(".rodata.cst") else None
            if target in syms and syms[target] is not None:
                name = secs[syms[target]][0]
                pool = name if name.startswith(".rodata.cst") else pool
            if pool is not None:
                # A pool of mergeable constants shared by every function: count the
                # constants referenced (`N` bytes each), not the pool.
                pooled.add((pool, target, addend))
            elif target in syms and syms[target] is not None:
                todo.append(syms[target])
            elif target in by_name:
                todo.append(by_name[target])
            else:
                external.add(target)
    return seen, external, pooled


def main():
    if "--no-build" not in sys.argv:
        build()
    objs = sorted(glob.glob(os.path.join(TARGET, "release", "deps", "detent_bench-*.o")),
                  key=os.path.getmtime)
    if not objs:
        sys.exit("no object found: run without --no-build")
    obj = objs[-1]
    secs, syms = sections(obj), symbols(obj)
    relocs = relocations(obj, secs)
    print(f"object: {os.path.relpath(obj, ROOT)}")
    print("| size | form | step code (bytes) | read-only data (bytes) | functions | external |")
    print("|---|---|---:|---:|---:|---|")
    for size in SIZES:
        for form in FORMS:
            key = f"{len(size)}{size}{len(form)}{form}10step_entry"
            entry = [n for n in syms if key in n and not n.startswith(".") and syms[n] is not None]
            if len(entry) != 1:
                sys.exit(f"{size}::{form}::step_entry: found {entry}")
            seen, external, pooled = reach(syms[entry[0]], secs, syms, relocs)
            text = sum(secs[i][1] for i in seen if secs[i][0].startswith(".text"))
            funcs = sum(1 for i in seen if secs[i][0].startswith(".text"))
            data = sum(secs[i][1] for i in seen
                       if secs[i][0].startswith((".rodata", ".data.rel.ro")))
            data += sum(int(pool[len(".rodata.cst"):]) for pool, _, _ in pooled)
            ext = ", ".join(sorted(external)) or "none"
            print(f"| {size} | {form} | {text} | {data} | {funcs} | {ext} |")


if __name__ == "__main__":
    main()
