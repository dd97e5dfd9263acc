#!/usr/bin/env bash
# Runs every test: installs what is missing, type-checks, then the whole
# vitest suite (unit, reference-value, property, CLI and browser tests).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh --browser
npx tsc --noEmit -p .
npx vitest run
