# Sourced by the Wine scripts: makes a Wine prefix in $work/wineprefix and
# exports WINEPREFIX, WINEDEBUG and WINEDLLOVERRIDES for it. Needs $work.
export WINEPREFIX="$work/wineprefix" WINEDEBUG=-all WINEDLLOVERRIDES="mscoree,mshtml="
echo "Wine: $(wine --version)"
wine_ms() { echo $(($(date +%s%N) / 1000000)); }
wine_start=$(wine_ms)
wineboot --init > /dev/null 2>&1
echo "Wine prefix made in $(($(wine_ms) - wine_start)) ms"

# Go 1.22 and later take random bytes from ProcessPrng in
# bcryptprimitives.dll, which every Windows 10 and 11 has and Wine 8.0
# (Debian 12) lacks. For these checks only, a stand-in built here goes into
# the temporary Wine prefix; nothing shipped contains it.
sys32="$WINEPREFIX/drive_c/windows/system32"
if [ ! -e "$sys32/bcryptprimitives.dll" ]; then
  cat > "$work/bcryptprimitives.c" <<'C'
#include <windows.h>
#include <bcrypt.h>
BOOL WINAPI ProcessPrng(PBYTE data, SIZE_T size) {
  while (size > 0) {
    ULONG n = size > 0x40000000 ? 0x40000000 : (ULONG)size;
    if (!BCRYPT_SUCCESS(BCryptGenRandom(NULL, data, n, BCRYPT_USE_SYSTEM_PREFERRED_RNG)))
      return FALSE;
    data += n;
    size -= n;
  }
  return TRUE;
}
C
  x86_64-w64-mingw32-gcc -shared -O2 -s -o "$sys32/bcryptprimitives.dll" "$work/bcryptprimitives.c" -lbcrypt
  export WINEDLLOVERRIDES="$WINEDLLOVERRIDES;bcryptprimitives=n"
  echo "Wine lacks bcryptprimitives.dll: using a stand-in for ProcessPrng"
fi
