#!/usr/bin/env bash
# Renders the icon's source, assets/icon.svg, into the pictures the
# program and its packages use. Run it after changing the SVG and commit
# what it writes; building never needs it.
#   assets/icon.png            512 px: built into the program (window icon)
#                              and the icon FyneApp.toml names (macOS)
#   assets/icons/NxN.png       the Linux desktop's smaller sizes (hicolor)
#   assets/icons/slopewise.ico the Windows executable's icon
# Needs rsvg-convert (librsvg2-bin) and ImageMagick's convert.
set -euo pipefail
cd "$(dirname "$0")/.."
rsvg-convert -w 512 -h 512 icon.svg -o icon.png
for s in 16 22 24 32 48 64 128 256; do
  rsvg-convert -w "$s" -h "$s" icon.svg -o "icons/${s}x${s}.png"
done
(cd icons && convert 16x16.png 24x24.png 32x32.png 48x48.png 64x64.png 256x256.png slopewise.ico)
