#!/bin/sh
# run-tests.sh: installs what is missing, builds gritline and runs the whole test suite.
#   tests/run-tests.sh              warning-free build (--werror), every test
#   tests/run-tests.sh --sanitize   the same under AddressSanitizer and UBSan
#   tests/run-tests.sh --soak       only the soak suite (about 12 minutes), on the plain build
# Build trees live in tests/build and tests/build-asan; the log of the run is
# in <build>/meson-logs/testlog.txt.
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/tests/tools/install-deps.sh"
build="$root/tests/build"
opts="--werror"
if [ "${1:-}" = "--sanitize" ]; then
  build="$root/tests/build-asan"
  opts="--werror -Db_sanitize=address,undefined -Db_lundef=false"
fi
if [ -f "$build/build.ninja" ]; then
  meson setup --reconfigure $opts "$build" "$root" >/dev/null
else
  meson setup $opts "$build" "$root" >/dev/null
fi
meson compile -C "$build"
export ASAN_OPTIONS="${ASAN_OPTIONS:-detect_leaks=1:abort_on_error=1}"
export UBSAN_OPTIONS="${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}"
if [ "${1:-}" = "--soak" ]; then
  # Its own log, so that the normal run's testlog.txt stays what .ci/run counts.
  meson test -C "$build" --print-errorlogs --suite soak --logbase soaklog
else
  meson test -C "$build" --print-errorlogs --num-processes 2 --no-suite soak
fi
