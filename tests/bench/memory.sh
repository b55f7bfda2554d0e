#!/usr/bin/env bash
# Peak resident memory and wall time of `spurcast spectrum --capture`, and of `scan` and `predict` on
# a scenario whose [capture] is the same file, on a 10^8-sample capture (issue 9: the spectrum under
# 2.5 GB, the samples once, no full second copy; issue 18: scan and predict under 2.5 GB and at most
# twice the spectrum's wall time).
#
#   tests/bench/memory.sh SPURCAST_EXECUTABLE [SAMPLES] [FOLDER] [COMMANDS]
#
# Writes FOLDER/big-capture.csv (default /tmp; about 2.3 GB for 10^8 samples: check `df -h` first)
# and a scenario beside it, runs each of COMMANDS (default "spectrum scan predict") under
# /usr/bin/time -v, prints the wall time and the maximum resident set size of each and the ratio of
# each wall time to the spectrum's, and deletes the files again. The record is a 100 kHz trapezoid at 1 GS/s with a little ringing,
# time in integer nanoseconds ("Time (ns)") so the uniform-sampling check sees an exact grid.
set -euo pipefail
exe=$(realpath "$1")
samples=${2:-100000000}
folder=${3:-/tmp}
commands=${4:-spectrum scan predict}
csv="$folder/big-capture-$$.csv"
scenario="$folder/big-capture-$$.toml"
report="$folder/big-capture-$$-report"
generator="$folder/big-capture-gen-$$"
trap 'rm -rf "$csv" "$scenario" "$report" "$generator" "$generator.c" "$folder/big-capture-$$".{out,time}' EXIT

needed_kb=$((samples * 24 / 1024 + 1024))
free_kb=$(df -Pk "$folder" | awk 'NR == 2 {print $4}')
if (( free_kb < needed_kb + 1048576 )); then
  echo "not enough space in $folder: need $((needed_kb / 1024)) MB + 1 GB spare, have $((free_kb / 1024)) MB" >&2
  exit 2
fi

cat > "$generator.c" <<'C'
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
int main(int argc, char** argv) {
  const long n = atol(argv[1]);
  static char buffer[1 << 20];
  setvbuf(stdout, buffer, _IOFBF, sizeof buffer);
  printf("Time (ns),CH1 (V)\n");
  for (long i = 0; i < n; ++i) {
    const long phase = i % 10000;              /* 10 us period at 1 ns steps: 100 kHz */
    double v = phase < 4000 ? 24.0 : 0.0;      /* duty 0.4 */
    v += 2.0 * exp(-(double)phase / 50.0) * sin(0.3 * (double)phase);  /* ringing after the edge */
    printf("%ld,%.4f\n", i, v);
  }
  return 0;
}
C
cc -O2 -o "$generator" "$generator.c" -lm
echo "writing $samples samples to $csv ..."
"$generator" "$samples" > "$csv"
ls -l "$csv"
# The scenario of examples/scope-capture.toml around the generated record, band B only.
cat > "$scenario" <<TOML
title = "Generated 100 kHz capture, $samples samples at 1 GS/s"
[capture]
file = "$(basename "$csv")"
column = 2
quantity = "voltage"
frequency = "100 kHz"
[coupling]
input_capacitance = "10 uF"
input_esr = "5 mOhm"
input_esl = "1 nH"
parasitic_capacitance = "20 pF"
[lisn]
model = "v-network-50uH"
lines = 2
[receiver]
bands = ["B"]
[limits]
files = ["cispr32-class-b-conducted"]
TOML

spectrum_s=""
for command in $commands; do
  case $command in
    spectrum) args=(spectrum --capture "$csv" --fundamental 100kHz --top 5) ;;
    scan) args=(scan "$scenario" --band B) ;;
    predict) args=(predict "$scenario" -o "$report") ;;
    *) echo "unknown command $command (spectrum, scan or predict)" >&2; exit 2 ;;
  esac
  echo "running: spurcast ${args[*]}"
  status=0
  /usr/bin/time -v "$exe" "${args[@]}" > "$folder/big-capture-$$.out" 2> "$folder/big-capture-$$.time" || status=$?
  # predict exits 1 when a limit is exceeded: a finished run all the same.
  if (( status != 0 )) && ! { [[ $command == predict ]] && (( status == 1 )); }; then
    echo "$command failed:" >&2; cat "$folder/big-capture-$$.time" >&2; exit 1
  fi
  head -12 "$folder/big-capture-$$.out"
  grep -E "Elapsed|Maximum resident|Exit status" "$folder/big-capture-$$.time"
  wall=$(awk -F': ' '/Elapsed/ {n = split($2, p, ":"); s = 0; for (i = 1; i <= n; ++i) s = s * 60 + p[i]; print s}' "$folder/big-capture-$$.time")
  rss_kb=$(awk -F': ' '/Maximum resident/ {print $2}' "$folder/big-capture-$$.time")
  [[ $command == spectrum ]] && spectrum_s=$wall
  ratio=""
  [[ -n $spectrum_s ]] && ratio=$(awk -v a="$wall" -v b="$spectrum_s" 'BEGIN {printf " (%.2f x spectrum)", a / b}')
  printf '%s: %s s wall, %.2f GB max RSS%s\n' "$command" "$wall" "$(awk -v k="$rss_kb" 'BEGIN {print k * 1024 / 1e9}')" "$ratio"
  rm -rf "$report"
done
