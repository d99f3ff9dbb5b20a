#!/bin/sh
# Digest of every output file of the demo cases and of tests/golden/*.json
# (solve with -j 1, so the Newton warm starts do not depend on thread timing,
# and a batch of two variants), with the fields that change from run to run
# (timings, threads, the tool's version) removed.  A restructuring that must
# not change behaviour is checked with `make same-outputs`, which compares
# this digest with tests/golden/digests.txt.  After a change that is meant to
# alter outputs, regenerate it with `make same-outputs UPDATE=1` and say why in
# the commit.
# usage: tests/same_outputs.sh BUILD_DIR WORK_DIR
set -eu
B=$1
W=$2
rm -rf "$W"
mkdir -p "$W"
for c in cases/*.json tests/golden/*.json; do
    n=$(basename "$c" .json)
    "$B/eddy2d" solve "$c" -o "$W/solve/$n" -q -j 1 --vtk >/dev/null 2>"$W/$n.stderr" || {
        echo "FAIL: eddy2d solve $c (see $W/$n.stderr)" >&2; exit 1; }
done
"$B/eddy2d" reference tests/golden/reference.json -o "$W/reference" -q >/dev/null 2>"$W/reference.stderr" || {
    echo "FAIL: eddy2d reference (see $W/reference.stderr)" >&2; exit 1; }
"$B/eddy2d" batch tests/golden/batch.json -o "$W/batch" -q -j 1 >/dev/null 2>"$W/batch.stderr" || {
    echo "FAIL: eddy2d batch (see $W/batch.stderr)" >&2; exit 1; }
# normalise: drop the lines with timings, thread counts, the tool name and
# absolute paths of this work folder
cd "$W"
find solve reference batch -type f | LC_ALL=C sort | while read -r f; do
    case $f in
    *.png|*.vtr) sum=$(sha256sum < "$f" | cut -c1-16) ;;
    */summary.csv) sum=$(sed 's/,[0-9.]*$//' "$f" | sha256sum | cut -c1-16) ;;
    *) sum=$(grep -v -E 'seconds|"speed_workers"|"blas"|"blas_threads"|"tool"|"written"|eddy2d [0-9]+\.[0-9]+' "$f" |
             sed -e "s|$W|WORK|g" -e 's|<td class="num">[0-9.]*</td><td class="err">|<td class="err">|' |
             sha256sum | cut -c1-16) ;;
    esac
    printf '%s  %s\n' "$sum" "$f"
done
