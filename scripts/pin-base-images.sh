#!/usr/bin/env bash
# Pins the base images of deploy/Dockerfile by digest: each `FROM IMAGE:TAG` (or an
# already pinned `FROM IMAGE:TAG@sha256:...`) becomes `FROM IMAGE:TAG@sha256:DIGEST`,
# the digest of the tag's manifest list as the registry answers now. Needs docker with
# buildx (or crane) and a reachable registry. Review and commit the result; rerun to move
# to newer base images.
set -euo pipefail
file=${1:-deploy/Dockerfile}
resolve() {
  if command -v crane >/dev/null; then crane digest "$1"
  else docker buildx imagetools inspect --format '{{json .Manifest.Digest}}' "$1" | tr -d '"'
  fi
}
tmp=$(mktemp); trap 'rm -f "$tmp"' EXIT
while IFS= read -r line; do
  if [[ $line =~ ^FROM[[:space:]]+([^[:space:]@]+)(@sha256:[0-9a-f]{64})?(.*)$ ]]; then
    ref=${BASH_REMATCH[1]} rest=${BASH_REMATCH[3]}
    digest=$(resolve "$ref")
    [[ $digest =~ ^sha256:[0-9a-f]{64}$ ]] || { echo "pin-base-images: $ref resolved to '$digest', not a digest" >&2; exit 1; }
    echo "$ref -> $digest" >&2
    line="FROM $ref@$digest$rest"
  fi
  printf '%s\n' "$line"
done <"$file" >"$tmp"
cat "$tmp" >"$file"
