#!/usr/bin/env bash
# Checks the packages that `make dist` left in dist/ (`make dist-check`,
# part of `make test`, so CI builds and checks them on every run):
# the checksums; the Windows programs' subsystems (no console window for
# Slopewise.exe, a console for slopewise.com), icon, manifest, version
# information and DLLs; the Linux tarball's files, its desktop entry, its
# program's headless commands, and its install and uninstall scripts in a
# temporary home folder.
set -euo pipefail
cd "$(dirname "$0")/.."
version=$(sed -n 's/^ *Version *= *"\([^"]*\)".*/\1/p' FyneApp.toml)
name="slopewise-$version"
zip="dist/$name-windows-amd64.zip"
tgz="dist/$name-linux-amd64.tar.gz"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

passed=0
ok() { passed=$((passed + 1)); }
fail() {
  echo "dist-check: $*" >&2
  echo "dist-check: $passed passed, 1 failed"
  exit 1
}

(cd dist && sha256sum --quiet -c SHA256SUMS) || fail "dist/SHA256SUMS does not match the archives"
for f in "$zip" "$tgz"; do
  grep -q " $(basename "$f")\$" dist/SHA256SUMS || fail "$f is not in dist/SHA256SUMS"
done
ok

# --- Windows ---
mkdir -p "$work/win"
(cd "$work/win" && unzip -q "$OLDPWD/$zip")
w="$work/win/$name"
for f in Slopewise.exe slopewise.com README.txt LICENSE.txt THIRD_PARTY_LICENSES.txt; do
  [ -f "$w/$f" ] || fail "$f is missing from $zip"
done
ok
for exe in Slopewise.exe slopewise.com; do
  x86_64-w64-mingw32-objdump -p "$w/$exe" > "$work/$exe.pe"
  grep -q '^Magic[[:space:]]*020b' "$work/$exe.pe" || fail "$exe is not a 64-bit (PE32+) program"
  # Resource types (objdump's top level of the resource directory):
  # 0x03 icon, 0x0e icon group, 0x10 version, 0x18 manifest.
  for t in 03 0e 10 18; do
    grep -q "^[0-9a-f]*   Entry: ID: 0x0000$t," "$work/$exe.pe" ||
      fail "$exe has no resource of type 0x$t (icon 03 and 0e, version 10, manifest 18)"
  done
  # Only Windows' own DLLs: nothing to ship beside the program.
  dlls=$(sed -n 's/^[[:space:]]*DLL Name: //p' "$work/$exe.pe" | tr 'A-Z' 'a-z' | sort -u | tr '\n' ' ')
  for d in $dlls; do
    case "$d" in
    kernel32.dll | user32.dll | gdi32.dll | opengl32.dll | shell32.dll | advapi32.dll | ole32.dll | \
      winmm.dll | ws2_32.dll | msvcrt.dll | dwmapi.dll | imm32.dll | shlwapi.dll | comctl32.dll | \
      comdlg32.dll | version.dll | winspool.drv | uxtheme.dll | oleaut32.dll | ntdll.dll | \
      powrprof.dll | iphlpapi.dll | secur32.dll | crypt32.dll | bcrypt.dll | userenv.dll) ;;
    *) fail "$exe needs $d, which Windows does not have" ;;
    esac
  done
  # The version information, in UTF-16 as Windows stores it.
  x86_64-w64-mingw32-strings -el "$w/$exe" > "$work/$exe.strings"
  grep -qx "$version" "$work/$exe.strings" || fail "$exe's version information does not say $version"
  grep -qx "Slopewise" "$work/$exe.strings" || fail "$exe's version information does not name Slopewise"
done
grep -q 'Subsystem.*(Windows GUI)' "$work/Slopewise.exe.pe" ||
  fail "Slopewise.exe is not a GUI-subsystem program: a double-click would open a console window"
grep -q 'Subsystem.*(Windows CUI)' "$work/slopewise.com.pe" ||
  fail "slopewise.com is not a console program: a terminal would not wait for it"
ok
tr -d '\r' < "$w/THIRD_PARTY_LICENSES.txt" | cmp -s - THIRD_PARTY_LICENSES ||
  fail "the Windows package's THIRD_PARTY_LICENSES.txt is not the repository's"
ok

# --- Linux ---
mkdir -p "$work/lin"
tar -xzf "$tgz" -C "$work/lin"
l="$work/lin/$name"
for f in bin/slopewise install.sh uninstall.sh README LICENSE THIRD_PARTY_LICENSES \
  share/applications/slopewise.desktop share/icons/hicolor/scalable/apps/slopewise.svg; do
  [ -f "$l/$f" ] || fail "$f is missing from $tgz"
done
for s in 16 22 24 32 48 64 128 256 512; do
  [ -f "$l/share/icons/hicolor/${s}x$s/apps/slopewise.png" ] || fail "the ${s}x$s icon is missing from $tgz"
done
[ -x "$l/bin/slopewise" ] && [ -x "$l/install.sh" ] && [ -x "$l/uninstall.sh" ] ||
  fail "the program or the scripts in $tgz are not executable"
cmp -s "$l/THIRD_PARTY_LICENSES" THIRD_PARTY_LICENSES || fail "the Linux package's THIRD_PARTY_LICENSES is not the repository's"
ok
desktop-file-validate "$l/share/applications/slopewise.desktop" || fail "the desktop entry is not valid"
for t in application/vnd.openxmlformats-officedocument.spreadsheetml.sheet application/vnd.ms-excel.sheet.macroEnabled.12 text/csv; do
  grep -q "^MimeType=.*$t;" "$l/share/applications/slopewise.desktop" || fail "the desktop entry does not offer to open $t"
done
grep -q '^Exec=slopewise %F$' "$l/share/applications/slopewise.desktop" || fail "the desktop entry does not pass the files (%F)"
ok
[ "$("$l/bin/slopewise" version)" = "slopewise $version" ] ||
  fail "bin/slopewise version says \"$("$l/bin/slopewise" version)\", want \"slopewise $version\""
"$l/bin/slopewise" demo "$work/demo" > /dev/null 2>&1
"$l/bin/slopewise" analyze "$work/demo/slopewise-demo.xlsx" --outcome earnings_6m --treatment coached \
  --moderator region --dry-run --json > "$work/analyze.json" 2> "$work/analyze.err" ||
  fail "bin/slopewise analyze failed: $(cat "$work/analyze.err")"
grep -q '"groups"' "$work/analyze.json" || fail "bin/slopewise analyze --json did not print the results"
ok

# Install into a temporary home folder, then uninstall.
home="$work/home"
mkdir -p "$home"
HOME="$home" XDG_DATA_HOME="" "$l/install.sh" > "$work/install.log"
share="$home/.local/share"
entry="$share/applications/slopewise.desktop"
for f in "$home/.local/bin/slopewise" "$entry" "$share/icons/hicolor/48x48/apps/slopewise.png" \
  "$share/icons/hicolor/scalable/apps/slopewise.svg" "$share/slopewise/uninstall.sh"; do
  [ -f "$f" ] || fail "install.sh did not install $f"
done
desktop-file-validate "$entry" || fail "the installed desktop entry is not valid"
grep -qx "Exec=\"$home/.local/bin/slopewise\" %F" "$entry" || fail "the installed desktop entry does not run the installed program: $(grep ^Exec= "$entry")"
if command -v update-desktop-database > /dev/null; then
  grep -q '^text/csv=.*slopewise.desktop' "$share/applications/mimeinfo.cache" ||
    fail "after install.sh, the desktop does not know Slopewise opens CSV files"
fi
ok
HOME="$home" XDG_DATA_HOME="" "$share/slopewise/uninstall.sh" > /dev/null
left=$(find "$home" -type f ! -name mimeinfo.cache)
[ -z "$left" ] || fail "uninstall.sh left behind: $left"
ok

echo "dist-check: $passed passed, 0 failed"
