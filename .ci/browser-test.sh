#!/bin/sh
# browser-test.sh - summary.html of a batch in a real browser: Debian's chromium,
# headless, loads the page from disk, and
#   - its DOM (--dump-dom) holds the case table (one row per case) and one <img>
#     of forces.png per solved case, and no script;
#   - its screenshot (1400 x 1000) is not blank (many distinct colours) and shows
#     the plots: it holds many pixels in the colours of the curves of forces.png,
#     unlike a control copy of the page whose plots are missing.
# Prints PASS/FAIL/SKIP lines and "#counts"; exit 1 on failure.  Without chromium
# it says SKIP (CI installs it from .ci/debian-packages).
# usage: .ci/browser-test.sh [BUILD_DIR]   (make browser-test builds what it needs)
set -u
cd "$(dirname "$0")/.."
B=${1:-build}
E="$(pwd)/$B/eddy2d"
STAT="$(pwd)/$B/tests/test_batch_pngstat"
. tests/harness.sh
CHROME=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$CHROME" ]; then
    echo "SKIP browser test: chromium is not installed (CI installs Debian's chromium)"
    finish
fi
[ -x "$E" ] && [ -x "$STAT" ] || { ko "browser test" "build $E and $STAT first (make browser-test)"; finish; }
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

mkdir -p "$T/in"
for k in 3 5; do
    cat > "$T/in/plate_$k.json" <<JSON
{"name":"plate_$k","length_unit":"mm","domain":{"x":[0,40],"y":[-60,60],"x_boundary":"periodic"},
 "regions":[{"name":"plate","material":"copper_annealed","box":[0,-$k,40,0],"moving":true},
            {"name":"n","material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"name":"s","material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":[0.5,2,5,10,20,50], "variants":{"regions.n.box.1":[2.5,3.5]}}
JSON
done
printf '{"name":"broken","speeds":[]}' > "$T/in/broken.json"
"$E" batch "$T/in" -o "$T/out" -q
[ $? -eq 1 ] && [ -s "$T/out/summary.html" ] && ok "a batch of 4 solved cases and 1 invalid case" ||
    ko "batch" "no summary.html"

chrome() { # extra arguments...
    timeout 180 "$CHROME" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
        --disable-background-networking --disable-component-update --disable-sync \
        --user-data-dir="$(mktemp -d "$T/profile.XXXXXX")" --window-size=1400,1000 "$@" 2>"$T/chrome.err"
}
chrome --dump-dom "file://$T/out/summary.html" > "$T/dom.html"
rows=$(sed -n '/<table id="cases">/,/<\/table>/p' "$T/dom.html" | grep -c '<tr>')
imgs=$(grep -o '<img src="[^"]*/forces.png"' "$T/dom.html" | wc -l)
if [ "$rows" -eq 6 ] && [ "$imgs" -eq 4 ] && ! grep -q '<script' "$T/dom.html"; then
    ok "the browser's DOM: the case table (header + 5 rows) and 4 plots, no script"
else
    ko "DOM" "$rows table rows, $imgs images; $(head -c 300 "$T/dom.html"; tail -3 "$T/chrome.err")"
fi
grep -q 'broken: speeds\|broken.json' "$T/dom.html" && ok "the DOM shows the invalid case's error" ||
    ko "error in the page" "missing"

chrome --screenshot="$T/page.png" "file://$T/out/summary.html" >/dev/null
# control: the same page with its plots missing
mkdir -p "$T/control"
cp "$T/out/summary.html" "$T/control/"
chrome --screenshot="$T/control.png" "file://$T/control/summary.html" >/dev/null
PLOT=$(ls "$T"/out/*/forces.png | head -n 1)
if [ -s "$T/page.png" ] && [ -s "$T/control.png" ]; then
    set -- $("$STAT" "$T/page.png" "$PLOT")
    w=$1 h=$2 distinct=$3 plot=$5
    set -- $("$STAT" "$T/control.png" "$PLOT")
    c_plot=$5
    [ "$w" -eq 1400 ] && [ "$h" -eq 1000 ] && [ "$distinct" -ge 200 ] &&
        ok "the screenshot is not blank (${w}x${h}, $distinct distinct colours)" ||
        ko "screenshot" "${w}x${h}, $distinct distinct colours"
    if [ "$plot" -ge 150 ] && [ "$plot" -ge $((10 * c_plot + 50)) ]; then
        ok "the screenshot shows the plots ($plot pixels in the curves' colours; $c_plot without the plots)"
    else
        ko "plots in the screenshot" "$plot pixels in the curves' colours, $c_plot without the plots"
    fi
else
    ko "screenshot" "chromium wrote none: $(tail -3 "$T/chrome.err")"
fi
finish
