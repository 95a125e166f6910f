#!/bin/sh
# run-fuzz.sh: builds one libFuzzer target with clang, replays its regression inputs, then fuzzes it.
#   tests/fuzz/run-fuzz.sh TARGET [SECONDS]     TARGET: conf, recording, control or regmap
# SECONDS (default 30) of fuzzing from tests/fuzz/corpus/TARGET, copied to a
# temporary work corpus so the tree is left as it is; 0 only replays. Every
# file in tests/fuzz/regressions/TARGET/ is run first and must pass.
# Environment: FUZZ_KEEP=DIR keeps the work corpus, any crash input and the
# target in DIR; FUZZ_REPLAY=DIR replays the files of DIR instead of the
# regressions; FUZZ_JOBS=N compiles with N jobs (2); CC_FUZZ=clang-14 picks the
# compiler; GRITLINE_FUZZ_SKIP=why exits 77 (meson: skipped). Paths with
# blanks are not supported.
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)

if [ -n "${GRITLINE_FUZZ_SKIP:-}" ]; then
  echo "skipped: $GRITLINE_FUZZ_SKIP"
  exit 77
fi
if [ $# -lt 1 ] || [ $# -gt 2 ]; then
  echo "usage: $0 conf|recording|control|regmap [SECONDS]" >&2
  exit 64
fi
target=$1
seconds=${2:-30}
case "$seconds" in
  ''|*[!0-9]*) echo "$0: SECONDS: not a whole number: $seconds" >&2; exit 64 ;;
esac

# What each target links, and the longest input worth trying: a config or a
# recording of a few dozen lines, one request line (the socket takes 256
# bytes), one register map with its block contents.
ldflags=""
case "$target" in
  conf)      srcs="analysis/*.c drivers/*.c $(cd "$root" && grep -L '^int main' daemon/*.c)"; max_len=8192 ;;
  recording) srcs="analysis/*.c drivers/recording.c"; max_len=8192
             ldflags="-Wl,--wrap=malloc -Wl,--wrap=free" ;; # see fuzz_recording.c
  control)   srcs="daemon/control.c"; max_len=512 ;;
  regmap)    srcs="analysis/*.c drivers/regmap.c"; max_len=2048 ;;
  *) echo "$0: unknown target \"$target\" (expected conf, recording, control or regmap)" >&2; exit 64 ;;
esac

cc=${CC_FUZZ:-clang}
if ! command -v "$cc" >/dev/null 2>&1; then
  echo "$0: $cc not found (Debian: apt-get install clang libclang-rt-14-dev)" >&2
  exit 69
fi

work=$(mktemp -d /tmp/gritline-fuzz-XXXXXX)
keep=${FUZZ_KEEP:-}
cleanup() {
  if [ -n "$keep" ] && mkdir -p "$keep"; then
    cp -a "$work/corpus" "$work/artifacts" "$work/fuzz_$target" "$keep/" 2>/dev/null || true
  fi
  rm -rf "$work"
}
trap cleanup EXIT
trap 'exit 130' INT TERM

# -ffp-contract=off: fuzz_regmap compares the scaling with its own arithmetic.
# The quotes around "fuzz" are meant literally: the macro is a C string.
# shellcheck disable=SC2089
cflags="-std=c17 -D_GNU_SOURCE -DGRITLINE_VERSION=\"fuzz\" -g -O1 -fno-omit-frame-pointer -ffp-contract=off
  -fno-sanitize-recover=all -I$root/analysis -I$root/drivers -I$root/daemon -I$here
  $(pkg-config --cflags libmodbus inih libmicrohttpd libmosquitto)"
libs="$(pkg-config --libs libmodbus inih libmicrohttpd libmosquitto libsystemd) -lpthread -lm"

echo "building fuzz_$target with $($cc --version | head -n 1)"
mkdir -p "$work/obj" "$work/artifacts"
(cd "$root" && for s in $srcs; do echo "$root/$s"; done) > "$work/sources"
echo "$here/fuzzcheck.c" >> "$work/sources"
# One compiler run per source, FUZZ_JOBS at a time; the flags go by the
# environment so that their quotes survive.
cat > "$work/cc.sh" <<'CC'
#!/bin/sh
# shellcheck disable=SC2086
exec $FZ_CC $FZ_CFLAGS -fsanitize=fuzzer-no-link,address,undefined -c "$1" -o "$FZ_OBJ/$(echo "$1" | tr / _).o"
CC
export FZ_CC="$cc" FZ_CFLAGS="$cflags" FZ_OBJ="$work/obj"
xargs -P "${FUZZ_JOBS:-2}" -n 1 sh "$work/cc.sh" < "$work/sources"
bin="$work/fuzz_$target"
rm -f "$work/product.a"
ar rcs "$work/product.a" "$work"/obj/*.o
# shellcheck disable=SC2086,SC2090
$cc $cflags -fsanitize=fuzzer,address,undefined "$here/fuzz_$target.c" "$work/product.a" $libs $ldflags -o "$bin"

export ASAN_OPTIONS="${ASAN_OPTIONS:-detect_leaks=1}"
export UBSAN_OPTIONS="${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}"
opts="-timeout=5 -rss_limit_mb=2048 -malloc_limit_mb=2048"

# Regressions: inputs that once failed, each run once.
n=0
replay=${FUZZ_REPLAY:-$here/regressions/$target}
if [ -d "$replay" ]; then
  for f in "$replay"/*; do
    [ -f "$f" ] || continue
    n=$((n + 1))
    # shellcheck disable=SC2086
    if ! "$bin" $opts "$f" > "$work/replay.log" 2>&1; then
      cat "$work/replay.log" >&2
      echo "FAIL: regression input $f" >&2
      exit 1
    fi
  done
fi
echo "regressions: $n inputs of $replay pass"
[ "$seconds" -gt 0 ] || exit 0

mkdir -p "$work/corpus"
cp "$here/corpus/$target"/* "$work/corpus/"
dict=""
[ -f "$here/dict/$target.dict" ] && dict="-dict=$here/dict/$target.dict"
echo "fuzzing fuzz_$target for $seconds s (max_len $max_len)"
# shellcheck disable=SC2086
if "$bin" $opts $dict -max_len="$max_len" -max_total_time="$seconds" -print_final_stats=1 \
    -artifact_prefix="$work/artifacts/" "$work/corpus" > "$work/fuzz.log" 2>&1; then
  status=0
else
  status=1
fi
grep -E '^#[0-9]+[[:space:]]+(INITED|DONE)|^Done [0-9]+ runs|^stat::' "$work/fuzz.log" || true
if [ "$status" -ne 0 ]; then
  # The report without libFuzzer's own frames.
  grep -v -E '^ +#[0-9]+ 0x[0-9a-f]+ in (fuzzer::|main |__libc_start|_start )' "$work/fuzz.log" | tail -n 40 >&2
  for a in "$work/artifacts"/*; do
    [ -f "$a" ] && echo "crashing input ($(wc -c < "$a") bytes, base64): $(base64 -w 0 "$a")" >&2
  done
  echo "FAIL: fuzz_$target found a failure; keep it with FUZZ_KEEP=DIR, then add it to tests/fuzz/regressions/$target/" >&2
  exit 1
fi
runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$work/fuzz.log" | tail -n 1)
speed=$(sed -n 's/^stat::average_exec_per_sec: *//p' "$work/fuzz.log" | tail -n 1)
cov=$(grep -E '^#[0-9]+' "$work/fuzz.log" | tail -n 1 | sed -n 's/.*cov: \([0-9]*\).*ft: \([0-9]*\).*corp: \([0-9]*\).*/cov \1, ft \2, corpus \3/p')
echo "fuzz_$target: ${runs:-?} executions in $seconds s (${speed:-?} exec/s), ${cov:-coverage ?}"
