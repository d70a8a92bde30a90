#!/bin/sh
# Installs Slopewise for you alone, without administrator rights:
#   the program        ~/.local/bin/slopewise
#   the menu entry     ~/.local/share/applications/slopewise.desktop,
#                      offered under "Open with" for .xlsx, .xlsm and .csv
#   the icon           ~/.local/share/icons/hicolor/<size>/apps/slopewise.*
# Run it from the unpacked folder: ./install.sh
# ~/.local/share/slopewise/uninstall.sh removes all of it again.
# XDG_DATA_HOME, if set, replaces ~/.local/share.
set -eu
here=$(cd "$(dirname "$0")" && pwd)
bindir="$HOME/.local/bin"
datadir="${XDG_DATA_HOME:-$HOME/.local/share}"
own="$datadir/slopewise"
list="$own/installed-files"

case "$bindir$datadir" in
*'"'* | *'`'* | *'$'* | *'\'*)
  echo "install.sh: the folder $bindir or $datadir holds a character a menu entry cannot name (\" \` \$ \\)" >&2
  exit 1 ;;
esac

mkdir -p "$bindir" "$datadir/applications" "$own"
: > "$list.new"

put() { # put MODE SOURCE TARGET
  mkdir -p "$(dirname "$3")"
  cp "$2" "$3.new" && chmod "$1" "$3.new" && mv -f "$3.new" "$3"
  echo "$3" >> "$list.new"
}

put 755 "$here/bin/slopewise" "$bindir/slopewise"
for icon in "$here"/share/icons/hicolor/*/apps/slopewise.*; do
  size=$(basename "$(dirname "$(dirname "$icon")")")
  put 644 "$icon" "$datadir/icons/hicolor/$size/apps/$(basename "$icon")"
done
# The menu entry names the program by its full path: ~/.local/bin is not
# on every desktop's search path.
entry=$(mktemp)
sed "s|^Exec=.*|Exec=\"$bindir/slopewise\" %F|" "$here/share/applications/slopewise.desktop" > "$entry"
put 644 "$entry" "$datadir/applications/slopewise.desktop"
rm -f "$entry"
put 755 "$here/uninstall.sh" "$own/uninstall.sh"
mv -f "$list.new" "$list"

# Tell the desktop about the new file types and icon; both tools are
# optional and their absence is harmless.
if command -v update-desktop-database >/dev/null 2>&1; then
  update-desktop-database -q "$datadir/applications" || true
fi
if command -v gtk-update-icon-cache >/dev/null 2>&1 && [ -f "$datadir/icons/hicolor/index.theme" ]; then
  gtk-update-icon-cache -q -t "$datadir/icons/hicolor" || true
fi

echo "Slopewise is installed: find it in your applications menu, or run"
echo "  $bindir/slopewise"
echo "Right-click a workbook and choose \"Open with\" to open it in Slopewise."
echo "To remove it: $own/uninstall.sh"
