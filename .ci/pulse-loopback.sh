#!/usr/bin/env bash
# Start a PulseAudio server with a float32 null sink and make its monitor the default source, so that
# PortAudio's "pulse" device plays into the sink and records back what was played (the loopback tests).
set -euo pipefail
export PULSE_RUNTIME_PATH="${PULSE_RUNTIME_PATH:-/tmp/benchnf-pulse}"
mkdir -p "$PULSE_RUNTIME_PATH"
pulseaudio --kill >/dev/null 2>&1 || true
pulseaudio --daemonize=yes --exit-idle-time=-1 --system=false -n \
  --load="module-native-protocol-unix" \
  --load="module-null-sink sink_name=benchnf_loop format=float32le rate=48000 channels=2" \
  --load="module-always-sink"
for _ in 1 2 3 4 5 6 7 8 9 10; do
  pactl info >/dev/null 2>&1 && break
  sleep 0.5
done
pactl set-default-sink benchnf_loop
pactl set-default-source benchnf_loop.monitor
echo "ci: PulseAudio loopback up ($(pactl info | grep 'Default Sink'))"
