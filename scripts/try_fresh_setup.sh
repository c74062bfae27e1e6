#!/usr/bin/env bash
# Run the README's two set-up commands in a fresh clone, as a new user would. The commands
# are read from the README (its lines that start with "python3 -m venv"), so the two cannot
# drift apart.
# Usage: scripts/try_fresh_setup.sh [FOLDER]   (default: a new temporary folder)
set -euo pipefail
repo=$(git -C "$(dirname "$0")" rev-parse --show-toplevel)
where=${1:-$(mktemp -d)}
git clone --quiet "$repo" "$where/femcav"
cd "$where/femcav"
mapfile -t commands < <(grep '^python3 -m venv' README.md)
if [ "${#commands[@]}" -ne 2 ]; then
    echo "expected two set-up commands in README.md, found ${#commands[@]}" >&2
    exit 1
fi
for command in "${commands[@]}"; do
    echo "== $command"
    rm -rf .venv
    bash -c "$command"
done
echo "fresh set-up OK in $where/femcav"
