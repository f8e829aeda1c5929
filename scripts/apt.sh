# Sourced by the ensure-* scripts: apt_install PACKAGE... installs Debian packages with
# apt-get, through sudo when not root, or explains what to install and fails.
apt_install() {
  if ! command -v apt-get >/dev/null 2>&1; then
    echo "apt-get is not available; install $* with this system's package manager." >&2
    return 1
  fi
  local sudo=""
  if [ "$(id -u)" -ne 0 ]; then
    if command -v sudo >/dev/null 2>&1; then sudo="sudo"; else
      echo "not root and no sudo; install as root: apt-get install -y $*" >&2
      return 1
    fi
  fi
  if [ "${APT_PREPARE:-}" ]; then eval "$APT_PREPARE"; fi
  export DEBIAN_FRONTEND=noninteractive
  $sudo apt-get update -qq
  $sudo apt-get install -y -qq -o Dpkg::Options::=--force-confold "$@" >/dev/null
}
