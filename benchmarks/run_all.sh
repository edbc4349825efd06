#!/bin/sh
# Run every benchmark in turn and print their figures (ours, a plain baseline from the same run, the ratio).
# Usage: sh benchmarks/run_all.sh [--quick]
#   --quick: fewer runs, 100 rotors and a 1,000-row memory sheet (minutes instead of a quarter of an hour).
# Exit status: 0 when every target is met, 1 otherwise. Not part of the test suite: timing is evidence
# here, never a pass/fail of the tests.
set -u
here=$(dirname "$0")
python=${PYTHON:-python}
status=0
if [ "${1:-}" = "--quick" ]; then
    "$python" "$here/bench_startup.py" --runs 7 || status=1
    "$python" "$here/bench_arrays.py" --runs 5 || status=1
    "$python" "$here/bench_batch.py" --rotors 100 --runs 3 --memory-rows 1000 || status=1
    "$python" "$here/bench_register.py" --jobs 10000 --records 50 --runs 3 || status=1
    "$python" "$here/bench_web.py" --clients 2 --requests 50 --seconds 20 || status=1
else
    "$python" "$here/bench_startup.py" --runs 15 || status=1
    "$python" "$here/bench_arrays.py" --runs 7 || status=1
    "$python" "$here/bench_batch.py" --rotors 1000 --runs 3 --memory-rows 10000 || status=1
    "$python" "$here/bench_register.py" --jobs 100000 --records 200 --runs 5 || status=1
    "$python" "$here/bench_web.py" --clients 4 --requests 200 --seconds 60 || status=1
fi
exit $status
