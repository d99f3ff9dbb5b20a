#!/bin/sh
# valgrind-case.sh - valgrind memcheck on one small case: `eddy2d solve` with
# pictures, and `eddy2d batch` of it with a variant (the forked case processes
# are checked too: valgrind follows fork).  Any memcheck error or definite leak
# fails.  Prints PASS/FAIL/SKIP lines and "#counts".
# usage: .ci/valgrind-case.sh [BUILD_DIR]
set -u
cd "$(dirname "$0")/.."
B=${1:-build}
E="$(pwd)/$B/eddy2d"
. tests/harness.sh
if ! command -v valgrind >/dev/null 2>&1; then
    skip valgrind "not installed (CI installs it)"
    finish
fi
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
cat > "$T/small.json" <<'JSON'
{"name":"small","length_unit":"mm","domain":{"x":[0,40],"y":[-40,40],"x_boundary":"periodic"},
 "regions":[{"name":"plate","material":"copper_annealed","box":[0,-4,40,0],"moving":true},
            {"name":"n","material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"name":"s","material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":[2,20], "mesh":{"max_size":8,"growth":1.5},
 "profiles":[{"name":"probe","from":[0,1],"to":[40,1],"points":21}],
 "variants":{"regions.n.box.1":[3,4]}}
JSON
VG="valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite --show-leak-kinds=definite --suppressions=tests/valgrind.supp"
$VG "$E" solve "$T/small.json" -o "$T/solve" -q --vtk > "$T/solve.log" 2>&1
rc=$?
[ $rc -eq 0 ] && [ -s "$T/solve/result.json" ] && ok "valgrind: solve of a small case, no error, no leak" ||
    ko "valgrind solve" "exit $rc: $(tail -20 "$T/solve.log")"
$VG "$E" batch "$T/small.json" -o "$T/batch" -j 2 -q > "$T/batch.log" 2>&1
rc=$?
n=$(ls "$T"/batch/*/input.hash 2>/dev/null | wc -l)
[ $rc -eq 0 ] && [ "$n" -eq 2 ] && ! grep -q "==[0-9]*==" "$T/batch.log" &&
    ok "valgrind: batch of 2 variants in child processes, no error, no leak" ||
    ko "valgrind batch" "exit $rc, $n cases: $(tail -20 "$T/batch.log")"
finish
