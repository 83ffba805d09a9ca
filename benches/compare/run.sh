#!/usr/bin/env bash
# Regenerates BENCHMARKS.md's measured sections on this machine: the side-by-side comparison
# with numpy/scipy (compare.py), callgrind instruction counts of the whole command on 2 s of
# cu8 at 2.4 MS/s (am, dsb, usb), and the roofline figure (benches/roofline.rs). The baseline
# and the criterion before/after table are kept from benches/compare/static.md (criterion
# needs the old commit built beside the new one; see that file for how they were taken).
# Needs numpy, scipy and valgrind. Usage: bash benches/compare/run.sh [SECONDS] [RUNS]
set -euo pipefail
cd "$(dirname "$0")/../.."
seconds=${1:-20}
runs=${2:-5}
cargo build --release --quiet
out=target/bench-report
mkdir -p "$out"
python3 benches/compare/compare.py --seconds "$seconds" --runs "$runs" --markdown "$out/compare.md"
python3 - "$out/scene2.json" <<'PY'
import json, sys
s = json.load(open("benches/compare/scene.json"))
s["duration_s"] = 2.0
json.dump(s, open(sys.argv[1], "w"))
PY
target/release/amrx synth "$out/scene2.json" --out "$out/rec2" > /dev/null
{
    echo "| command (2 s of cu8 at 2.4 MS/s, -300 kHz) | instructions |"
    echo "|---|---|"
    for mode in am dsb usb; do
        valgrind --tool=callgrind --callgrind-out-file="$out/cg.$mode" \
            target/release/amrx demod "$out/rec2.sigmf-meta" --mode "$mode" --offset -300000 \
            --out "$out/$mode.wav" --quiet 2> "$out/cg.$mode.log"
        refs=$(awk '/Collected/ {print $4}' "$out/cg.$mode.log")
        echo "| amrx demod --mode $mode | $(python3 -c "print(f'{$refs/1e6:.1f} M')") |"
    done
} > "$out/callgrind.md"
cargo bench --quiet --bench roofline 2>/dev/null | sed '1a\\' > "$out/roofline.md"
{
    cat benches/compare/static.md
    echo
    echo "## Side by side with numpy/scipy (\`benches/compare/compare.py\`, $(date -u +%Y-%m-%d))"
    echo
    cat "$out/compare.md"
    echo
    echo "## Instruction counts (valgrind --tool=callgrind)"
    echo
    cat "$out/callgrind.md"
    echo
    echo "## Roofline (\`cargo bench --bench roofline\`)"
    echo
    cat "$out/roofline.md"
} > BENCHMARKS.md
echo "wrote BENCHMARKS.md"
