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

. "$(dirname "$0")/apt.sh"
echo "PostgreSQL server binaries not found; installing Debian's postgresql package..."
# No system cluster: halovet starts its own.
no_main_cluster() {
  local sudo=""
  [ "$(id -u)" -eq 0 ] || sudo="sudo"
  $sudo mkdir -p /etc/postgresql-common
  if ! grep -qs '^create_main_cluster' /etc/postgresql-common/createcluster.conf; then
    echo 'create_main_cluster = false' | $sudo tee -a /etc/postgresql-common/createcluster.conf >/dev/null
  fi
}
APT_PREPARE=no_main_cluster apt_install postgresql
have_binaries
