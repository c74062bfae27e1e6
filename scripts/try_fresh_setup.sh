#!/usr/bin/env bash
# Run the README's two set-up commands in a fresh clone, as a new user would.
# Usage: scripts/try_fresh_setup.sh [FOLDER]   (default: a new temporary folder)
set -euo pipefail
repo=$(git -C "$(dirname "$0")" rev-parse --show-toplevel)
where=${1:-$(mktemp -d)}
git clone --quiet "$repo" "$where/femcav"
cd "$where/femcav"
python3 -m venv .venv && . .venv/bin/activate && pip install -e . && femcav solve geometries/wavemeter_pillbox.toml
deactivate
rm -rf .venv
python3 -m venv .venv && . .venv/bin/activate && pip install -e '.[test]' && python -m pytest
echo "fresh set-up OK in $where/femcav"
