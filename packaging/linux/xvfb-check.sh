#!/usr/bin/env bash
# Installs the Linux tarball into a temporary home folder, opens the demo
# workbook with the installed menu entry (as "Open with" does: gio launch
# runs the entry's Exec line with the file for %F) in a real window under
# Xvfb, and photographs the screen.
# Usage, after `make dist`: packaging/linux/xvfb-check.sh OUT.png
set -euo pipefail
out=$(realpath -m "${1:?usage: xvfb-check.sh OUT.png}")
cd "$(dirname "$0")/../.."
scripts/apt-install.sh xvfb imagemagick libglib2.0-bin desktop-file-utils x11-utils
version=$(sed -n 's/^ *Version *= *"\([^"]*\)".*/\1/p' FyneApp.toml)
name="slopewise-$version"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
home="$work/home"
mkdir -p "$home" "$work/unpacked"
tar -xzf "dist/$name-linux-amd64.tar.gz" -C "$work/unpacked"
HOME="$home" XDG_DATA_HOME="" "$work/unpacked/$name/install.sh"
rm -rf "$work/unpacked"
HOME="$home" "$home/.local/bin/slopewise" demo "$home/Documents" > /dev/null
echo "installed entry:"
grep -E '^(Exec|Icon|MimeType)=' "$home/.local/share/applications/slopewise.desktop"
echo "programs for text/csv: $(grep '^text/csv=' "$home/.local/share/applications/mimeinfo.cache")"

cat > "$work/session.sh" <<'INNER'
set -u
gio launch "$HOME/.local/share/applications/slopewise.desktop" "$HOME/Documents/slopewise-demo.xlsx" &
for _ in $(seq 1 60); do
  sleep 1
  xwininfo -root -tree 2>/dev/null | grep -q '"Slopewise' && break
done
sleep 6 # let the workbook load and the window draw
xwininfo -root -tree 2>/dev/null | grep '"Slopewise' | head -3
xprop -name Slopewise WM_CLASS
echo "window icon sizes: $(xprop -name Slopewise _NET_WM_ICON | grep -o 'Icon ([0-9]* x [0-9]*)' | tr '\n' ' ')"
import -window root "$OUT"
pid=$(xprop -name Slopewise _NET_WM_PID | sed -n 's/.*= //p')
[ -n "$pid" ] && kill "$pid"
INNER
HOME="$home" LANG=en_US.UTF-8 OUT="$out" XDG_DATA_DIRS="$home/.local/share:/usr/share" \
  timeout 120 xvfb-run -a -s "-screen 0 1280x800x24" bash "$work/session.sh"
echo "screenshot: $out"
