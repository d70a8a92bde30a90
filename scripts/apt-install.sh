#!/usr/bin/env bash
# Installs the Debian packages given as arguments that are not installed
# yet (as root, or with sudo). Used by the Makefile and the scripts.
set -euo pipefail
missing=""
for p in "$@"; do dpkg -s "$p" >/dev/null 2>&1 || missing="$missing $p"; done
[ -z "$missing" ] && exit 0
echo "installing:$missing"
SUDO=""; [ "$(id -u)" = 0 ] || SUDO=sudo
$SUDO apt-get update -qq
# shellcheck disable=SC2086
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends $missing
