#!/bin/sh
# run-demo.sh: installs what is missing, builds gritline, and runs the live demo:
# gritline-sim plays Alder Street Works' surface grinder sg4 for one 8-hour
# shift, compressed into a few minutes, and gritlined monitors it over Modbus
# TCP on 127.0.0.1, printing a line per pass and every alert as they happen.
#   DEMO_MINUTES=N   real minutes for the simulated shift (default 5)
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/tests/tools/install-deps.sh"
build="$root/tests/build"
if [ -f "$build/build.ninja" ]; then
  meson setup --reconfigure "$build" "$root" >/dev/null
else
  meson setup "$build" "$root" >/dev/null
fi
meson compile -C "$build" >/dev/null

minutes=${DEMO_MINUTES:-5}
speed=$(awk -v m="$minutes" 'BEGIN { printf "%.6g", 480 / m }')
demo="$build/demo"
rm -rf "$demo"
mkdir -p "$demo"

# One shift that starts now, so the simulated shift fills one shift folder.
now_h=$(date +%H)
now_m=$(date +%M)
starts=$(awk -v h="$now_h" -v m="$now_m" 'BEGIN {
  for (i = 0; i < 3; i++) { t[i] = ((h + 8 * i) % 24) * 60 + m }
  for (i = 0; i < 3; i++) for (j = i + 1; j < 3; j++) if (t[j] < t[i]) { x = t[i]; t[i] = t[j]; t[j] = x }
  printf "%02d:%02d,%02d:%02d,%02d:%02d", t[0] / 60, t[0] % 60, t[1] / 60, t[1] % 60, t[2] / 60, t[2] % 60 }')

sim_pid=""
daemon_pid=""
cleanup() {
  [ -n "$daemon_pid" ] && kill "$daemon_pid" 2>/dev/null || true
  [ -n "$sim_pid" ] && kill "$sim_pid" 2>/dev/null || true
}
trap cleanup EXIT INT TERM

"$build/daemon/sim/gritline-sim" --speed "$speed" --port 0 --port-file "$demo/port" \
  --truth "$demo/truth.csv" --truth-dresses "$demo/truth-dresses.csv" \
  "$root/conf/scenarios/demo.ini" >"$demo/sim.log" 2>&1 &
sim_pid=$!
i=0
while [ ! -s "$demo/port" ]; do
  i=$((i + 1))
  if [ $i -gt 100 ]; then echo "run-demo: gritline-sim did not start (see $demo/sim.log)" >&2; exit 69; fi
  sleep 0.1
done
port=$(cat "$demo/port")

sed -e "s/^port = .*/port = $port/" \
    -e "s|^data_dir = .*|data_dir = $demo/data|" \
    -e "s/^poll_interval_ms = .*/poll_interval_ms = 5/" \
    -e "s/^starts = .*/starts = $starts/" \
    -e "s/^names = .*/names = early,late,night/" \
    "$root/conf/demo.conf" >"$demo/gritline.conf"

cat <<INTRO
Alder Street Works, cell B: surface grinder sg4 with a cx60-vitrified wheel.
gritline-sim plays one 8-hour shift at ${speed}x (about $minutes minutes) on 127.0.0.1:$port;
gritlined polls it every 5 ms over Modbus TCP. One line per pass, and every alert:
  pass: depth ae, work speed vw, wheel speed vs, aggressiveness, specific energy u,
        burn ratio u/u*, smoothed dull ratio r, dress cycle
(Caution: alerts and advice are advisory; never exceed the wheel's marked maximum
operating speed; follow the machine builder's instructions, local codes and licensed practice.)

INTRO

seconds=$(awk -v m="$minutes" 'BEGIN { printf "%d", m * 60 + 5 }')
"$build/daemon/gritlined" -c "$demo/gritline.conf" --socket "$demo/sg4.sock" --run-for "$seconds" \
  2>"$demo/gritlined.log" &
daemon_pid=$!
# The daemon's journal lines, shortened for a terminal.
tail -n +1 -F "$demo/gritlined.log" 2>/dev/null | awk '
  /^<6>pass / { sub(/^<6>/, ""); gsub(/ J\/mm\^3/, ""); print; fflush(); next }
  /(raised|cleared):/ || /forecast info/ || /dress info/ { sub(/^<[0-9]>/, "  ** "); print; fflush(); next }
' &
tail_pid=$!
wait "$daemon_pid" || true
daemon_pid=""
sleep 0.5
kill "$tail_pid" 2>/dev/null || true

folder=$(ls -d "$demo"/data/sg4/*/ | head -n 1)
folder=${folder%/}
echo
echo "Shift done. Logs of the shift are in $folder"
echo "  samples.csv (the recording), passes.csv, events.csv, dress_cycles.csv"
passes=$(($(wc -l <"$folder/passes.csv") - 1))
alerts=$(grep -c ',raised,' "$folder/events.csv" || true)
cycles=$(($(wc -l <"$folder/dress_cycles.csv") - 1))
echo "  $passes passes, $alerts alerts raised, $cycles dress cycle(s) closed"
echo "  the simulator's own truth: $demo/truth.csv"
if "$build/daemon/gritline" report --help >/dev/null 2>&1; then
  "$build/daemon/gritline" report "$folder" --config "$demo/gritline.conf" -o "$demo/report.html" >/dev/null &&
    echo "  shift report: $demo/report.html"
  "$build/daemon/gritline" report "$folder" --config "$demo/gritline.conf" --text || true
fi
echo "Replay it: $build/daemon/gritline replay $folder/samples.csv --config $demo/gritline.conf --out $demo/replay"
