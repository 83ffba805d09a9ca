#!/usr/bin/env bash
# The whole `amrx watch` command on a many-channel scene (not run in CI): SECONDS of ci16 at
# 2.4 MS/s, the 8.33 kHz raster across the capture (281 channels, ±1.167 MHz), 28 invented
# AM stations on it (some on all the time, some coming and going, a pair on adjacent
# channels), -100 dB/Hz noise. Runs the command RUNS times and prints each run's wall-clock
# and CPU seconds and peak RSS (/usr/bin/time), then the medians and the real-time factor.
# Usage: bash benches/watch_scene.sh [SECONDS] [RUNS] [MODE]
set -euo pipefail
cd "$(dirname "$0")/.."
seconds=${1:-20}
runs=${2:-5}
mode=${3:-am}
cargo build --release --quiet
out=target/bench-watch
mkdir -p "$out"
python3 - "$out/scene.json" "$seconds" "$mode" <<'PY'
import json, sys
path, seconds, mode = sys.argv[1], float(sys.argv[2]), sys.argv[3]
step = 25000 / 3
emissions = []
for i in range(28):
    k = (i * 37) % 281 - 140          # spread over the raster
    if i == 27:
        k = (26 * 37) % 281 - 140 + 1  # the neighbour of station 26
    start = 0.0 if i % 3 == 0 else (i % 7) * seconds / 10
    stop = seconds if i % 4 == 0 else min(seconds, start + seconds / 3 + i % 5)
    e = {"label": f"BENCH-{i:02}", "mode": mode, "offset_hz": k * step,
         "amplitude": 0.02 + 0.002 * (i % 10),
         "message": {"type": "tone", "frequency_hz": 300 + 70 * i},
         "start_s": start, "stop_s": stop}
    if mode == "am":
        e["mu"] = 0.6
    emissions.append(e)
scene = {"sample_rate": 2400000, "centre_frequency": 125000000, "duration_s": seconds,
         "datatype": "ci16_le", "seed": 281,
         "description": "amrx watch bench: invented stations on an 8.33 kHz raster",
         "noise": {"density_db_hz": -100}, "emissions": emissions}
json.dump(scene, open(path, "w"))
PY
target/release/amrx synth "$out/scene.json" --out "$out/raster" > /dev/null
first=$(python3 -c "print(125000000 - 140 * 25000 / 3)")
for run in $(seq "$runs"); do
    rm -rf "$out/wavs"
    /usr/bin/time -f "%e %U %S %M" -o "$out/time.$run" \
        target/release/amrx watch "$out/raster.sigmf-meta" --mode "$mode" --bandwidth 3000 \
        --carriers "$first:8333.333333:281" --out-dir "$out/wavs" \
        --json "$out/summary.json" --log "$out/activity.csv" --quiet > /dev/null
    read -r wall user sys rss < "$out/time.$run"
    echo "run $run: wall $wall s, cpu $(python3 -c "print(round($user + $sys, 2))") s, peak RSS $((rss / 1024)) MiB"
done
python3 - "$out" "$runs" "$seconds" <<'PY'
import statistics, sys
out, runs, seconds = sys.argv[1], int(sys.argv[2]), float(sys.argv[3])
rows = [list(map(float, open(f"{out}/time.{r}").read().split())) for r in range(1, runs + 1)]
wall = statistics.median(r[0] for r in rows)
cpu = statistics.median(r[1] + r[2] for r in rows)
rss = max(r[3] for r in rows) / 1024
print(f"median wall {wall:.2f} s ({seconds / wall:.1f}x real time), median CPU {cpu:.2f} s "
      f"({seconds / cpu:.1f}x real time per core), peak RSS {rss:.0f} MiB")
PY
echo "transmissions logged: $(($(wc -l < "$out/activity.csv") - 1)), files: $(ls "$out/wavs" | wc -l)"
