#!/bin/sh
# run-demo.sh: installs what is missing, builds gritline and runs the built-in demo.
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/tests/tools/install-deps.sh"
build="$root/tests/build"
[ -f "$build/build.ninja" ] || meson setup "$build" "$root" >/dev/null
meson compile -C "$build" >/dev/null
g="$build/daemon/gritline"
echo "== Alder Street Works, cell B, surface grinder sg4, wheel cx60-vitrified (250 mm, marked 35 m/s)"
echo "== Roughing: 15 m/min table, 0.02 mm per pass, 20 mm wide, at 33 m/s; where should it run for Aggr 18?"
"$g" calc --wheel-diameter 250 --wheel-speed 33 --work-speed 15000 --depth 0.02 --width 20 \
  --target-aggr 18 --max-speed 35
echo
echo "== The same job in shop imperial units (10 in wheel, 6500 ft/min, 590 in/min, 0.0008 in)"
"$g" calc --units imperial --wheel-diameter 10 --wheel-speed 6500 --work-speed 590 --depth 0.0008 \
  --width 0.8
