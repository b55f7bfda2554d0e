#!/usr/bin/env bash
# Peak resident memory of `spurcast spectrum --capture` on a 10^8-sample capture (issue 9: must stay
# under 2.5 GB: the samples once, no full second copy).
#
#   tests/bench/memory.sh SPURCAST_EXECUTABLE [SAMPLES] [FOLDER]
#
# Writes FOLDER/big-capture.csv (default /tmp; about 2.3 GB for 10^8 samples: check `df -h` first),
# runs the spectrum under /usr/bin/time -v, prints the wall time and the maximum resident set size,
# and deletes the file again. The record is a 100 kHz trapezoid at 1 GS/s with a little ringing,
# time in integer nanoseconds ("Time (ns)") so the uniform-sampling check sees an exact grid.
set -euo pipefail
exe=$(realpath "$1")
samples=${2:-100000000}
folder=${3:-/tmp}
csv="$folder/big-capture-$$.csv"
generator="$folder/big-capture-gen-$$"
trap 'rm -f "$csv" "$generator" "$generator.c"' EXIT

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
echo "running: $exe spectrum --capture $csv --fundamental 100kHz"
/usr/bin/time -v "$exe" spectrum --capture "$csv" --fundamental 100kHz --top 5 > "$folder/big-capture-$$.out" 2> "$folder/big-capture-$$.time" || {
  echo "spectrum failed:" >&2; cat "$folder/big-capture-$$.time" >&2; rm -f "$folder/big-capture-$$".{out,time}; exit 1; }
head -20 "$folder/big-capture-$$.out"
grep -E "Elapsed|Maximum resident|Exit status" "$folder/big-capture-$$.time"
rm -f "$folder/big-capture-$$".{out,time}
