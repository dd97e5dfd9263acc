#!/usr/bin/env bash
# Runs the demo quarter end to end on a fresh machine: installs what is
# missing, then builds every statement of the demo book into ./out.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh --browser
node bin/quarterline.js build data/demo --period 2026-Q3 --out out "$@"
