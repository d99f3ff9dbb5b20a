#!/bin/sh
# Run the test programs, show their PASS/FAIL/SKIP lines, and end with
# "N passed, N failed, N skipped".  A program that dies without its "#counts"
# line counts as one failure; so does one that runs longer than its time
# limit (TEST_TIMEOUT seconds, default 600; it is stopped).  $VALGRIND, if
# set, prefixes every C test program.
# usage: tests/run.sh BUILD_DIR test_prog... script.sh...
B=$1
export LSAN_OPTIONS="suppressions=$(pwd)/tests/lsan.supp${LSAN_OPTIONS:+:$LSAN_OPTIONS}"
LIMIT=${TEST_TIMEOUT:-600}
shift
passed=0
failed=0
skipped=0
for t in "$@"; do
    echo "== $t"
    case $t in
    *.sh) out=$(timeout -k 10 "$LIMIT" sh "tests/$t" "$B" 2>&1); rc=$? ;;
    *) out=$(timeout -k 10 "$LIMIT" ${VALGRIND:-} "$B/tests/$t" 2>&1); rc=$? ;;
    esac
    printf '%s\n' "$out" | grep -v '^#counts'
    s=$(printf '%s\n' "$out" | grep -c '^SKIP')
    skipped=$((skipped + s))
    if [ $rc -eq 124 ] || [ $rc -eq 137 ]; then
        echo "FAIL $t: stopped after its time limit of $LIMIT s (TEST_TIMEOUT)"
        failed=$((failed + 1))
        continue
    fi
    counts=$(printf '%s\n' "$out" | grep '^#counts' | tail -n 1)
    if [ -z "$counts" ]; then
        echo "FAIL $t: ended without a summary (exit status $rc)"
        failed=$((failed + 1))
        continue
    fi
    p=$(echo "$counts" | cut -d' ' -f2)
    f=$(echo "$counts" | cut -d' ' -f3)
    passed=$((passed + p))
    failed=$((failed + f))
    if [ "$f" -eq 0 ] && [ "$rc" -ne 0 ]; then
        echo "FAIL $t: exit status $rc"
        failed=$((failed + 1))
    fi
done
echo "$passed passed, $failed failed, $skipped skipped"
[ "$failed" -eq 0 ]
