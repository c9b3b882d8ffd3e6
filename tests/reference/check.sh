#!/usr/bin/env bash
# Regenerates the scipy.signal fixtures in a Python venv and fails if they differ from the
# committed ones. Used by .ci/run; run it by hand after changing a generator script.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
root="$(cd "$here/../.." && pwd)"
venv="$root/.venv"
if [ ! -x "$venv/bin/python" ]; then
  python3 -m venv "$venv"
fi
"$venv/bin/pip" install -q --disable-pip-version-check -r "$here/requirements.txt"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
for gen in "$here"/make_*.py; do
  "$venv/bin/python" "$gen" "$tmp"
done
status=0
for f in "$tmp"/*; do
  name=$(basename "$f")
  if ! cmp -s "$f" "$here/$name"; then
    echo "fixture $name differs from the committed one (regenerate with ${gen##*/} and commit)" >&2
    status=1
  else
    echo "fixture $name: identical to the committed one"
  fi
done
exit $status
