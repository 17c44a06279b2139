#!/usr/bin/env bash
# Quick start 1: install what is missing, build, and show the interim analysis
# of the demo trial (every trait).
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
"$ROOT/platform/setup.sh"
"$ROOT/platform/build.sh"
exec "$ROOT/build/furrow" analyze --csv "$ROOT/demo_data/harrow_ridge_oats_2026.csv" \
  --design rcbd --block block --treatment entry --treatments-random \
  --response stand_count,height_cm,heading_days,lodging_score,grain_yield_t_ha
