#!/usr/bin/env bash
# Re-creates the README screenshots under Xvfb with the release build. Every picture shows our own
# simulator or the invented board of board_stream.py; nothing here is a recording of a person.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --bin leadline
bin=target/release/leadline
cfg=$(mktemp -d)
mkdir -p "$cfg/leadline" && touch "$cfg/leadline/caution-acknowledged"
trap 'rm -rf "$cfg"' EXIT
shot() { # NAME SECONDS ARGS...
  local name=$1 secs=$2; shift 2
  XDG_CONFIG_HOME="$cfg" xvfb-run -a -s "-screen 0 1280x900x24" \
    "$bin" monitor --size 1280x900 --exit-after "$secs" --screenshot "assets/$name.png" "$@"
}
shot spectrum 12 --view spectrum
shot beats 20 --view beats
shot response 6 --view response
shot parts 6 --view parts
shot emg 14 --view emg
shot twelve 14 --lead-set leads8 --view twelve
printf '[view]\ntheme = "light"\nlower = "beats"\n[synth]\nchannels = 3\n' > "$cfg/light.toml"
shot light 20 --config "$cfg/light.toml"
python3 assets/board_stream.py 40 "$cfg/pty" &
sleep 1
shot board 14 --source "serial:$(cat "$cfg/pty")" --adc-bits 10 --adc-vref 5 --frontend-gain 1000
wait || true  # the invented board stops by itself
# The schematic of the parts view's example chain (rsvg-convert from Debian's librsvg2-bin).
"$bin" parts --highpass 0.5 --notch 50 --lowpass 40 --lowpass-order 3 --fs 500 --inamp-gain 10 \
  --inamp-k 60000 --out "$cfg/parts.json" --schematic "$cfg/schematic.svg" 2>/dev/null
rsvg-convert -o assets/schematic.png "$cfg/schematic.svg"
