#!/usr/bin/env bash
# Runs the libFuzzer targets of tests/fuzz/ for a given time each and keeps their corpus.
#
#   tests/fuzz/run.sh [--no-merge] BUILD_DIR SECONDS [TARGET...]
#
# BUILD_DIR is a folder configured with -DSPURCAST_FUZZ=ON (clang); the targets are built there if
# needed. TARGET is a loader name (units, scenario, limits, bands, capture, trace, touchstone, spice) or whatif (the
# what-if request handler), or all of them by
# default. For each target the inputs of tests/data/fuzz-regressions/<target>/ are replayed first (its
# open/ subfolder holds reproducers of bugs not fixed yet: not replayed), then the target runs for
# SECONDS from tests/fuzz/corpus/<target>/ (plus a scratch folder in BUILD_DIR); afterwards the
# scratch finds are merged into the kept corpus, which is re-minimised (libFuzzer -merge=1) so the
# committed corpus stays small. --no-merge (CI) leaves tests/ untouched.
# Crash, leak, timeout and out-of-memory inputs land in BUILD_DIR/fuzz-artifacts/<target>/ and make
# the script fail. Environment: FUZZ_MAX_LEN (default 4096), FUZZ_JOBS (default: no -jobs, run in
# this process), FUZZ_EXTRA (more libFuzzer flags, e.g. -runs=10000000), FUZZ_NO_BUILD=1 (use the
# executables as they are).
set -euo pipefail
merge=1
if [[ "${1:-}" == "--no-merge" ]]; then merge=0; shift; fi
if [[ $# -lt 2 ]]; then
  sed -n '2,17p' "$0" >&2
  exit 2
fi
build_dir=$(cd "$1" && pwd)
seconds=$2
shift 2
repo=$(cd "$(dirname "$0")/../.." && pwd)
targets=("$@")
if [[ ${#targets[@]} -eq 0 ]]; then
  for source in "$repo"/tests/fuzz/*_fuzz.cpp; do
    name=$(basename "$source" _fuzz.cpp)
    targets+=("$name")
  done
fi

executables=()
for t in "${targets[@]}"; do executables+=("${t}_fuzz"); done
# Re-configure first: a new tests/fuzz/*_fuzz.cpp is only a target after the glob is re-read.
if [[ -z "${FUZZ_NO_BUILD:-}" ]]; then
  cmake -S "$repo" -B "$build_dir" >/dev/null
  cmake --build "$build_dir" -j2 --target "${executables[@]}" >/dev/null
fi

status=0
for t in "${targets[@]}"; do
  exe="$build_dir/${t}_fuzz"
  corpus="$repo/tests/fuzz/corpus/$t"
  scratch="$build_dir/fuzz-scratch/$t"
  artifacts="$build_dir/fuzz-artifacts/$t"
  log="$build_dir/fuzz-logs/$t.log"
  mkdir -p "$corpus" "$scratch" "$artifacts" "$(dirname "$log")"
  flags=(-max_len="${FUZZ_MAX_LEN:-4096}" -rss_limit_mb=2048 -timeout=10 -print_final_stats=1
         -artifact_prefix="$artifacts/")
  if [[ -f "$repo/tests/fuzz/$t.dict" ]]; then flags+=(-dict="$repo/tests/fuzz/$t.dict"); fi
  # shellcheck disable=SC2206
  extra=(${FUZZ_EXTRA:-})

  regressions="$repo/tests/data/fuzz-regressions/$t"
  # Only the files directly in the folder: open/ holds reproducers of bugs not fixed yet.
  folders=("$regressions")
  # The TOML loaders share the reader, so each replays the reader's reproducers too.
  case $t in scenario | limits | bands) folders+=("$repo/tests/data/fuzz-regressions/toml") ;; esac
  mapfile -t replay < <(find "${folders[@]}" -maxdepth 1 -type f 2>/dev/null | sort)
  if [[ ${#replay[@]} -gt 0 ]]; then
    if ! "$exe" "${flags[@]}" -runs=0 "${replay[@]}" >"$log.regressions" 2>&1; then
      echo "FAIL $t: a regression input of tests/data/fuzz-regressions/$t fails again (see $log.regressions)"
      status=1
      continue
    fi
  fi

  jobs=()
  if [[ -n "${FUZZ_JOBS:-}" ]]; then jobs=(-jobs="$FUZZ_JOBS" -workers="$FUZZ_JOBS"); fi
  # With -jobs, libFuzzer writes each worker's output to fuzz-<n>.log in the current folder.
  if (cd "$(dirname "$log")" && rm -f fuzz-*.log &&
      "$exe" "${flags[@]}" "${extra[@]}" "${jobs[@]}" -max_total_time="$seconds" "$scratch" "$corpus") >"$log" 2>&1; then
    runs=$(cat "$log" "$(dirname "$log")"/fuzz-*.log 2>/dev/null | grep -o 'stat::number_of_executed_units: *[0-9]*' | grep -o '[0-9]*$' | awk '{s += $1} END {print s}' || true)
    echo "ok   $t: ${runs:-?} executions, no crash, leak or timeout (limit ${seconds} s; log: $log)"
  else
    echo "FAIL $t: see $log and $artifacts/"
    tail -n 30 "$log" >&2
    status=1
    continue
  fi

  if [[ $merge -eq 1 ]]; then
    fresh="$build_dir/fuzz-merge/$t"
    rm -rf "$fresh" && mkdir -p "$fresh"
    "$exe" "${flags[@]}" -merge=1 "$fresh" "$corpus" "$scratch" >"$log.merge" 2>&1
    rm -rf "$corpus" && mv "$fresh" "$corpus"
    echo "     $t corpus: $(ls "$corpus" | wc -l) files, $(du -sh --apparent-size "$corpus" | cut -f1)"
  fi
done
exit $status
