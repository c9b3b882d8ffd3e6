#!/usr/bin/env bash
# Re-creates the demo streams with leadline's own simulator. Every file here is synthetic:
# an invented bench, the fictitious "LL-2" front-end board and a simulated person.
set -euo pipefail
cd "$(dirname "$0")"
sim() { cargo run --quiet --release -- simulate "$@"; }
# Bench in a 60 Hz country, laptop on its charger: strong mains and odd harmonics.
sim --fs 500 --seconds 20 --hr 68 --seed 11 --mains 60 --mains-uv 40 --charger --out ll2-charger-60hz.csv
# The same bench and person a minute later, laptop on battery.
sim --fs 500 --seconds 20 --hr 66 --seed 12 --mains 60 --mains-uv 40 --out ll2-battery-60hz.csv
# A 50 Hz bench, breathing deeply and tensing the arm, as the board's text stream (ADC counts).
sim --fs 500 --seconds 20 --hr 84 --seed 13 --mains 50 --mains-uv 25 --wander-uv 250 --noise-uv 35 --format ascii --out ll2-moving-50hz.txt
