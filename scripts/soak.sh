#!/usr/bin/env bash
# The soak run (RELIABILITY.md, "Soak run"): long, not part of scripts/test.sh.
#
#   scripts/soak.sh [SECONDS_PER_TARGET] [MACHINES]
#
# SECONDS_PER_TARGET 0 skips the fuzz part (for a soak of the differential suites alone,
# beside a fuzz run of its own).
#
# 1. Each fuzz target of fuzz/ (spec, trace, csv, structured) under libFuzzer for
#    SECONDS_PER_TARGET seconds (default 600), from the committed seeds plus the live
#    corpus in fuzz/corpus/TARGET (kept between runs, not committed), with the
#    language dictionary. A crash stops the script with libFuzzer's report; the input is
#    in fuzz/artifacts/TARGET/.
# 2. The differential suites with MACHINES random machines (default 10000; through
#    DETENT_SOAK_MACHINES): the lowered form against the language's lookup written out
#    (tests/tests/lowered.rs), then C under address and undefined-behaviour sanitizers
#    with hostile input hooks and a run of corrupt state bytes and bad arguments per
#    machine, Verilog under Icarus, minimization, and the Rust table and match forms
#    compiled in by tests/build.rs, each against the interpreter
#    (tests/tests/differential_all.rs). The Rust forms are built and run in chunks of
#    about 1,000 machines (DETENT_SOAK_CHUNK): rustc needs more than 24 GiB for one
#    crate of 10,000; the first chunk's build runs the other suites too.
#
# Prints one summary line per target with its counts. Installs cargo-fuzz and the
# nightly toolchain's use through `cargo +nightly` (the machine's rustup has nightly).
set -euo pipefail
cd "$(dirname "$0")/.."

SECONDS_PER_TARGET=${1:-600}
MACHINES=${2:-10000}
TARGETS=(spec trace csv structured)
LOG=target/soak
mkdir -p "$LOG"

command -v cargo-fuzz >/dev/null 2>&1 || cargo install cargo-fuzz --locked
export DETENT_PYTHON="${DETENT_PYTHON:-$PWD/.venv/bin/python}"

summary=()
started=$(date +%s)

# Sanitizer `none` with debug assertions: the compiler is safe Rust (no `unsafe`), so
# address sanitizing buys nothing and costs speed; debug assertions turn on overflow
# checks, so an arithmetic overflow is a crash.
FUZZ_FLAGS=(-O -a -s none)
if [ "$SECONDS_PER_TARGET" = 0 ]; then
  TARGETS=()
  summary+=("fuzz: skipped (SECONDS_PER_TARGET 0)")
else
  (cd fuzz && cargo +nightly fuzz build "${FUZZ_FLAGS[@]}")
fi
for t in "${TARGETS[@]}"; do
  mkdir -p "fuzz/corpus/$t"
  dict=()
  [ "$t" = structured ] || dict=(-dict=detent.dict)
  echo "== fuzz $t: ${SECONDS_PER_TARGET} s"
  if ! (cd fuzz && cargo +nightly fuzz run "${FUZZ_FLAGS[@]}" "$t" "corpus/$t" "seeds/$t" -- \
        "${dict[@]}" -max_total_time="$SECONDS_PER_TARGET" -timeout=10 -rss_limit_mb=4096 \
        -print_final_stats=1) >"$LOG/fuzz_$t.log" 2>&1; then
    tail -60 "$LOG/fuzz_$t.log"
    echo "soak: fuzz target $t FAILED (log $LOG/fuzz_$t.log, input in fuzz/artifacts/$t/)"
    exit 1
  fi
  execs=$(grep -o 'stat::number_of_executed_units: [0-9]*' "$LOG/fuzz_$t.log" | grep -o '[0-9]*$' || echo "?")
  cov=$(grep -E '^#[0-9]+[[:space:]]+DONE' "$LOG/fuzz_$t.log" | grep -o 'cov: [0-9]*' | grep -o '[0-9]*$' || echo "?")
  ft=$(grep -E '^#[0-9]+[[:space:]]+DONE' "$LOG/fuzz_$t.log" | grep -o 'ft: [0-9]*' | grep -o '[0-9]*$' || echo "?")
  corp=$(grep -E '^#[0-9]+[[:space:]]+DONE' "$LOG/fuzz_$t.log" | grep -o 'corp: [0-9]*' | grep -o '[0-9]*$' || echo "?")
  summary+=("fuzz $t: $execs executions in ${SECONDS_PER_TARGET} s, cov $cov edges, ft $ft features, corpus $corp inputs, no crash")
  echo "${summary[-1]}"
done

echo "== differential suites with DETENT_SOAK_MACHINES=$MACHINES"
export DETENT_SOAK_MACHINES=$MACHINES
run_test() {
  local name=$1; shift
  if ! cargo test -p detent-tests "$@" -- --nocapture --test-threads=1 >"$LOG/$name.log" 2>&1; then
    tail -80 "$LOG/$name.log"
    echo "soak: $name FAILED (log $LOG/$name.log)"
    exit 1
  fi
}
run_test lowered --test lowered
summary+=("$(grep -o "lowered form vs the language's lookup: .*" "$LOG/lowered.log" | head -1)")
echo "${summary[-1]}"
chunks=$(( (MACHINES + 999) / 1000 ))
rust_machines=0
rust_steps=0
for (( k = 0; k < chunks; k++ )); do
  export DETENT_SOAK_CHUNK="$k/$chunks"
  echo "== Rust soak chunk $DETENT_SOAK_CHUNK$([ "$k" = 0 ] && echo ', with the C, Verilog and minimize suites')"
  if [ "$k" = 0 ]; then
    run_test differential --test differential_all
    while IFS= read -r line; do
      summary+=("$line")
      echo "$line"
    done < <(grep -oE 'differential [A-Za-z ]+: .*' "$LOG/differential.log")
    chunk_log="$LOG/differential.log"
  else
    run_test "rust_chunk_$k" --test differential_all soak_machines_agree
    chunk_log="$LOG/rust_chunk_$k.log"
  fi
  line=$(grep -oE 'differential Rust soak \(chunk [0-9/]+\): .*' "$chunk_log" | head -1)
  echo "$line"
  rust_machines=$(( rust_machines + $(echo "$line" | grep -oE '[0-9]+ machines' | grep -oE '^[0-9]+') ))
  rust_steps=$(( rust_steps + $(echo "$line" | grep -oE '[0-9]+ steps' | grep -oE '^[0-9]+') ))
done
summary+=("differential Rust soak: $rust_machines machines in $chunks chunks through Rust table and match, $rust_steps steps per form, no disagreement")
echo "${summary[-1]}"

echo
echo "== soak summary (${SECONDS_PER_TARGET} s per fuzz target, $MACHINES machines; $(( $(date +%s) - started )) s in all)"
printf '%s\n' "${summary[@]}"
