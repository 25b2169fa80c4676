#!/usr/bin/env bash
# Install the Debian packages derate needs when they are missing: ngspice and its shared library.
# Pass --browser to add Chromium (used by the HTML report test). Idempotent; quiet when all is there.
set -euo pipefail

want=()
command -v ngspice >/dev/null 2>&1 || want+=(ngspice)
if ! ldconfig -p 2>/dev/null | grep -q 'libngspice\.so'; then
  want+=(libngspice0-dev)
fi
if [ "${1:-}" = "--browser" ] && ! command -v chromium >/dev/null 2>&1; then
  want+=(chromium)
fi
[ ${#want[@]} -eq 0 ] && exit 0

echo "installing Debian packages: ${want[*]}" >&2
sudo=""
if [ "$(id -u)" -ne 0 ]; then
  if command -v sudo >/dev/null 2>&1; then sudo="sudo"; else
    echo "error: need root (or sudo) to install: ${want[*]}" >&2; exit 2
  fi
fi
export DEBIAN_FRONTEND=noninteractive
$sudo apt-get update -qq >/dev/null
$sudo apt-get install -y -qq --no-install-recommends "${want[@]}" >/dev/null
