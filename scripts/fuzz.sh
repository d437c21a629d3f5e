#!/usr/bin/env bash
# Fuzzes plumb's parser and its read → find → resolve → fit path.
#
#   scripts/fuzz.sh [SECONDS_PER_TARGET]      (default 300)
#
# With a nightly toolchain and cargo-fuzz (`cargo install cargo-fuzz`), the
# libFuzzer targets in fuzz/ run for the budget each. Without them, the
# stable driver examples/fuzz_stable.rs runs the same target bodies
# (fuzz/targets.rs) on mutated inputs for the same budget. Crashes are saved
# under fuzz/artifacts/; each one found must become a regression test.
# PLUMB_FUZZ=stable forces the stable driver.
set -euo pipefail
cd "$(dirname "$0")/.."
budget="${1:-300}"
status=0
if [ "${PLUMB_FUZZ:-}" != "stable" ] && rustup toolchain list 2>/dev/null | grep -q '^nightly' && cargo fuzz --version >/dev/null 2>&1; then
  cargo run --quiet --release --example fuzz_stable -- --seeds fuzz/corpus/workbook
  for target in parse workbook; do
    echo "== cargo fuzz: $target for ${budget}s"
    (cd fuzz && cargo +nightly fuzz run "$target" "corpus/$target" -- -max_total_time="$budget" -max_len=65536) || status=1
  done
else
  cargo build --quiet --release --example fuzz_stable
  for target in parse workbook; do
    echo "== stable driver: $target for ${budget}s"
    target/release/examples/fuzz_stable "$target" "$budget" || status=1
  done
fi
exit "$status"
