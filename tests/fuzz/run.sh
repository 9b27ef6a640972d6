#!/bin/bash
# run.sh — build helmix's libFuzzer harnesses with clang and run each on its corpus.
#   tests/fuzz/run.sh [--short] [--seconds N] [--build-dir DIR] [HARNESS...]
# HARNESS: recipe, set, table, expect (default: all). --short runs each about 5 s on a copy of
# the seed corpus (the ctest entry fuzz_short); otherwise each runs N seconds (default 600),
# growing DIR/corpus/HARNESS (the seeds in tests/fuzz/corpus are only read). A crash, leak or
# sanitizer finding stops with its input saved in DIR/findings. Exit 77 (skipped, with the
# reason printed) when clang with libFuzzer is missing.
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
root=$(cd "$here/../.." && pwd)
seconds=600 short=0 build="$root/build/fuzz" harnesses=()
while [ $# -gt 0 ]; do
  case $1 in
    --short) short=1 seconds=5 ;;
    --seconds) seconds=${2:?--seconds needs a number}; shift ;;
    --build-dir) build=${2:?--build-dir needs a directory}; shift ;;
    -h|--help) sed -n '2,8s/^# \{0,1\}//p' "$0"; exit 0 ;;
    recipe|set|table|expect) harnesses+=("$1") ;;
    *) echo "run.sh: unknown argument '$1' (harnesses: recipe set table expect)" >&2; exit 2 ;;
  esac
  shift
done
[ ${#harnesses[@]} -gt 0 ] || harnesses=(recipe set table expect)

cc=${HELMIX_FUZZ_CC:-$(command -v clang-14 || command -v clang || true)}
if [ -z "$cc" ]; then
  echo "fuzz: skipped: clang not found (Debian: apt-get install clang-14 libclang-rt-14-dev)"
  exit 77
fi
mkdir -p "$build"
probe="$build/probe"
if ! echo 'int LLVMFuzzerTestOneInput(const unsigned char *d, unsigned long n) { return 0; }' |
     "$cc" -x c -fsanitize=fuzzer,address,undefined - -o "$probe" 2> "$probe.log"; then
  echo "fuzz: skipped: $cc cannot link libFuzzer with the sanitizers (Debian: libclang-rt-14-dev): $(head -1 "$probe.log")"
  exit 77
fi

echo "fuzz: building the harnesses with $cc in $build"
cmake -S "$here" -B "$build" -DCMAKE_C_COMPILER="$cc" -DCMAKE_BUILD_TYPE=Release > "$build/cmake.log" 2>&1 ||
  { cat "$build/cmake.log"; exit 1; }
cmake --build "$build" -j "${HELMIX_FUZZ_JOBS:-2}" --target helmix_fuzz > "$build/build.log" 2>&1 ||
  { tail -40 "$build/build.log"; exit 1; }

mkdir -p "$build/findings"
export ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1:abort_on_error=0}
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}
status=0
for h in "${harnesses[@]}"; do
  corpus="$build/corpus/$h"
  [ "$short" = 1 ] && corpus="$build/corpus-short/$h" && rm -rf "$corpus"
  mkdir -p "$corpus"
  log="$build/$h.log"
  dict=()
  [ -f "$here/$h.dict" ] && dict=(-dict="$here/$h.dict") # section, key and value words
  # -max_len: a recipe is short; 8 KiB holds the longest seed with room to grow
  if "$build/fuzz_$h" "$corpus" "$here/corpus/$h" "${dict[@]}" -max_total_time="$seconds" -max_len=8192 -timeout=10 \
       -rss_limit_mb=2048 -print_final_stats=1 -artifact_prefix="$build/findings/$h-" > "$log" 2>&1; then
    execs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log")
    cov=$(grep -o 'cov: [0-9]*' "$log" | tail -1)
    ft=$(grep -o 'ft: [0-9]*' "$log" | tail -1)
    echo "fuzz: $h: ${seconds} s, ${execs:-?} executions, ${cov:-cov: ?} edges, ${ft:-ft: ?} features, no finding"
  else
    status=1
    echo "fuzz: $h: FINDING (log $log, inputs in $build/findings):"
    grep -E 'ERROR|runtime error|property failed|SUMMARY|Test unit written' "$log" | head -8
  fi
done
exit $status
