#!/usr/bin/env bash
# Soak test (not run in CI): SECONDS of simulated cu8 stream at 2.4 MS/s (random bytes, i.e.
# noise, from /dev/urandom) through `amrx demod` on standard input, full pipeline to a WAV on
# /dev/null, sampling the receiver's resident memory every 5 s. Prints samples in and out
# (from the report) and the peak and last RSS. Default one hour.
# Usage: bash scripts/soak.sh [SECONDS] [MODE]
set -euo pipefail
cd "$(dirname "$0")/.."
seconds=${1:-3600}
mode=${2:-sam}
rate=2400000
cargo build --release --quiet
work=$(mktemp -d)
bytes=$((seconds * rate * 2))
head -c "$bytes" /dev/urandom \
    | target/release/amrx demod - --format cu8 --rate "$rate" --mode "$mode" --quiet \
        --out /dev/null --report "$work/soak.json" &
pid=$!
peak=0
rss=0
start=$(date +%s)
echo "time_s rss_kib" > "$work/rss.txt"
while kill -0 "$pid" 2>/dev/null; do
    # $! of a background pipeline is its last command: amrx.
    if [ -r "/proc/$pid/status" ]; then
        rss=$(awk '/^VmRSS/ {print $2}' "/proc/$pid/status" 2>/dev/null || echo 0)
        rss=${rss:-0}
        [ "$rss" -gt "$peak" ] && peak=$rss
        echo "$(( $(date +%s) - start )) $rss" >> "$work/rss.txt"
    fi
    sleep 5
done
wait "$pid"
elapsed=$(( $(date +%s) - start ))
python3 - "$work/soak.json" "$bytes" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
expected = int(sys.argv[2]) // 2
print(f"samples in  {r['samples_in']} of {expected} sent")
print(f"samples out {r['samples_out']} at {r['audio_rate']} Hz "
      f"(expected {expected * r['audio_rate'] / r['input_rate']:.0f})")
PY
echo "elapsed ${elapsed} s for ${seconds} s of stream"
echo "RSS peak ${peak} KiB, samples: $(wc -l < "$work/rss.txt") (in $work/rss.txt)"
head -3 "$work/rss.txt" | tail -2
tail -2 "$work/rss.txt"
