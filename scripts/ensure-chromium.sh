#!/usr/bin/env bash
# Makes sure a headless-capable chromium is on this machine for the console's browser
# tests, installing Debian's chromium package with apt-get when it is not. Prints the
# binary's path on its last line.
set -euo pipefail

find_chromium() {
  for name in chromium chromium-browser; do
    if command -v "$name" >/dev/null 2>&1; then
      command -v "$name"
      return 0
    fi
  done
  for path in /usr/bin/chromium /usr/lib/chromium/chromium; do
    if [ -x "$path" ]; then echo "$path"; return 0; fi
  done
  return 1
}

if path=$(find_chromium); then echo "$path"; exit 0; fi

. "$(dirname "$0")/apt.sh"
echo "chromium not found; installing Debian's chromium package..." >&2
apt_install chromium fonts-dejavu-core >&2
find_chromium
