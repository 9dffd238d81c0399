#!/bin/sh
# A short run of every libFuzzer harness of a fuzz build (FIRNRAY_BUILD_FUZZ=ON), as CI does it:
#   fuzz/run_short.sh BUILD_DIR [MAX_SECONDS_PER_HARNESS] [RUNS_PER_HARNESS]
#       (defaults: at most 60 s each; 2500 inputs each, 400 for the slow fuzz_find_paths; about
#       60-90 s in all on this project's 2-core machines)
# The runs use a fixed seed (FUZZ_SEED, default 1) and a fixed number of inputs from a fresh seed
# corpus, so a CI run on the same code explores the same inputs and cannot turn red by luck; the
# time cap only guards against a very slow machine. Fuzz longer and with other seeds by hand
# (DEVELOPERS.md) and keep what is found in tests/fuzz_regressions/.
# Each harness starts from BUILD_DIR/fuzz-corpus/NAME (target fuzz_seed_corpus) and adds what it
# finds there. A crash, a leak, a time-out (20 s for one input) or running out of memory stops
# that harness; its input is saved as BUILD_DIR/fuzz-artifacts/NAME-crash-... and the script
# exits 1 after the others have run. Keep such an input in tests/fuzz_regressions/NAME/.
set -eu
build="$1"
seconds="${2:-60}"
runs_asked="${3:-}"
seed="${FUZZ_SEED:-1}"
corpus="$build/fuzz-corpus"
artifacts="$build/fuzz-artifacts"
mkdir -p "$artifacts"
passed=0
failed=0
for harness in "$build"/fuzz_*; do
  [ -f "$harness" ] && [ -x "$harness" ] || continue
  name=$(basename "$harness")
  if [ -n "$runs_asked" ]; then runs="$runs_asked"
  elif [ "$name" = fuzz_find_paths ]; then runs=400
  else runs=2500; fi
  mkdir -p "$corpus/$name"
  log="$artifacts/$name.log"
  if "$harness" -seed="$seed" -runs="$runs" -max_total_time="$seconds" -timeout=20 -rss_limit_mb=2560 -max_len=4096 \
       -artifact_prefix="$artifacts/$name-" "$corpus/$name" >"$log" 2>&1; then
    echo "fuzz $name: no finding (seed $seed, at most $runs inputs or ${seconds} s) ($(grep -c . "$log") log lines, corpus $(ls "$corpus/$name" | wc -l) inputs)"
    passed=$((passed + 1))
  else
    echo "fuzz $name: FOUND A PROBLEM; the end of $log:"
    tail -n 40 "$log"
    ls "$artifacts/$name-"* 2>/dev/null || true
    failed=$((failed + 1))
  fi
done
if [ $((passed + failed)) -eq 0 ]; then
  echo "no fuzz harness found in $build (was it configured with -DFIRNRAY_BUILD_FUZZ=ON?)" >&2
  exit 1
fi
echo "fuzz: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
