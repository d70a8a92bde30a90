#!/usr/bin/env bash
# Takes a picture of every screen of Slopewise from a real window under
# Xvfb: the program walks through the demo by itself (SLOPEWISE_TOUR) and
# ImageMagick's import photographs the screen at each step.
# Usage: scripts/screenshots.sh BINARY OUTDIR [WIDTHxHEIGHT [light|dark]]
# (default 1100x760, the theme the system asks for, dark under Xvfb).
set -euo pipefail
bin=${1:-bin/slopewise}
out=${2:-docs/screenshots}
size=${3:-1100x760}
variant=${4:-}
"$(dirname "$0")/apt-install.sh" xvfb xauth imagemagick
mkdir -p "$out"
home=$(mktemp -d)   # a fresh home: no recent files, default window size
trap 'rm -rf "$home"' EXIT
HOME="$home" LANG=en_US.UTF-8 SLOPEWISE_TOUR="$out" SLOPEWISE_TOUR_SIZE="$size" FYNE_THEME="$variant" \
  timeout 180 xvfb-run -a -s "-screen 0 ${size}x24" "$bin"
ls "$out"
