# harness.sh - the one PASS/FAIL/SKIP harness of the shell-based tests
# (tests/*.sh and .ci/*.sh); source it from the repository's top folder:
#     . tests/harness.sh
# ok NAME [FIGURES]   a check that passed
# ko NAME WHY         a check that failed (WHY: what was seen)
# skip NAME WHY       a check that could not run here
# finish              print the "#counts PASSED FAILED" line that tests/run.sh
#                     adds up, and exit 0 if nothing failed, else 1
pass=0
fail=0
skipped=0
ok() { echo "PASS $1${2:+: $2}"; pass=$((pass + 1)); }
ko() { echo "FAIL $1: $2"; fail=$((fail + 1)); }
skip() { echo "SKIP $1: $2"; skipped=$((skipped + 1)); }
finish() {
    echo "#counts $pass $fail"
    [ "$fail" -eq 0 ]
    exit $?
}
