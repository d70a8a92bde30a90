#!/usr/bin/env bash
# Takes a picture of every screen of Slopewise from a real window under
# Xvfb: the program walks through the demo by itself (SLOPEWISE_TOUR) and
# ImageMagick's import photographs the screen at each step.
# Usage: scripts/screenshots.sh BINARY OUTDIR
set -euo pipefail
bin=${1:-bin/slopewise}
out=${2:-docs/screenshots}
"$(dirname "$0")/apt-install.sh" xvfb xauth imagemagick
mkdir -p "$out"
home=$(mktemp -d)   # a fresh home: no recent files, default window size
trap 'rm -rf "$home"' EXIT
HOME="$home" LANG=en_US.UTF-8 SLOPEWISE_TOUR="$out" \
  timeout 180 xvfb-run -a -s "-screen 0 1100x760x24" "$bin"
ls "$out"
