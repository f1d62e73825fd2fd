#!/bin/sh
# report.sh - `rigmat report`: exit codes, a report for every example, the
# HTML and every SVG figure well-formed XML (xmllint), names escaped,
# nothing fetched, the options reaching the page, and the demo report
# rendered in headless Chromium with no console message and a non-blank
# screenshot.  Run by `make check-report` with RIGMAT=path/to/rigmat.
# Without xmllint or chromium those parts are skipped with a message
# (`make deps` installs libxml2-utils, chromium and imagemagick).
set -u
R=${RIGMAT:-build/rigmat}
DEMO=examples/balancer.yaml
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
pass=0
fail=0

ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL: $*" >&2; }

# expect CODE DESCRIPTION -- command...
expect() {
    want=$1; what=$2; shift 3
    "$@" >"$T/out" 2>"$T/err"
    got=$?
    if [ "$got" = "$want" ]; then ok; else bad "$what: exit $got, want $want"; sed 's/^/  | /' "$T/err" >&2; fi
}

has() { # has FILE PATTERN DESCRIPTION
    if grep -q -- "$2" "$1"; then ok; else bad "$3: '$2' not in $1"; fi
}

hasnt() { # hasnt FILE PATTERN DESCRIPTION
    if grep -q -- "$2" "$1"; then bad "$3: '$2' found in $1"; else ok; fi
}

have_xmllint=1
command -v xmllint >/dev/null 2>&1 || { have_xmllint=0; echo "report: xmllint not installed (libxml2-utils); XML checks skipped"; }

# well_formed HTML: the page and each of its <svg> figures parse as XML.
well_formed() {
    [ $have_xmllint = 1 ] || return 0
    if xmllint --noout "$1" 2>"$T/xml.err"; then ok; else bad "$1 is not well-formed"; sed 's/^/  | /' "$T/xml.err" >&2; fi
    rm -f "$T"/fig-*.svg
    awk -v dir="$T" '
        /<svg / { n++; out = sprintf("%s/fig-%03d.svg", dir, n) }
        out != "" { print > out }
        /<\/svg>/ { close(out); out = "" }' "$1"
    nfig=0
    for s in "$T"/fig-*.svg; do
        [ -e "$s" ] || continue
        nfig=$((nfig + 1))
        if xmllint --noout "$s" 2>"$T/xml.err"; then ok; else bad "figure $s of $1"; sed 's/^/  | /' "$T/xml.err" >&2; fi
    done
    if [ "$nfig" -ge "${2:-1}" ]; then ok; else bad "$1: $nfig figures, want at least ${2:-1}"; fi
}

# self_contained HTML: no script, no reference to anything outside the page
# (the xmlns attributes name namespaces, they fetch nothing).
self_contained() {
    hasnt "$1" "<script" "no script"
    sed 's/xmlns="[^"]*"//g' "$1" >"$T/stripped"
    if grep -Eq 'src=|url\(|@import|https?:|<link|<img|<iframe|<object' "$T/stripped"; then
        bad "$1 refers to something outside the page"
    else ok; fi
}

# ---------------------------------------------------------------- usage
expect 0 "report help" -- "$R" report --help
has "$T/out" "--step-size" "help lists --step-size"
expect 2 "missing --rate" -- "$R" report "$DEMO"
has "$T/err" "missing --rate" "missing --rate message"
expect 2 "rate in the wrong unit" -- "$R" report "$DEMO" --rate 5m
expect 2 "zero rate" -- "$R" report "$DEMO" --rate 0Hz
expect 2 "bad duration" -- "$R" report "$DEMO" --rate 200Hz --duration 3V
expect 2 "offset of no such state" -- "$R" report "$DEMO" --rate 200Hz --offset tlit.angle=1deg
has "$T/err" "tilt.angle" "the hint lists the states"
expect 2 "offset in the wrong unit" -- "$R" report "$DEMO" --rate 200Hz --offset tilt.angle=3mm
expect 2 "offset without a value" -- "$R" report "$DEMO" --rate 200Hz --offset tilt.angle
expect 2 "zero step" -- "$R" report "$DEMO" --rate 200Hz --step-size drive=0
expect 2 "step of a disturbance" -- "$R" report "$DEMO" --rate 200Hz --step-size shove=1N
expect 2 "bad format" -- "$R" report "$DEMO" --rate 200Hz --format text
expect 4 "model file does not exist" -- "$R" report "$T/nope.yaml" --rate 200Hz
printf 'rigmat: 1\nbodies:\n  b: {mass: 3 m}\n' >"$T/bad.yaml"
expect 1 "bad model" -- "$R" report "$T/bad.yaml" --rate 200Hz
if [ -s "$T/out" ]; then bad "bad model printed a report"; else ok; fi
expect 4 "full disk" -- sh -c "'$R' report '$DEMO' --rate 200Hz --no-validity > /dev/full"
# whole or nothing: a failed run leaves an existing -o file as it was
echo keep >"$T/kept.html"
expect 2 "failed run" -- "$R" report "$DEMO" --rate 200Hz --offset nope=1 -o "$T/kept.html"
has "$T/kept.html" "^keep$" "failed run left the old file"

# ---------------------------------------------------------------- the demo, in full
expect 0 "demo report" -- "$R" report "$DEMO" --rate 200Hz -o "$T/demo.html"
well_formed "$T/demo.html" 6
self_contained "$T/demo.html"
for id in summary signs point linear modes poles responses frequency validity sampled; do
    has "$T/demo.html" "<h2 id=\"$id\">" "section $id"
done
has "$T/demo.html" "Initial offset of tilt.angle by 0.03491 rad" "default offset: 2 deg of tilt"
has "$T/demo.html" "Step of drive by 0.1 at t = 0" "default step of the drive"
has "$T/demo.html" "emergency stop" "the cautions"
has "$T/demo.html" "Qd (process noise" "Qd"

# options reach the page
expect 0 "report with options" -- "$R" report "$DEMO" --rate 100Hz --offset tilt.angle=1deg \
    --offset travel.position=5cm --step-size drive=0.05 --duration 300ms --no-validity -o "$T/opt.html"
has "$T/opt.html" "Initial offset of tilt.angle by 0.01745 rad" "--offset in degrees"
has "$T/opt.html" "Initial offset of travel.position by 0.05 m" "a second --offset"
has "$T/opt.html" "Step of drive by 0.05 at t = 0" "--step-size"
has "$T/opt.html" "<td>0.3 s</td>" "--duration"
has "$T/opt.html" "period 0.01 s" "--rate"
well_formed "$T/opt.html" 5

# a hostile model name is escaped
sed 's/^name: .*/name: "<b>bold<\/b> \& <script>x<\/script> \x27q\x27"/' "$DEMO" >"$T/hostile.yaml"
expect 0 "hostile name" -- "$R" report "$T/hostile.yaml" --catalog catalog --rate 200Hz --no-validity -o "$T/hostile.html"
hasnt "$T/hostile.html" "<b>bold" "the name is not markup"
has "$T/hostile.html" "&lt;b&gt;bold&lt;/b&gt; &amp; &lt;script&gt;" "the name escaped"
well_formed "$T/hostile.html" 5
self_contained "$T/hostile.html"

# ---------------------------------------------------------------- every example
for f in examples/*.yaml; do
    n=$(basename "$f" .yaml)
    expect 0 "report of $n" -- "$R" report "$f" --rate 500Hz --no-validity -o "$T/$n.html"
    [ -s "$T/$n.html" ] && well_formed "$T/$n.html" 3
done

# ---------------------------------------------------------------- rendering
if command -v chromium >/dev/null 2>&1; then
    # console messages are logged to stderr as "...:CONSOLE(line)] ..."
    timeout 180 chromium --headless --no-sandbox --disable-gpu --hide-scrollbars \
        --enable-logging=stderr --v=0 --window-size=1100,3000 \
        --screenshot="$T/shot.png" "file://$T/demo.html" >"$T/chr.out" 2>"$T/chr.err"
    if [ -s "$T/shot.png" ]; then ok; else bad "chromium wrote no screenshot"; sed 's/^/  | /' "$T/chr.err" >&2; fi
    if grep -q "CONSOLE" "$T/chr.err"; then
        bad "console messages while rendering"; grep "CONSOLE" "$T/chr.err" | sed 's/^/  | /' >&2
    else ok; fi
    if [ -s "$T/shot.png" ]; then
        if command -v identify >/dev/null 2>&1; then
            colours=$(identify -format '%k' "$T/shot.png")
        else
            colours=$(/usr/bin/python3 -c 'import sys, zlib, struct
d = open(sys.argv[1], "rb").read()
print(len(set(d[i:i + 3] for i in range(0, len(d) - 3, 7))))' "$T/shot.png")
        fi
        # a blank page has one colour; text, lines and fills give hundreds
        if [ "${colours:-0}" -gt 50 ]; then ok; else bad "screenshot looks blank ($colours colours)"; fi
    fi
else
    echo "report: chromium not installed; rendering check skipped (make deps installs it)"
fi

echo "report: $pass passed, $fail failed"
[ "$fail" = 0 ]
