#!/usr/bin/env bash
# Runs every fuzz target for SECONDS (default 60) each, starting from the committed seeds in
# fuzz/corpus/TARGET (new finds go to fuzz/work/TARGET, not committed), and prints libFuzzer's
# closing statistics. Needs nightly Rust and `cargo install cargo-fuzz`.
# Usage: bash fuzz/run.sh [SECONDS] [TARGET...]
set -euo pipefail
cd "$(dirname "$0")"
seconds=${1:-60}
shift || true
targets=("$@")
if [ ${#targets[@]} -eq 0 ]; then
    targets=(sigmf_meta sample_decoders wav_iq raw_framing scene cli_options)
fi
cargo +nightly fuzz build >/dev/null
status=0
for t in "${targets[@]}"; do
    mkdir -p "work/$t" "artifacts/$t"
    echo "== $t ($seconds s)"
    if ! cargo +nightly fuzz run "$t" "work/$t" "corpus/$t" -- \
        -max_total_time="$seconds" -timeout=20 -rss_limit_mb=2048 -print_final_stats=1 \
        -artifact_prefix="artifacts/$t/" 2>"work/$t.log"; then
        echo "   CRASH or timeout: see fuzz/work/$t.log and fuzz/artifacts/$t/"
        status=1
    fi
    grep -E "^(#[0-9]+.*DONE|stat::number_of_executed_units|stat::peak_rss_mb|Done [0-9]+ runs)" "work/$t.log" || true
    grep -E "cov: [0-9]+" "work/$t.log" | tail -1 || true
done
exit $status
