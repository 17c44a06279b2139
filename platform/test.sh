#!/usr/bin/env bash
# Quick start 2: install what is missing, build, and run every test.
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
"$ROOT/platform/setup.sh"
"$ROOT/platform/build.sh"
cd "$ROOT/build"
ctest --output-on-failure -j "$(nproc)" --timeout 1500
