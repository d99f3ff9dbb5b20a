#!/bin/sh
# test_cli.sh - the command line: exit statuses, messages, outputs written
# atomically and only on success.  Prints PASS/FAIL lines and "#counts".
# usage: tests/test_cli.sh BUILD_DIR
B=${1:-build}
E="$B/eddy2d"
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
. tests/harness.sh

# bad input: exit 2, a message naming the file and JSON path, nothing written
bad() { # name, case text, expected message fragment
    printf '%s' "$2" > "$T/bad.json"
    rm -rf "$T/out"
    msg=$($E solve "$T/bad.json" -o "$T/out" 2>&1 >/dev/null)
    rc=$?
    if [ $rc -eq 2 ] && [ ! -e "$T/out" ] && echo "$msg" | grep -qF -- "$3" &&
        echo "$msg" | grep -qF "bad.json"; then
        ok "solve rejects $1 (exit 2, nothing written)"
    else
        ko "solve rejects $1" "exit $rc, out exists: $([ -e "$T/out" ] && echo yes || echo no), message: $msg"
    fi
}
DOM='"domain":{"x":[0,10],"y":[-5,5]}'
PLATE='{"material":"copper_annealed","box":[0,-2,10,0],"moving":true}'
bad "truncated JSON" '{"name":"x","domain":{"x":[0,1' "not valid JSON"
bad "wrong type" "{$DOM,\"regions\":[$PLATE],\"speeds\":\"fast\"}" "speeds: must be an array"
bad "unknown material" "{$DOM,\"regions\":[$PLATE,{\"material\":\"nope\",\"box\":[1,1,2,2]}],\"speeds\":[1]}" "regions[1].material"
bad "non-positive permeability" "{$DOM,\"materials\":{\"m\":{\"relative_permeability\":-2}},\"regions\":[$PLATE],\"speeds\":[1]}" "relative_permeability"
bad "negative conductivity" "{$DOM,\"materials\":{\"m\":{\"conductivity\":-2}},\"regions\":[$PLATE],\"speeds\":[1]}" "conductivity"
bad "zero-area box" "{$DOM,\"regions\":[$PLATE,{\"box\":[3,1,3,2]}],\"speeds\":[1]}" "regions[1].box: x1 must be greater than x0"
bad "box outside the domain" "{$DOM,\"regions\":[$PLATE,{\"box\":[3,1,4,99]}],\"speeds\":[1]}" "outside the domain"
bad "infinite number" "{$DOM,\"regions\":[$PLATE],\"speeds\":[-1e999]}" "finite"
bad "empty speed list" "{$DOM,\"regions\":[$PLATE],\"speeds\":[]}" "speeds: must not be empty"
bad "unknown boundary" "{\"domain\":{\"x\":[0,10],\"y\":[-5,5],\"x_boundary\":\"mirror\"},\"regions\":[$PLATE],\"speeds\":[1]}" "x_boundary"
bad "unknown unit" "{\"length_unit\":\"furlong\",$DOM,\"regions\":[$PLATE],\"speeds\":[1]}" "length_unit"
bad "moving region not spanning x" "{$DOM,\"regions\":[{\"material\":\"copper_annealed\",\"box\":[1,-2,9,0],\"moving\":true}],\"speeds\":[1]}" "span the whole x-extent"
bad "mesh too large for memory" "{$DOM,\"regions\":[$PLATE],\"speeds\":[1],\"mesh\":{\"max_size\":0.002,\"growth\":1.01}}" "GiB"
bad "stationary region over a moving one" "{$DOM,\"regions\":[$PLATE,{\"box\":[2,-1,3,1]}],\"speeds\":[1]}" "overlaps moving region"

printf '{}' > "$T/empty.json"
$E check "$T/empty.json" >/dev/null 2>&1
[ $? -eq 2 ] && ok "check rejects an empty object (exit 2)" || ko "check rejects an empty object" "exit $?"
$E solve "$T/does-not-exist.json" >/dev/null 2>&1
rc=$?
[ $rc -eq 2 ] && ok "a missing case file is an input error (exit 2)" || ko "a missing case file exits 2" "exit $rc"
$E frobnicate >/dev/null 2>&1
[ $? -eq 2 ] && ok "an unknown command exits 2" || ko "an unknown command exits 2" "exit $?"
$E --help | grep -q "eddy2d solve CASE.json" && ok "--help shows the usage" || ko "--help" "no usage"
$E --version | grep -Eq '^eddy2d [0-9]+\.[0-9]+\.[0-9]+$' && ok "--version" || ko "--version" "$($E --version)"

# a valid solve writes result.json and forces.csv, and nothing half-written
cat > "$T/ok.json" <<JSON
{"name":"cli_ok","length_unit":"mm","domain":{"x":[0,40],"y":[-60,60],"x_boundary":"periodic"},
 "regions":[{"material":"copper_annealed","box":[0,-4,40,0],"moving":true},
            {"material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":[1,5,25]}
JSON
out=$($E solve "$T/ok.json" -o "$T/res" 2>"$T/err")
rc=$?
if [ $rc -eq 0 ] && [ -s "$T/res/result.json" ] && [ -s "$T/res/forces.csv" ]; then
    ok "solve writes result.json and forces.csv (exit 0)"
else
    ko "solve writes its outputs" "exit $rc: $(cat "$T/err")"
fi
left=$(find "$T/res" -name '*.tmp.*' | wc -l)
[ "$left" -eq 0 ] && ok "no temporary files left behind" || ko "no temporary files left" "$left found"
n=$(grep -c '"low_speed_drag":' "$T/res/result.json")
[ "$n" -eq 3 ] && ok "result.json has one point per speed" || ko "result.json points" "$n"
for key in '"nodes_x"' '"unknowns"' '"force_x"' '"force_y"' '"drag_force_stress"' '"loss"' \
    '"low_speed_drag"' '"magnetic_reynolds"' '"solve_seconds"' '"notice"'; do
    grep -q "$key" "$T/res/result.json" || { ko "result.json has $key" "missing"; continue; }
    ok "result.json has $key"
done
rows=$(wc -l < "$T/res/forces.csv")
head -n 1 "$T/res/forces.csv" | grep -q '^speed_m_per_s,drag_force_N_per_m' && [ "$rows" -eq 4 ] &&
    ok "forces.csv has a header with units and one row per speed" || ko "forces.csv" "$rows rows"
echo "$out" | grep -q "licensed engineers" && ok "the report shows the safety notice" ||
    ko "safety notice" "not on stdout"
echo "$out" | grep -Eq '^accuracy \(grid estimate\): drag within [0-9.e+-]+ %, normal force within [0-9.e+-]+ % of the largest' &&
    ok "the report states the largest error estimates under the table" ||
    ko "accuracy line" "$(echo "$out" | grep accuracy)"
# mesh.tolerance: the report says whether it was met and on which grid
sed 's/"speeds":\[1,5,25\]/"speeds":[1,5,25],"mesh":{"tolerance":0.005}/; s/cli_ok/cli_tol/' "$T/ok.json" > "$T/tol.json"
out=$($E solve "$T/tol.json" -o "$T/tolres" 2>&1)
echo "$out" | grep -Eq '^tolerance 0.005: met at mesh.refine [0-9]+ after [0-9]+ grids?' &&
    grep -q '"met":	true' "$T/tolres/result.json" &&
    ok "mesh.tolerance: the report and result.json say it was met" ||
    ko "mesh.tolerance report" "$(echo "$out" | grep -i tolerance)"
# check prints the mesh summary and solves nothing
out=$($E check "$T/ok.json")
echo "$out" | grep -q "unknowns" && echo "$out" | grep -q "memory" &&
    ok "check prints nodes, unknowns and memory" || ko "check summary" "$out"
# default output folder results/<name>
(cd "$T" && "$OLDPWD/$E" solve ok.json -q) && [ -s "$T/results/cli_ok/result.json" ] &&
    ok "default output folder results/<name>/" || ko "default output folder" "missing"

# --max-memory is the one memory limit: it reaches the mesh's own size check
# in check and in solve (exit 2 before anything is written), and a generous
# value changes nothing
printf '%s' "{$DOM,\"regions\":[$PLATE],\"speeds\":[1]}" > "$T/mem.json"
msg=$($E check "$T/mem.json" --max-memory 0.00001 2>&1)
rc=$?
if [ $rc -eq 2 ] && echo "$msg" | grep -q "GiB allowed"; then
    ok "check --max-memory refuses a mesh above the limit (exit 2)"
else
    ko "check --max-memory" "exit $rc: $msg"
fi
rm -rf "$T/memout"
msg=$($E solve "$T/mem.json" -o "$T/memout" -q --max-memory 0.00001 2>&1)
rc=$?
if [ $rc -eq 2 ] && [ ! -e "$T/memout" ] && echo "$msg" | grep -q "GiB allowed"; then
    ok "solve --max-memory refuses the mesh before writing anything (exit 2)"
else
    ko "solve --max-memory" "exit $rc, out exists: $([ -e "$T/memout" ] && echo yes || echo no): $msg"
fi
if $E check "$T/mem.json" --max-memory 4 >/dev/null 2>&1; then
    ok "check --max-memory 4 accepts a small mesh"
else
    ko "check --max-memory 4" "refused a small mesh"
fi

# -o that cannot take the outputs: exit 2 naming the folder, before the
# computation (nothing written)
mkdir -p "$T/odir" && : > "$T/odir/file"
for o in "$T/odir/file" "" "$T/odir/file/sub"; do
    msg=$($E solve "$T/mem.json" -o "$o" -q 2>&1)
    rc=$?
    if [ $rc -eq 2 ] && echo "$msg" | grep -qF "output folder \"$o\"" &&
        [ "$(ls "$T/odir")" = "file" ]; then
        ok "solve -o '$o' (not a usable folder) exits 2 naming it, writes nothing"
    else
        ko "solve -o '$o'" "exit $rc: $msg"
    fi
done
if [ "$(id -u)" -ne 0 ]; then
    mkdir -p "$T/ro" && chmod 555 "$T/ro"
    msg=$($E solve "$T/mem.json" -o "$T/ro/out" -q 2>&1)
    rc=$?
    chmod 755 "$T/ro"
    if [ $rc -eq 2 ] && echo "$msg" | grep -q "not writable" && [ ! -e "$T/ro/out" ]; then
        ok "solve -o inside a read-only folder exits 2 before the computation"
    else
        ko "solve -o read-only" "exit $rc: $msg"
    fi
else
    skip "solve -o inside a read-only folder" "running as root, who may write anywhere"
fi

# outputs never write through a link planted in the output folder: the
# picture is replaced by a regular file and the link's target is untouched
rm -rf "$T/lnk" && mkdir -p "$T/lnk"
echo "precious" > "$T/victim.txt"
ln -s "$T/victim.txt" "$T/lnk/jz_00_1mps.png"
ln -s "$T/victim.txt" "$T/lnk/forces.png"
ln -s "$T/victim.txt" "$T/lnk/result.json"
$E solve "$T/mem.json" -o "$T/lnk" -q >/dev/null 2>&1
rc=$?
if [ $rc -eq 0 ] && [ "$(cat "$T/victim.txt")" = "precious" ] && [ ! -L "$T/lnk/jz_00_1mps.png" ] &&
    [ -f "$T/lnk/jz_00_1mps.png" ] && [ ! -L "$T/lnk/forces.png" ] && [ ! -L "$T/lnk/result.json" ]; then
    ok "a link named like an output is replaced, its target untouched"
else
    ko "outputs through links" "exit $rc, victim: $(cat "$T/victim.txt" | head -c 40), $(ls -l "$T/lnk" | head -5)"
fi

# SIGTERM, SIGINT and SIGHUP during a solve: the run dies of the signal, no
# temporary file is left, and every picture there is complete (ends with
# the PNG IEND chunk)
cat > "$T/sig.json" <<'JSON'
{"name":"sig","length_unit":"mm","domain":{"x":[0,40],"y":[-60,60],"x_boundary":"periodic"},
 "regions":[{"name":"plate","material":"copper_annealed","box":[0,-4,40,0],"moving":true},
            {"name":"n","material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"name":"s","material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":{"from":0.5,"to":100,"points":24}}
JSON
bad_sig=""
n_sig=0
for sig in TERM INT HUP TERM INT HUP; do
    for delay in 0.3 0.8 1.5; do
        rm -rf "$T/sigout"
        $E solve "$T/sig.json" -o "$T/sigout" -q -j 1 >/dev/null 2>&1 &
        pid=$!
        sleep $delay
        kill -$sig $pid 2>/dev/null
        wait $pid 2>/dev/null
        n_sig=$((n_sig + 1))
        left=$(find "$T/sigout" -name '*.tmp*' 2>/dev/null | wc -l)
        trunc=0
        for f in "$T"/sigout/*.png; do
            [ -f "$f" ] || continue
            [ "$(tail -c 8 "$f" | od -An -c | tr -d ' \n')" = 'IEND256B`202' ] || trunc=$((trunc + 1))
        done
        [ "$left" -eq 0 ] && [ "$trunc" -eq 0 ] || bad_sig="$bad_sig SIG$sig@${delay}s: $left temporaries, $trunc truncated;"
    done
done
if [ -z "$bad_sig" ]; then
    ok "SIGTERM/SIGINT/SIGHUP during a solve leave no temporary and no truncated picture" "$n_sig runs"
else
    ko "signals during a solve" "$bad_sig"
fi

# re-solving into an old folder removes that run's pictures and fields (and
# only the tool's own files): nothing stale sits beside the new result.json
rm -rf "$T/old" && mkdir -p "$T/old"
for f in jz_07_999mps.png b_07_999mps.png field_07_999mps.vtr profile_p_07_999mps.csv stopping.png; do
    echo stale > "$T/old/$f"
done
echo mine > "$T/old/notes.txt"
$E solve "$T/mem.json" -o "$T/old" -q --vtk >/dev/null 2>&1
rc=$?
stale=$(ls "$T/old" | grep -c '999mps\|stopping')
if [ $rc -eq 0 ] && [ "$stale" -eq 0 ] && [ "$(cat "$T/old/notes.txt")" = mine ] && [ -f "$T/old/jz_00_1mps.png" ]; then
    ok "re-solving removes the previous run's outputs, keeps other files"
else
    ko "stale outputs" "exit $rc, $stale stale files: $(ls "$T/old" | tr '\n' ' ')"
fi

# one run at a time in a folder: while another process holds the folder's
# lock, solve exits 2 naming the folder and writes nothing
PY=$(command -v python3 || true)
if [ -n "$PY" ]; then
    rm -rf "$T/locked" && mkdir -p "$T/locked"
    "$PY" -c 'import fcntl,sys,time
f=open(sys.argv[1]+"/.lock","w"); fcntl.lockf(f, fcntl.LOCK_EX); open(sys.argv[1]+"/held","w").close(); time.sleep(30)' "$T/locked" &
    holder=$!
    for w in 1 2 3 4 5 6 7 8 9 10; do [ -e "$T/locked/held" ] && break; sleep 0.2; done
    msg=$($E solve "$T/mem.json" -o "$T/locked" -q 2>&1)
    rc=$?
    kill $holder 2>/dev/null
    wait $holder 2>/dev/null
    if [ $rc -eq 2 ] && echo "$msg" | grep -q "another eddy2d run is writing into this folder" &&
        [ ! -e "$T/locked/result.json" ]; then
        ok "a second run into a locked folder exits 2 and writes nothing"
    else
        ko "folder lock" "exit $rc: $msg"
    fi
else
    skip "folder lock" "python3 is not installed (used to hold the lock)"
fi

finish
