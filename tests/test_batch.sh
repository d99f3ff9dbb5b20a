#!/bin/sh
# test_batch.sh - `eddy2d batch` end to end, and the catalogue of malformed case
# files.  Prints PASS/FAIL/SKIP lines and "#counts".
#   - a batch of small cases with variants and a bad case: outputs, status files,
#     summary, exit status; the numbers equal those of `eddy2d solve`
#   - resume: a second run rewrites nothing; a changed input reruns only that case
#   - SIGKILL midway, run again: nothing finished is rewritten (inode and mtime),
#     the rest completes, no temporary file and no orphan process is left
#   - crash isolation and the time limit (fault injection through
#     EDDY2D_TEST_FAULT, see post/app_batch_main.c)
#   - the Slurm scripts (--slurm --dry-run), run by hand task by task as Slurm
#     would, give the same summary as the local batch
#   - command-line errors exit 2 and write nothing
#   - the catalogue (tests/catalogue/EXPECTED plus generated files): `solve` and
#     `check` exit 2, name the file and the problem, write nothing; a batch of
#     them records every one as invalid and goes on
# usage: tests/test_batch.sh BUILD_DIR
B=${1:-build}
E="$(cd "$(dirname "$B/eddy2d")" && pwd)/eddy2d"
ROOT=$(pwd)
T=$(mktemp -d)
trap 'chmod -R u+rwx "$T" 2>/dev/null; rm -rf "$T"' EXIT
. tests/harness.sh

# --- small cases -------------------------------------------------------------
mkdir -p "$T/in"
small() { # name, plate thickness (mm), speeds
    cat > "$T/in/$1.json" <<JSON
{"name":"$1","length_unit":"mm","domain":{"x":[0,40],"y":[-60,60],"x_boundary":"periodic"},
 "regions":[{"name":"plate","material":"copper_annealed","box":[0,-$2,40,0],"moving":true},
            {"name":"n","material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"name":"s","material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":[$3]}
JSON
}
small alpha 4 "1,5,25"
small beta 6 "2,10"
cat > "$T/in/gamma.json" <<'JSON'
{"name":"gamma","length_unit":"mm","domain":{"x":[0,40],"y":[-60,60],"x_boundary":"periodic"},
 "regions":[{"name":"plate","material":"aluminium_6061_t6","box":[0,-5,40,0],"moving":true},
            {"name":"n","material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"name":"s","material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":[1,10],
 "variants":{"regions.plate.box":[[0,-5,40,0],[0,-8,40,0]],"regions.n.box.1":[3,4]}}
JSON
printf '{"name":"broken","domain":{"x":[0,1],"y":[0,1]},"regions":[],"speeds":[1]}' > "$T/in/broken.json"

ncase_expected=7 # alpha, beta, broken, 4 variants of gamma
out=$("$E" batch "$T/in" -o "$T/b1" 2>"$T/log1")
rc=$?
[ $rc -eq 1 ] && ok "a batch with an invalid case exits 1" || ko "batch exit status" "$rc: $(cat "$T/log1")"
n=$(ls -d "$T"/b1/*/ | wc -l)
[ "$n" -eq $ncase_expected ] && ok "one folder per case and variant ($n)" || ko "case folders" "$n: $(ls "$T/b1")"
G="gamma__box-0_-5_40_0__box.1-3"
good=1
for c in alpha beta "$G" gamma__box-0_-8_40_0__box.1-4; do
    for f in case.json result.json forces.csv forces.png input.hash; do
        [ -s "$T/b1/$c/$f" ] || { good=0; ko "outputs of $c" "$f missing"; }
    done
done
[ $good -eq 1 ] && ok "every solved case has case.json, result.json, forces.csv, forces.png, input.hash"
grep -q '"status":	"invalid"' "$T/b1/broken/error.json" && grep -q 'broken.json: regions: must not be empty' "$T/b1/broken/error.json" &&
    ok "the invalid case has error.json naming the file and the JSON path" ||
    ko "error.json of the invalid case" "$(cat "$T/b1/broken/error.json" 2>&1)"
grep -q '"variants"' "$T/b1/$G/case.json" && ko "case.json holds no variants" "found" ||
    ok "the expanded case.json holds no \"variants\""
grep -q "\"name\":	\"$G\"" "$T/b1/$G/case.json" && ok "the expanded case.json is named after its variant" ||
    ko "variant name in case.json" "$(head -3 "$T/b1/$G/case.json")"
grep -q '"box":	\[0, -8, 40, 0\]' "$T/b1/gamma__box-0_-8_40_0__box.1-4/case.json" &&
    ok "the variant's value is in its case.json" || ko "variant value" "$(grep -A1 box "$T/b1/gamma__box-0_-8_40_0__box.1-4/case.json" | head -4)"
left=$(find "$T/b1" -name '*.tmp*' | wc -l)
[ "$left" -eq 0 ] && ok "no temporary files left" || ko "temporary files" "$left"
rows=$(($(wc -l < "$T/b1/summary.csv") - 1))
# alpha 3 speeds, beta 2, gamma 4 x 2, broken 1 row
[ "$rows" -eq 14 ] && ok "summary.csv: one row per case and speed ($rows)" || ko "summary.csv rows" "$rows"
# every ok row carries its case's damping coefficient (result.json's), > 0; counted
# from the end of the row (the variant values before it are quoted and hold commas)
bad=$(awk -F, 'NR > 1 && $(NF - 2) == "ok" && !($(NF - 7) + 0 > 0)' "$T/b1/summary.csv" | wc -l)
okrows=$(awk -F, 'NR > 1 && $(NF - 2) == "ok"' "$T/b1/summary.csv" | wc -l)
[ "$okrows" -gt 0 ] && [ "$bad" -eq 0 ] &&
    ok "summary.csv: the damping coefficient of every ok row ($okrows) is a positive number" ||
    ko "summary.csv damping column" "$bad of $okrows ok rows without it"
head -n 1 "$T/b1/summary.csv" | grep -q '^case,source,regions.plate.box,regions.n.box.1,speed_m_per_s,drag_force_N_per_m,force_y_N_per_m,loss_W_per_m,peak_drag_N_per_m,peak_drag_speed_m_per_s,damping_coefficient_N_s_per_m2,linear_up_to_speed_m_per_s,terminal_speed_m_per_s,drag_force_error_N_per_m,force_y_error_N_per_m,status,error,seconds$' &&
    ok "summary.csv header: case, variant values, speed, forces, loss, peak, damping, linear range, terminal speed, error estimates, status, error, seconds" ||
    ko "summary.csv header" "$(head -n 1 "$T/b1/summary.csv")"
grep -q "^$G,.*,\"\[0,-5,40,0\]\",3,1," "$T/b1/summary.csv" && ok "summary.csv rows carry the variant values" ||
    ko "variant values in summary.csv" "$(grep "^$G" "$T/b1/summary.csv" | head -1)"
for key in '"rows"' '"counts"' '"peak_drag_speed"' '"notice"'; do
    grep -q "$key" "$T/b1/summary.json" || ko "summary.json has $key" "missing"
done
ok "summary.json has rows, counts, peak drag and the notice"
nimg=$(grep -o '<img src="[^"]*/forces.png"' "$T/b1/summary.html" | wc -l)
[ "$nimg" -eq 6 ] && grep -q '<table id="cases">' "$T/b1/summary.html" &&
    ok "summary.html: the case table and one plot per solved case ($nimg)" || ko "summary.html" "$nimg images"
echo "$out" | grep -q "licensed engineers" && ok "the batch report shows the safety notice" || ko "safety notice" "$out"
grep -q "broken: invalid: .*broken.json: regions: must not be empty" "$T/log1" &&
    ok "the log names the failed case and why" || ko "log" "$(cat "$T/log1")"

# the same numbers as a plain solve of the same case file
"$E" solve "$T/b1/$G/case.json" -o "$T/solo" -q --no-images
cmp -s "$T/solo/forces.csv" "$T/b1/$G/forces.csv" && ok "batch results equal those of eddy2d solve" ||
    ko "batch vs solve" "$(diff "$T/solo/forces.csv" "$T/b1/$G/forces.csv" | head -4)"

# --- resume -------------------------------------------------------------------
snap() { # list inode and mtime (ns) of every file in a folder tree
    find "$1" -type f ! -name 'summary.*' -exec stat -c '%n %i %.9Y' {} + | sort
}
snap "$T/b1" > "$T/s1"
"$E" batch "$T/in" -o "$T/b1" >/dev/null 2>"$T/log2"
rc=$?
snap "$T/b1" > "$T/s2"
[ $rc -eq 1 ] && cmp -s "$T/s1" "$T/s2" && ok "a second run rewrites nothing (inode and mtime of every file)" ||
    ko "second run" "exit $rc; $(diff "$T/s1" "$T/s2" | head -6)"
n=$(grep -c "up to date, skipped" "$T/log2")
[ "$n" -eq 6 ] && ok "the second run skips the 6 finished cases" || ko "skipped" "$n: $(cat "$T/log2")"
# fix the broken case, change one speed list: only those two run
small broken 3 "1,2"
small beta 6 "2,10,20"
"$E" batch "$T/in" -o "$T/b1" >/dev/null 2>"$T/log3"
rc=$?
ran=$(grep -c ": ok in " "$T/log3")
[ $rc -eq 0 ] && [ "$ran" -eq 2 ] && grep -q "beta: ok in" "$T/log3" && grep -q "broken: ok in" "$T/log3" &&
    ok "a fixed and a changed case are solved again, the others not (exit 0)" || ko "changed inputs" "exit $rc: $(cat "$T/log3")"
[ ! -e "$T/b1/broken/error.json" ] && [ "$(wc -l < "$T/b1/beta/forces.csv")" -eq 4 ] &&
    ok "the rerun replaced the old error and result" || ko "rerun outputs" "stale files"
snap "$T/b1" | grep -v "/beta/\|/broken/\|batch.json" > "$T/s3"
grep -v "/beta/\|/broken/\|batch.json" "$T/s1" > "$T/s1b"
cmp -s "$T/s1b" "$T/s3" && ok "the unchanged cases were not touched" || ko "unchanged cases" "$(diff "$T/s1b" "$T/s3" | head -4)"

# --- SIGKILL midway and resume ------------------------------------------------
mkdir -p "$T/many"
for k in 1 2 3 4 5 6; do
    small "k$k" 4 "1,3,10,30"
    mv "$T/in/k$k.json" "$T/many/"
done
"$E" batch "$T/many" -o "$T/b2" -j 1 >/dev/null 2>&1 &
pid=$!
waited=0
while [ "$(ls "$T"/b2/*/input.hash 2>/dev/null | wc -l)" -lt 2 ] && [ $waited -lt 600 ]; do
    sleep 0.1
    waited=$((waited + 1))
done
kill -9 $pid 2>/dev/null
wait $pid 2>/dev/null
done_before=$(ls "$T"/b2/*/input.hash 2>/dev/null | wc -l)
sleep 1
orphans=0
for f in /proc/[0-9]*/cmdline; do # a case process has the batch's command line
    { tr '\0' ' ' < "$f"; } 2>/dev/null | grep -qF -- "-o $T/b2 " && orphans=$((orphans + 1))
done
[ "$orphans" -eq 0 ] && ok "no case process outlives a killed batch" || ko "orphans" "$orphans processes"
if [ "$done_before" -ge 2 ] && [ "$done_before" -lt 6 ]; then
    ok "the batch was killed midway ($done_before of 6 finished)"
else
    ko "kill midway" "$done_before of 6 finished when killed"
fi
snap "$T/b2" | grep -v batch.json > "$T/k1"
finished=$(for f in "$T"/b2/*/input.hash; do basename "$(dirname "$f")"; done)
"$E" batch "$T/many" -o "$T/b2" -j 1 >/dev/null 2>"$T/log4"
rc=$?
snap "$T/b2" > "$T/k2"
kept=1
for c in $finished; do
    grep "/b2/$c/" "$T/k1" > "$T/k1c"
    grep "/b2/$c/" "$T/k2" > "$T/k2c"
    cmp -s "$T/k1c" "$T/k2c" || kept=0
done
[ $kept -eq 1 ] && ok "finished cases are not rewritten after SIGKILL (inode and mtime)" ||
    ko "finished cases after SIGKILL" "$(diff "$T/k1" "$T/k2" | head -6)"
ndone=$(ls "$T"/b2/*/input.hash | wc -l)
nskip=$(grep -c "up to date, skipped" "$T/log4")
[ $rc -eq 0 ] && [ "$ndone" -eq 6 ] && [ "$nskip" -eq "$done_before" ] &&
    ok "the rerun completes the unfinished cases only ($((6 - nskip)) solved)" || ko "rerun after SIGKILL" "exit $rc, $ndone done, $nskip skipped"
left=$(find "$T/b2" -name '*.tmp*' | wc -l)
[ "$left" -eq 0 ] && ok "no temporary files after the kill and rerun" || ko "temporaries after kill" "$left"
grep -c ',ok,' "$T/b2/summary.csv" | grep -q '^24$' && ok "the summary lists all 24 points as ok" ||
    ko "summary after kill" "$(grep -c ',ok,' "$T/b2/summary.csv")"

# --- one batch at a time in a folder ------------------------------------------
EDDY2D_TEST_FAULT=hang:k1 "$E" batch "$T/many/k1.json" -o "$T/b9" --case-timeout 20 >/dev/null 2>&1 &
pid=$!
waited=0
while [ ! -s "$T/b9/batch.json" ] && [ $waited -lt 100 ]; do
    sleep 0.1
    waited=$((waited + 1))
done
"$E" batch "$T/many/k1.json" -o "$T/b9" >/dev/null 2>"$T/err"
rc=$?
kill -9 $pid 2>/dev/null
wait $pid 2>/dev/null
[ $rc -eq 2 ] && grep -q "another batch is running" "$T/err" &&
    ok "a second batch in a busy folder exits 2" || ko "folder lock" "exit $rc: $(cat "$T/err")"

# --- crash isolation and time limit ------------------------------------------
EDDY2D_TEST_FAULT=crash:k3 "$E" batch "$T/many" -o "$T/b3" >/dev/null 2>"$T/log5"
rc=$?
nok=$(ls "$T"/b3/*/input.hash 2>/dev/null | wc -l)
[ $rc -eq 1 ] && [ "$nok" -eq 5 ] && grep -q '"status":	"crashed"' "$T/b3/k3/error.json" &&
    grep -q "signal 6" "$T/b3/k3/error.json" &&
    ok "a case that crashes is recorded (signal 6), the other 5 finish, exit 1" ||
    ko "crash isolation" "exit $rc, $nok ok: $(cat "$T/log5")"
"$E" batch "$T/many" -o "$T/b3" >/dev/null 2>"$T/log6"
rc=$?
[ $rc -eq 0 ] && [ ! -e "$T/b3/k3/error.json" ] && [ -s "$T/b3/k3/input.hash" ] &&
    [ "$(grep -c ': ok in ' "$T/log6")" -eq 1 ] &&
    ok "the crashed case is redone on the next run, alone" || ko "redo after crash" "exit $rc: $(cat "$T/log6")"
t0=$(date +%s)
EDDY2D_TEST_FAULT=hang:k2 "$E" batch "$T/many/k1.json" "$T/many/k2.json" -o "$T/b4" --case-timeout 5 \
    -j 2 --no-images >/dev/null 2>"$T/log7"
rc=$?
t1=$(date +%s)
[ $rc -eq 1 ] && grep -q '"status":	"timeout"' "$T/b4/k2/error.json" &&
    grep -q "time limit of 5 s" "$T/b4/k2/error.json" && [ $((t1 - t0)) -lt 30 ] &&
    [ -s "$T/b4/k1/input.hash" ] &&
    ok "a case over --case-timeout is stopped and recorded, the other finishes ($((t1 - t0)) s)" ||
    ko "timeout" "exit $rc, $((t1 - t0)) s: $(cat "$T/log7")"

# --- progress line on a terminal, plain log otherwise -------------------------
if command -v script >/dev/null 2>&1; then
    script -qec "'$E' batch '$T/many' -o '$T/b8' -j 2" /dev/null > "$T/tty" 2>&1
    if grep -q "batch \[6/6\] 0 failed" "$T/tty" && grep -q "$(printf '\r')" "$T/tty" &&
        grep -q "elapsed" "$T/tty" && ! grep -q ": ok in " "$T/tty"; then
        ok "on a terminal: one progress line (cases done/total, failures, elapsed)"
    else
        ko "progress line" "$(tr '\r' '\n' < "$T/tty" | head -5)"
    fi
else
    skip "progress line on a terminal" "script(1) is not installed"
fi
grep -q "$(printf '\r')" "$T/log4" && ko "plain log" "carriage returns in a log file" ||
    ok "not on a terminal: plain log lines"

# --- Slurm scripts, run by hand as Slurm would --------------------------------
mkdir -p "$T/sin"
cp "$T/in/alpha.json" "$T/in/gamma.json" "$T/sin/"
"$E" batch "$T/sin" -o "$T/b5" --no-images >/dev/null 2>&1
"$E" batch "$T/sin" -o "$T/b6" --no-images --slurm --dry-run --case-timeout 120 >"$T/log8" 2>&1
rc=$?
A="$T/b6"
if [ $rc -eq 0 ] && grep -q '^#SBATCH --array=0-4$' "$A/batch.sbatch" && grep -q -- '--run-one "$SLURM_ARRAY_TASK_ID"' "$A/batch.sbatch" &&
    grep -q -- '--summary-only' "$A/summary.sbatch" && grep -q 'afterany' "$A/submit.sh" && [ -d "$A/slurm" ]; then
    ok "--slurm --dry-run writes the job array (5 tasks), the summary job and submit.sh"
else
    ko "slurm scripts" "exit $rc: $(cat "$T/log8"; cat "$A/batch.sbatch" 2>&1)"
fi
[ ! -e "$A/alpha/result.json" ] && ok "--dry-run solves nothing" || ko "dry run" "solved"
for i in 0 1 2 3 4; do
    SLURM_ARRAY_TASK_ID=$i sh "$A/batch.sbatch" >/dev/null 2>&1 || true
done
sh "$A/summary.sbatch" >/dev/null 2>&1
rc=$?
strip() { cut -d, -f1,3- "$1" | sed 's/,[^,]*$//'; } # no source, no seconds
if [ $rc -eq 0 ] && [ -s "$A/summary.csv" ] && strip "$T/b5/summary.csv" > "$T/loc.csv" && strip "$A/summary.csv" > "$T/slu.csv" &&
    cmp -s "$T/loc.csv" "$T/slu.csv"; then
    ok "array tasks and the summary job give the local batch's summary, number for number"
else
    ko "slurm emulation" "exit $rc: $(diff "$T/loc.csv" "$T/slu.csv" | head -4)"
fi
SLURM_ARRAY_TASK_ID=0 sh "$A/batch.sbatch" > "$T/log9" 2>&1
grep -q "up to date, skipped" "$T/log9" && ok "a repeated array task skips its finished case" || ko "task resume" "$(cat "$T/log9")"
rm -f "$A/alpha/input.hash"
"$E" batch "$T/sin" -o "$A" --no-images --slurm --dry-run >/dev/null 2>&1
grep -q '^#SBATCH --array=0$' "$A/batch.sbatch" && ok "a resubmission lists only the unfinished cases" ||
    ko "resubmission array" "$(grep array "$A/batch.sbatch")"
"$E" batch --run-one 9 -o "$A" >/dev/null 2>&1
[ $? -eq 2 ] && ok "--run-one with an index beyond the plan exits 2" || ko "--run-one range" "exit $?"

# --- command-line errors: exit 2, nothing written ------------------------------
cli_bad() { # name, args...
    name=$1
    shift
    rm -rf "$T/nothing"
    "$E" batch "$@" >/dev/null 2>"$T/err"
    rc=$?
    if [ $rc -eq 2 ] && [ ! -e "$T/nothing" ] && [ -s "$T/err" ]; then
        ok "batch $name: exit 2, a message, nothing written"
    else
        ko "batch $name" "exit $rc, wrote: $([ -e "$T/nothing" ] && echo yes || echo no), $(cat "$T/err")"
    fi
}
cli_bad "without -o" "$T/in"
cli_bad "without cases" -o "$T/nothing"
cli_bad "with an unknown option" "$T/in" -o "$T/nothing" --frobnicate
cli_bad "with -j 0" "$T/in" -o "$T/nothing" -j 0
cli_bad "with a bad --case-timeout" "$T/in" -o "$T/nothing" --case-timeout -3
cli_bad "with a missing input" "$T/does-not-exist" -o "$T/nothing"
mkdir -p "$T/emptydir"
cli_bad "with a folder without cases" "$T/emptydir" -o "$T/nothing"
cli_bad "with --dry-run alone" "$T/in" -o "$T/nothing" --dry-run
cli_bad "--summary-only without a plan" --summary-only -o "$T/nothing"
: > "$T/afile"
"$E" batch "$T/in" -o "$T/afile/sub" >/dev/null 2>"$T/err"
rc=$?
[ $rc -eq 2 ] && grep -q "afile" "$T/err" && ok "batch with -o under a file: exit 2, the message names it" ||
    ko "batch -o under a file" "exit $rc: $(cat "$T/err")"
cli_bad "with two cases of one name" "$T/in/alpha.json" "$T/in/alpha.json" -o "$T/nothing"
grep -q 'alpha.json and .*alpha.json: two cases named "alpha"' "$T/err" &&
    ok "the duplicate-name message names both files" || ko "duplicate message" "$(cat "$T/err")"
"$E" batch --help | grep -q -- "--case-timeout" && ok "batch --help lists the options" || ko "batch --help" "no usage"
"$E" --help | grep -q "eddy2d batch" && ok "eddy2d --help mentions batch" || ko "--help" "no batch"
"$E" solve "$T/in/gamma.json" -o "$T/plain" -q --no-images 2>"$T/warn"
grep -q "variants: ignored here" "$T/warn" && ok "a plain solve ignores \"variants\" with a warning" ||
    ko "solve warns about variants" "$(cat "$T/warn")"

# --- an axisymmetric batch: units of the whole ring in the summary ------------
cat > "$T/in/rzb.json" <<'JSON'
{"name":"rzb","geometry":"axisymmetric","length_unit":"mm","domain":{"r":[0,150],"z":[-150,150]},
 "regions":[{"name":"tube","material":"aluminium_6063_t5","box":[12,-150,15,150],"moving":true},
            {"name":"magnet","material":"ndfeb_42","box":[0,-8,10,8],"magnetization_angle":90}],
 "speeds":[0.5,4],
 "variants":{"regions.tube.box":[[12,-150,15,150],[12,-150,17,150]]}}
JSON
if "$E" batch "$T/in/rzb.json" -o "$T/rzb" -q -j 1 >/dev/null 2>&1 &&
   head -n 1 "$T/rzb/summary.csv" | grep -q ',drag_force_N,force_y_N,loss_W,peak_drag_N,' &&
   grep -q '"drag_force":	"N"' "$T/rzb/summary.json" &&
   grep -q 'peak drag (N)' "$T/rzb/summary.html" &&
   [ "$(grep -c ',ok,' "$T/rzb/summary.csv")" -eq 4 ]; then
    ok "axisymmetric batch: two variants solved, summary in N and W of the whole ring"
else
    ko "axisymmetric batch" "$(head -n 2 "$T/rzb/summary.csv" 2>/dev/null | tr '\n' ' ')"
fi

# --- the catalogue of malformed case files -----------------------------------
C="$T/catalogue"
mkdir -p "$C"
cp "$ROOT"/tests/catalogue/*.json "$C/"
cp "$ROOT/tests/catalogue/EXPECTED" "$T/expected"
gen() { printf '%s\t%s\n' "$1" "$2" >> "$T/expected"; }
head -c 3000 "$E" > "$C/binary_nul.json"
gen binary_nul.json "contains a NUL byte"
printf '\377\376\375{\200\201\202' > "$C/binary_no_nul.json"
gen binary_no_nul.json "not valid JSON"
mkdir "$C/folder.json"
gen folder.json "read error"
awk 'BEGIN{for(i=0;i<100000;i++) printf "["; for(i=0;i<100000;i++) printf "]"}' > "$C/deep_arrays.json"
gen deep_arrays.json "not valid JSON"
awk 'BEGIN{for(i=0;i<2000;i++) printf "{\"a\":"; printf "1"; for(i=0;i<2000;i++) printf "}"}' > "$C/deep_objects.json"
gen deep_objects.json "not valid JSON"
awk 'BEGIN{printf "{\"name\":\""; for(i=0;i<1000000;i++) printf "n"; printf "\",\"domain\":{\"x\":[0,10],\"y\":[-5,5]},\"regions\":[{\"material\":\"copper_annealed\",\"box\":[0,-2,10,0],\"moving\":true}],\"speeds\":[1]}"}' > "$C/long_name.json"
gen long_name.json "name: must have 1 to 63 characters"
awk 'BEGIN{printf "{\"domain\":{\"x\":[0,10],\"y\":[-5,5]},\"regions\":[{\"material\":\"copper_annealed\",\"box\":[0,-2,10,0],\"moving\":true},{\"material\":\""; for(i=0;i<1000000;i++) printf "m"; printf "\",\"box\":[1,1,2,2]}],\"speeds\":[1]}"}' > "$C/long_material.json"
gen long_material.json "regions[1].material: unknown material"
awk 'BEGIN{printf "{\"domain\":{\"x\":[0,10],\"y\":[-5,5]},\"regions\":[{\"material\":\"copper_annealed\",\"box\":[0,-2,10,0],\"moving\":true}],\"speeds\":["; for(i=0;i<100000;i++) printf "9"; printf "]}"}' > "$C/long_number.json"
gen long_number.json "speeds[0]: must be a"
head -c 17000000 /dev/zero | tr '\0' ' ' > "$C/oversized.json"
gen oversized.json "larger than 16777216 bytes"
printf '{}' > "$C/unreadable.json"
chmod 000 "$C/unreadable.json"
if [ -r "$C/unreadable.json" ]; then
    skip "catalogue: unreadable.json" "running as root, who can read a file of mode 000"
    rm -f "$C/unreadable.json"
else
    gen unreadable.json "cannot open"
fi
mkdir -p "$T/cwd"
nfile=0
tab=$(printf '\t')
while IFS="$tab" read -r file frag; do
    case $file in ''|'#'*) continue ;; esac
    nfile=$((nfile + 1))
    for cmd in solve check; do
        rm -rf "$T/catout"
        if [ $cmd = solve ]; then
            msg=$(cd "$T/cwd" && "$E" solve "$C/$file" -o "$T/catout" 2>&1 >/dev/null)
        else
            msg=$(cd "$T/cwd" && "$E" check "$C/$file" 2>&1 >/dev/null)
        fi
        rc=$?
        written=$(ls -A "$T/cwd" | wc -l)
        [ -e "$T/catout" ] && written=$((written + 1))
        if [ $rc -eq 2 ] && [ "$written" -eq 0 ] && printf '%s' "$msg" | grep -qF -- "$file" &&
            printf '%s' "$msg" | grep -qF -- "$frag"; then
            ok "catalogue: $cmd $file: exit 2, names the file and the problem, writes nothing"
        else
            ko "catalogue: $cmd $file" "exit $rc, $written written, message: $(printf '%s' "$msg" | cut -c1-300)"
        fi
    done
done < "$T/expected"
# the whole catalogue as one batch: every case invalid, the batch goes on
"$E" batch "$C" -o "$T/b7" >/dev/null 2>"$T/log10"
rc=$?
ninvalid=$(grep -c '"status":	"invalid"' "$T"/b7/*/error.json | grep -c ':1$')
nres=$(find "$T/b7" -name result.json | wc -l)
[ $rc -eq 1 ] && [ "$ninvalid" -eq "$nfile" ] && [ "$nres" -eq 0 ] &&
    ok "a batch of the catalogue records all $nfile files as invalid, solves none, exit 1" ||
    ko "catalogue batch" "exit $rc, $ninvalid of $nfile invalid, $nres results: $(tail -3 "$T/log10")"

finish
