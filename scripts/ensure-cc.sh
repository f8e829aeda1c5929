#!/usr/bin/env bash
# Makes sure a C compiler is on this machine: `go test -race` needs cgo, and cgo needs one.
# Installs Debian's gcc and libc6-dev with apt-get when none is found.
set -euo pipefail

cc="${CC:-gcc}"
if command -v "$cc" >/dev/null 2>&1 || command -v cc >/dev/null 2>&1; then
  exit 0
fi
. "$(dirname "$0")/apt.sh"
echo "no C compiler found (go test -race needs one); installing Debian's gcc..."
apt_install gcc libc6-dev
command -v gcc >/dev/null
