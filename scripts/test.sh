#!/usr/bin/env bash
# Installs everything the tests need, then runs every test, lint and build check.
#
#   scripts/test.sh
#
# Debian packages: iverilog (Verilog simulation), gcc-arm-none-eabi (Cortex-M
# cross-builds), graphviz (DOT parsing), cppcheck (C static analysis), librsvg2-bin
# (SVG rendering), chromium and chromium-driver (the viewer, tested in headless Chromium),
# cmake (cmake/Detent.cmake, tested by building a C program). The editor package's
# grammar test needs Node 20 and npm (the npm registry, for `npm ci`).
# Python packages (sympy, automata-lib, selenium) go into .venv/. Nothing is
# skipped: a tool that cannot be installed makes this script fail and say why.
set -euo pipefail
cd "$(dirname "$0")/.."

say() { printf '\n== %s\n' "$*"; }

say "Debian packages"
missing=()
for pair in iverilog:iverilog arm-none-eabi-gcc:gcc-arm-none-eabi arm-none-eabi-size:binutils-arm-none-eabi \
            dot:graphviz cppcheck:cppcheck rsvg-convert:librsvg2-bin gcc:gcc \
            chromium:chromium chromedriver:chromium-driver cmake:cmake; do
  tool=${pair%%:*}; pkg=${pair#*:}
  command -v "$tool" >/dev/null 2>&1 || missing+=("$pkg")
done
if [ ${#missing[@]} -gt 0 ]; then
  echo "installing: ${missing[*]}"
  if [ "$(id -u)" -eq 0 ]; then SUDO=""; else SUDO="sudo"; fi
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq "${missing[@]}" >/dev/null
fi
for tool in iverilog vvp arm-none-eabi-gcc arm-none-eabi-size dot cppcheck rsvg-convert gcc \
            chromium chromedriver cmake; do
  command -v "$tool" >/dev/null 2>&1 || { echo "error: $tool is still missing after installing"; exit 1; }
done

say "Python reference tools (.venv)"
if [ ! -x .venv/bin/python ]; then
  python3 -m venv .venv
fi
.venv/bin/python -m pip install -q --disable-pip-version-check -r tests/python/requirements.txt
export DETENT_PYTHON="$PWD/.venv/bin/python"

say "Format and lints"
cargo fmt --all -- --check
cargo clippy --workspace --all-targets -- -D warnings

say "Runtime features"
for f in defmt serde defmt-trace; do
  cargo build -q -p detent --features "$f"
done
cargo build -q -p detent --all-features

say "Tests"
if cargo nextest --version >/dev/null 2>&1; then
  cargo nextest run --workspace --no-fail-fast
else
  cargo test --workspace --no-fail-fast
fi
cargo test --workspace --doc

say "Fuzz targets (fuzz/, libFuzzer through cargo-fuzz; RELIABILITY.md, \"Fuzzing\")"
# A short run of each target from the committed seeds, with a fixed seed so a CI run
# is repeatable. Builds with debug assertions (overflow checks) and without the
# address sanitizer (the compiler has no unsafe code). A crash fails the script and
# leaves the input in fuzz/artifacts/TARGET/.
FUZZ_SECONDS=${FUZZ_SECONDS:-60}
if ! cargo +nightly --version >/dev/null 2>&1; then
  rustup toolchain install nightly --profile minimal
fi
if ! command -v cargo-fuzz >/dev/null 2>&1; then
  cargo install cargo-fuzz --locked
fi
fuzz_started=$(date +%s)
(cd fuzz && cargo fmt -- --check)
(cd fuzz && cargo +nightly fuzz build -O -a -s none)
echo "fuzz build: $(( $(date +%s) - fuzz_started )) s"
fuzz_corpus=$(mktemp -d)
trap 'rm -rf "$fuzz_corpus"' EXIT
for t in spec trace csv structured; do
  dict=()
  [ "$t" = structured ] || dict=(-dict=detent.dict)
  mkdir -p "$fuzz_corpus/$t"
  if ! (cd fuzz && cargo +nightly fuzz run -O -a -s none "$t" "$fuzz_corpus/$t" "seeds/$t" -- \
        "${dict[@]}" -seed=24 -max_total_time="$FUZZ_SECONDS" -timeout=10 -rss_limit_mb=4096 \
        -print_final_stats=1) >"$fuzz_corpus/$t.log" 2>&1; then
    tail -60 "$fuzz_corpus/$t.log"
    echo "error: fuzz target $t found a crash (input in fuzz/artifacts/$t/)"
    exit 1
  fi
  echo "fuzz $t: $(grep -o 'stat::number_of_executed_units: [0-9]*' "$fuzz_corpus/$t.log" | grep -o '[0-9]*$') executions," \
       "$(grep -E '^#[0-9]+[[:space:]]+DONE' "$fuzz_corpus/$t.log" | grep -o 'cov: [0-9]*'), no crash"
done
echo "fuzz part: $(( $(date +%s) - fuzz_started )) s"

say "Editor package: the grammar tokenizes every example (editors/vscode)"
(cd editors/vscode && npm ci --no-audit --no-fund --loglevel=error && npm test &&
  npx vsce package --skip-license -o "$(mktemp -d)/detent.vsix")

say "Examples: the README's main command"
cargo run -q -p detent-cli -- check examples/*.detent
