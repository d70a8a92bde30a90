#!/usr/bin/env bash
# Builds the packages for evaluators into dist/ (`make dist`):
#
#   slopewise-VERSION-windows-amd64.zip
#       Slopewise.exe   the program; a double-click opens the window, with
#                       no console window (GUI subsystem)
#       slopewise.com   the same commands for a terminal (console
#                       subsystem): `slopewise analyze …` finds it first
#       README.txt, LICENSE.txt, THIRD_PARTY_LICENSES.txt
#   slopewise-VERSION-linux-amd64.tar.gz
#       bin/slopewise, share/applications/slopewise.desktop,
#       share/icons/hicolor/*/apps/slopewise.*, install.sh, uninstall.sh,
#       README, LICENSE, THIRD_PARTY_LICENSES
#   SHA256SUMS
#
# The version is FyneApp.toml's Version (and Build, the fourth number of
# the Windows file version): the one place it is set. The Windows programs
# are cross-compiled with mingw-w64 (package gcc-mingw-w64-x86-64), the
# icon, manifest and version information linked in as a .syso resource
# object made by its windres. The archives carry the last commit's time,
# so the same commit gives the same archives.
set -euo pipefail
cd "$(dirname "$0")/.."
GO=${GO:-go}

version=$(sed -n 's/^ *Version *= *"\([^"]*\)".*/\1/p' FyneApp.toml)
build=$(sed -n 's/^ *Build *= *\([0-9][0-9]*\).*/\1/p' FyneApp.toml)
if ! [[ $version =~ ^([0-9]+)\.([0-9]+)\.([0-9]+)$ && -n $build ]]; then
  echo "dist.sh: FyneApp.toml needs Version = \"MAJOR.MINOR.PATCH\" and Build = N (found \"$version\", \"$build\")" >&2
  exit 1
fi
v1=${BASH_REMATCH[1]} v2=${BASH_REMATCH[2]} v3=${BASH_REMATCH[3]}
export SOURCE_DATE_EPOCH=${SOURCE_DATE_EPOCH:-$(git log -1 --format=%ct 2>/dev/null || echo 315532800)}
ldflags="-s -w -X main.version=$version"

work=$(mktemp -d)
syso=cmd/app/rsrc_windows_amd64.syso
trap 'rm -rf "$work" "$syso"' EXIT
rm -rf dist
mkdir -p dist

fill() { # fill TEMPLATE: the template with the version fields filled in
  sed -e "s|@VERSION@|$version|g" -e "s|@V1@|$v1|g" -e "s|@V2@|$v2|g" \
    -e "s|@V3@|$v3|g" -e "s|@BUILD@|$build|g" "$1"
}

# resource FILENAME DESCRIPTION: the .syso that the next Windows build of
# cmd/app links in.
resource() {
  fill packaging/windows/slopewise.manifest.in > "$work/slopewise.manifest"
  fill packaging/windows/slopewise.rc.in |
    sed -e "s|@ICON@|$PWD/assets/icons/slopewise.ico|" \
      -e "s|@MANIFEST@|$work/slopewise.manifest|" \
      -e "s|@FILENAME@|$1|" -e "s|@DESCRIPTION@|$2|" > "$work/slopewise.rc"
  x86_64-w64-mingw32-windres -O coff -i "$work/slopewise.rc" -o "$syso"
}

# stamp DIR: every file the commit's time and ordinary permissions.
stamp() {
  find "$1" -exec touch -h -d "@$SOURCE_DATE_EPOCH" {} +
  chmod -R u=rwX,go=rX "$1"
}

windows() {
  local name="slopewise-$version"
  local w="$work/windows/$name"
  mkdir -p "$w"
  echo "dist: Windows, Slopewise.exe"
  resource Slopewise.exe "Slopewise"
  CGO_ENABLED=1 CC=x86_64-w64-mingw32-gcc GOOS=windows GOARCH=amd64 \
    $GO build -tags release -trimpath -ldflags "$ldflags -H=windowsgui" -o "$w/Slopewise.exe" ./cmd/app
  echo "dist: Windows, slopewise.com"
  resource slopewise.com "Slopewise command line"
  CGO_ENABLED=0 GOOS=windows GOARCH=amd64 \
    $GO build -tags release,nowindow -trimpath -ldflags "$ldflags" -o "$w/slopewise.com" ./cmd/app
  rm -f "$syso"
  # Windows' own line ends, so that any editor shows the text files right.
  fill packaging/windows/README.txt | sed 's/$/\r/' > "$w/README.txt"
  sed 's/$/\r/' LICENSE > "$w/LICENSE.txt"
  sed 's/$/\r/' THIRD_PARTY_LICENSES > "$w/THIRD_PARTY_LICENSES.txt"
  stamp "$w"
  (cd "$work/windows" && find "$name" | LC_ALL=C sort | zip -X -q -9 "$OLDPWD/dist/$name-windows-amd64.zip" -@)
}

linux() {
  local name="slopewise-$version"
  local l="$work/linux/$name"
  mkdir -p "$l/bin" "$l/share/applications"
  echo "dist: Linux, bin/slopewise"
  CGO_ENABLED=1 $GO build -tags release -trimpath -ldflags "$ldflags" -o "$l/bin/slopewise" ./cmd/app
  cp packaging/linux/slopewise.desktop "$l/share/applications/"
  for s in 16 22 24 32 48 64 128 256; do
    install -D -m 644 "assets/icons/${s}x$s.png" "$l/share/icons/hicolor/${s}x$s/apps/slopewise.png"
  done
  install -D -m 644 assets/icon.png "$l/share/icons/hicolor/512x512/apps/slopewise.png"
  install -D -m 644 assets/icon.svg "$l/share/icons/hicolor/scalable/apps/slopewise.svg"
  cp packaging/linux/install.sh packaging/linux/uninstall.sh "$l/"
  fill packaging/linux/README > "$l/README"
  cp LICENSE THIRD_PARTY_LICENSES "$l/"
  stamp "$l"
  tar --sort=name --owner=0 --group=0 --numeric-owner --mtime="@$SOURCE_DATE_EPOCH" \
    -C "$work/linux" -cf - "$name" | gzip -9n > "dist/$name-linux-amd64.tar.gz"
}

case "${DIST_ONLY:-}" in
windows) windows ;;
linux) linux ;;
"") windows; linux ;;
*) echo "dist.sh: DIST_ONLY is windows or linux" >&2; exit 2 ;;
esac
(cd dist && shopt -s nullglob && sha256sum -- *.zip *.tar.gz > SHA256SUMS)
ls -l dist
