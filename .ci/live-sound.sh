#!/usr/bin/env bash
# Live sound for CI and for developers: a private PulseAudio server with two null sinks, `out`
# (the default output; tests record its monitor) and `iq_in` (its monitor is the default
# input; tests play IQ WAVs into it). No sound hardware, no dbus, nothing under $HOME.
#   source .ci/live-sound.sh; live_sound_install; live_sound_start; ...; live_sound_stop
# Recipe and the reasons for each flag: ../shared/LIVE-AUDIO-TESTING.md (measured there).

live_sound_install() {
    # The ALSA headers build the `sound` feature; the server, its tools and the ALSA plugin
    # that routes ALSA clients (cpal) to it run the tests.
    local need=()
    for p in libasound2-dev pkg-config pulseaudio pulseaudio-utils libasound2-plugins; do
        dpkg -s "$p" >/dev/null 2>&1 || need+=("$p")
    done
    if ((${#need[@]})); then
        apt-get update -qq
        apt-get install -y -qq --no-install-recommends "${need[@]}" >/dev/null
    fi
}

live_sound_start() {
    LIVE_SOUND_DIR=$(mktemp -d)
    local d=$LIVE_SOUND_DIR
    export XDG_RUNTIME_DIR=$d PULSE_RUNTIME_PATH=$d/pulse PULSE_STATE_PATH=$d/state \
        PULSE_SERVER=unix:$d/pulse/native PULSE_COOKIE=$d/cookie
    mkdir -p -m 700 "$d/pulse" "$d/state"
    # --disable-shm: without it the server aborts after minutes (memfd errors).
    pulseaudio --daemonize=yes -n --exit-idle-time=-1 --use-pid-file=yes --disable-shm=yes \
        --log-target=file:"$d/pulse.log" \
        -L "module-native-protocol-unix auth-anonymous=1 auth-cookie-enabled=0 socket=$d/pulse/native" \
        -L "module-null-sink sink_name=out rate=48000 format=float32le channels=2" \
        -L "module-null-sink sink_name=iq_in rate=48000 format=float32le channels=2" \
        -L module-always-sink
    local tries=0
    until pactl info >/dev/null 2>&1; do
        sleep 0.1
        tries=$((tries + 1))
        ((tries < 100)) || { echo "sound server did not start"; cat "$d/pulse.log"; return 1; }
    done
    pactl set-default-sink out
    pactl set-default-source iq_in.monitor
    # One low-latency reader on each monitor, or an idle null sink renders in large blocks
    # and every new stream waits up to 1.5 s for its first data.
    parec -d out.monitor --latency-msec=5 --raw >/dev/null &
    LIVE_SOUND_KEEPERS=$!
    parec -d iq_in.monitor --latency-msec=5 --raw >/dev/null &
    LIVE_SOUND_KEEPERS="$LIVE_SOUND_KEEPERS $!"
}

live_sound_stop() {
    # Only what live_sound_start started: the two keepers (by id) and this server.
    local pid
    for pid in ${LIVE_SOUND_KEEPERS:-}; do kill "$pid" 2>/dev/null || true; done
    pulseaudio -k 2>/dev/null || true
    rm -rf "${LIVE_SOUND_DIR:-/nonexistent}"
}
