#!/usr/bin/env bash
# Quick start 1: install what is missing, build, build the demo trial database
# with a partly collected day, show its interim analysis and open the field
# app on it (when there is a display).
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
"$ROOT/platform/setup.sh"
"$ROOT/platform/build.sh"
DB="$ROOT/build/demo/harrow_ridge_oats_2026.furrow"
mkdir -p "$ROOT/build/demo"
/usr/bin/python3 "$ROOT/demo_data/load_demo_day.py" "$ROOT/build/furrow" \
  "$ROOT/demo_data/harrow_ridge_oats_2026.plan.csv" "$ROOT/demo_data/harrow_ridge_oats_2026.csv" "$DB"
"$ROOT/build/furrow" trial show --db "$DB"
for trait in stand_count height_cm heading_days; do
  echo
  "$ROOT/build/furrow" analyze --db "$DB" --trait "$trait"
done
if [ -n "${DISPLAY:-}${WAYLAND_DISPLAY:-}" ]; then
  exec "$ROOT/build/furrow" field --db "$DB" --observer "Demo crew"
else
  echo
  echo "No display here: open the field app on a desktop with"
  echo "  $ROOT/build/furrow field --db $DB"
fi
