#!/usr/bin/env bash
# Measures what the `detent::machine!` macro costs at compile time on a 1,000-state
# machine: `cargo build` of a one-file crate that expands it, against the same crate
# without the machine (both with warm dependencies; the leaf crate alone rebuilds).
#
# Usage: scripts/measure-macro-expansion.sh [STATES] [RUNS]
# With OPT_MACROS=1 the crates build the macro optimized
# (`[profile.dev.build-override] opt-level = 3`, common practice for heavy macros).
set -euo pipefail
states=${1:-1000}
runs=${2:-3}
root=$(cd "$(dirname "$0")/.." && pwd)
work=$(mktemp -d)
target=${CARGO_TARGET_DIR:-$root/target}/macro-expansion-bench${OPT_MACROS:+-opt}
trap 'rm -rf "$work"' EXIT

# A ring of states with guards, a group-free layout, Moore and Mealy outputs and
# actions: every state handles every event, so the spec checks clean.
spec() {
  echo "pub machine Big {"
  echo "    events Next, Back, Reset, Hold;"
  echo "    inputs fast, armed;"
  echo "    outputs even, odd, pulse;"
  echo "    actions step_done, reset_done;"
  echo "    start S0;"
  for ((i = 0; i < states; i++)); do
    next=$(((i + 1) % states)); skip=$(((i + 2) % states)); prev=$(((i + states - 1) % states))
    if ((i % 2 == 0)); then emit=even; else emit=odd; fi
    echo "    state S$i emit $emit {"
    echo "        Next if fast => S$skip, do step_done;"
    echo "        Next if !fast => S$next, emit pulse;"
    echo "        Back => S$prev;"
    echo "        Reset if armed => S0, do reset_done;"
    echo "        Reset if !armed => stay;"
    echo "        Hold => stay;"
    echo "    }"
  done
  echo "}"
}

make_crate() { # name, with_machine(0|1), dispatch
  local dir=$work/$1
  mkdir -p "$dir/src"
  cat >"$dir/Cargo.toml" <<TOML
[package]
name = "$1"
version = "0.0.0"
edition = "2021"
publish = false
[dependencies]
detent = { path = "$root/runtime" }
[workspace]
TOML
  if [[ ${OPT_MACROS:-0} == 1 ]]; then
    printf '[profile.dev.build-override]\nopt-level = 3\n' >>"$dir/Cargo.toml"
  fi
  cp "$root/Cargo.lock" "$dir/Cargo.lock"
  {
    if [[ $2 == 1 ]]; then
      echo "detent::machine! {"
      echo "#[dispatch($3)]"
      spec
      echo "}"
      echo "fn main() { let m = big::Machine::new(); println!(\"{:?}\", m.state()); }"
    else
      echo "fn main() { println!(\"S0\"); }"
    fi
  } >"$dir/src/main.rs"
}

make_crate bench_empty 0 table
make_crate bench_table 1 table
make_crate bench_match 1 match
echo "spec: $states states, $(spec | wc -l) lines; $runs runs each, wall seconds for the leaf crate (debug)"
for cmd in check build; do
  for name in bench_empty bench_table bench_match; do
    CARGO_TARGET_DIR=$target cargo $cmd -q --offline --manifest-path "$work/$name/Cargo.toml"
    times=()
    for ((r = 0; r < runs; r++)); do
      touch "$work/$name/src/main.rs"
      start=$(date +%s.%N)
      CARGO_TARGET_DIR=$target cargo $cmd -q --offline --manifest-path "$work/$name/Cargo.toml"
      end=$(date +%s.%N)
      times+=("$(echo "$end - $start" | bc)")
    done
    echo "cargo $cmd $name: ${times[*]}"
  done
done
spec >"$work/big.detent"
gen=${CARGO_TARGET_DIR:-$root/target}/release/detent
if [[ -x $gen ]]; then
  start=$(date +%s.%N)
  "$gen" gen rust "$work/big.detent" -o "$work/big.rs"
  end=$(date +%s.%N)
  echo "detent gen rust (release CLI, parse + check + generate + format): $(echo "$end - $start" | bc) s, $(wc -c <"$work/big.rs") bytes"
fi
