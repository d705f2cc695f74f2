#!/usr/bin/env bash
# apt-ensure.sh PKG...: installs the Debian packages that are missing, and nothing else.
# Idempotent; needs root (or sudo) on Debian 12. Elsewhere, install the named packages by hand.
set -euo pipefail
missing=()
for p in "$@"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q 'install ok installed'; then
    missing+=("$p")
  fi
done
[ ${#missing[@]} -eq 0 ] && exit 0
SUDO=""
if [ "$(id -u)" -ne 0 ]; then
  if command -v sudo >/dev/null 2>&1; then SUDO=sudo; else
    echo "apt-ensure: not root and no sudo; install these packages yourself: ${missing[*]}" >&2
    exit 1
  fi
fi
echo "apt-ensure: installing ${missing[*]}" >&2
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get -o DPkg::Lock::Timeout=300 update -q >/dev/null
$SUDO apt-get -o DPkg::Lock::Timeout=300 install -y -q --no-install-recommends "${missing[@]}" >/dev/null
