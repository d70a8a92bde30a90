#!/bin/sh
# Removes what install.sh put into your home folder, as listed in
# ~/.local/share/slopewise/installed-files. Your settings and recent files
# (~/.config/fyne/org.slopewise.desktop) and your workbooks stay.
set -eu
datadir="${XDG_DATA_HOME:-$HOME/.local/share}"
own="$datadir/slopewise"
list="$own/installed-files"
if [ ! -f "$list" ]; then
  echo "uninstall.sh: Slopewise is not installed here ($list is missing)" >&2
  exit 1
fi
while IFS= read -r f; do
  rm -f "$f"
done < "$list"
rm -f "$list"
rmdir "$own" 2>/dev/null || true
if command -v update-desktop-database >/dev/null 2>&1; then
  update-desktop-database -q "$datadir/applications" || true
fi
echo "Slopewise is removed."
