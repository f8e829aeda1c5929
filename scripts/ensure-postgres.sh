#!/usr/bin/env bash
# Makes sure PostgreSQL server binaries (initdb, pg_ctl, postgres) are on this machine,
# installing Debian's postgresql package with apt-get when they are not. halovet runs
# its own private cluster from them; no system cluster is created or started.
set -euo pipefail

have_binaries() {
  for dir in $(printf '%s\n' "${PATH//:/ }") /usr/lib/postgresql/*/bin; do
    if [ -x "$dir/initdb" ] && [ -x "$dir/pg_ctl" ] && [ -x "$dir/postgres" ]; then
      echo "PostgreSQL server binaries: $dir"
      return 0
    fi
  done
  return 1
}

have_binaries && exit 0

if ! command -v apt-get >/dev/null 2>&1; then
  echo "PostgreSQL server binaries not found and apt-get is not available;" >&2
  echo "install PostgreSQL (initdb, pg_ctl, postgres) with this system's package manager." >&2
  exit 1
fi
sudo=""
if [ "$(id -u)" -ne 0 ]; then
  if command -v sudo >/dev/null 2>&1; then sudo="sudo"; else
    echo "PostgreSQL server binaries not found; run as root or install: apt-get install -y postgresql" >&2
    exit 1
  fi
fi
echo "PostgreSQL server binaries not found; installing Debian's postgresql package..."
# No system cluster: halovet starts its own.
$sudo mkdir -p /etc/postgresql-common
if ! grep -qs '^create_main_cluster' /etc/postgresql-common/createcluster.conf; then
  echo 'create_main_cluster = false' | $sudo tee -a /etc/postgresql-common/createcluster.conf >/dev/null
fi
export DEBIAN_FRONTEND=noninteractive
$sudo apt-get update -qq
$sudo apt-get install -y -qq -o Dpkg::Options::=--force-confold postgresql >/dev/null
have_binaries
