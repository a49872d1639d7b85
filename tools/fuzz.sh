#!/usr/bin/env bash
# Runs one libFuzzer target of figura for a chosen time (docs/fuzzing.md).
#
#   tools/fuzz.sh TARGET SECONDS [BUILD_DIR] [extra libFuzzer flags...]
#
# TARGET is one of tests/fuzz/*_fuzz.cpp without the extension (e.g.
# quantity_fuzz); BUILD_DIR defaults to build-fuzz (configured with
# -DFIGURA_FUZZ=ON -DFIGURA_SANITIZE=ON and clang). The run starts from a
# fresh scratch corpus BUILD_DIR/fuzz-work/TARGET/corpus plus the seeds in
# tests/fuzz/corpus/TARGET (read only: the repository is never written).
# A crash, leak, sanitizer report, timeout (-timeout, seconds per input) or
# out-of-memory (-rss_limit_mb) stops the run with a non-zero exit code and
# leaves the input in BUILD_DIR/fuzz-work/TARGET/artifacts/. The last lines
# of the log are libFuzzer's final statistics (execs/s, cov:, ft:).
set -euo pipefail

if [[ $# -lt 2 ]]; then
  echo "usage: tools/fuzz.sh TARGET SECONDS [BUILD_DIR] [libFuzzer flags...]" >&2
  exit 2
fi
target=$1
seconds=$2
source_dir=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
build_dir=${3:-$source_dir/build-fuzz}
shift $(($# < 3 ? $# : 3))

binary=$build_dir/tests/fuzz/$target
seeds=$source_dir/tests/fuzz/corpus/$target
if [[ ! -x $binary ]]; then
  echo "tools/fuzz.sh: $binary: no such fuzz target (build it with FIGURA_FUZZ=ON)" >&2
  exit 2
fi
if [[ ! -d $seeds ]]; then
  echo "tools/fuzz.sh: $seeds: no seed corpus" >&2
  exit 2
fi
if ! [[ $seconds =~ ^[0-9]+$ ]] || [[ $seconds -eq 0 ]]; then
  echo "tools/fuzz.sh: SECONDS must be a positive whole number, not '$seconds'" >&2
  exit 2
fi

work=$build_dir/fuzz-work/$target
rm -rf "$work/corpus"
mkdir -p "$work/corpus" "$work/artifacts"
flags=(-max_total_time="$seconds" -rss_limit_mb=2048 -malloc_limit_mb=1024
       -timeout=10 -print_final_stats=1 -artifact_prefix="$work/artifacts/")
dict=$source_dir/tests/fuzz/$target.dict
if [[ -f $dict ]]; then
  flags+=(-dict="$dict")
fi

export ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1:abort_on_error=1:symbolize=1}
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-halt_on_error=1:print_stacktrace=1}
export OPENCV_LOG_LEVEL=ERROR
# Leaks inside uninstrumented system libraries: the suppressions the
# sanitizer test build uses.
if [[ -f $source_dir/tests/lsan.supp ]]; then
  export LSAN_OPTIONS=${LSAN_OPTIONS:-suppressions=$source_dir/tests/lsan.supp:print_suppressions=0}
fi
if command -v llvm-symbolizer-14 > /dev/null; then
  export ASAN_SYMBOLIZER_PATH=${ASAN_SYMBOLIZER_PATH:-$(command -v llvm-symbolizer-14)}
elif [[ -x /usr/lib/llvm-14/bin/llvm-symbolizer ]]; then
  export ASAN_SYMBOLIZER_PATH=${ASAN_SYMBOLIZER_PATH:-/usr/lib/llvm-14/bin/llvm-symbolizer}
fi

exec "$binary" "${flags[@]}" "$@" "$work/corpus" "$seeds"
