#!/bin/sh
# seeds.sh TARGET DIR - fill DIR with the seed inputs of a fuzz target.
#   units:          tests/fuzz/units.seeds (one quantity a line) and every
#                   "number unit" written in examples/ and catalog/;
#   load, pipeline: the models of examples/, the broken ones of tests/bad/,
#                   the hostile corpus (tests/hostile/, its catalog/) and
#                   the catalog parts;
#   pipeline also:  `#base EXAMPLE` inputs (fuzz_pipeline.c) that override
#                   one value of each body, joint and motor of an example.
# DIR is emptied first; file names are the source paths with / as _.
set -eu
t=$1
dir=$2
rm -rf "$dir"
mkdir -p "$dir"
case $t in
units)
    {
        cat tests/fuzz/units.seeds
        find examples catalog -name '*.yaml' -exec cat {} + |
            grep -o '[-+]\{0,1\}[0-9][0-9.eE+-]* [A-Za-z%][A-Za-z0-9*/^()._]*' || true
    } | sort -u | awk -v d="$dir" '{ f = sprintf("%s/u%04d", d, NR); printf "%s", $0 > f; close(f) }'
    ;;
load | pipeline)
    for f in examples/*.yaml tests/bad/* tests/hostile/* tests/hostile/catalog/* catalog/*/*.yaml; do
        [ -f "$f" ] || continue
        cp "$f" "$dir/$(printf '%s' "$f" | tr '/' '_')"
    done
    # one part named by many entries (parsed once, counted at each use)
    awk 'BEGIN { print "rigmat: 1\nbodies:"; for (i = 0; i < 8; i++) printf "  w%d: {part: wheels/wheel-65mm}\n", i
        print "joints:"; for (i = 0; i < 8; i++) printf "  r%d: {type: rolling, parent: ground, child: w%d, radius: 32.5 mm}\n", i, i }' \
        >"$dir/shared-part.yaml"
    printf 'rigmat: 1\rbodies:\r  w: {part: wheels/wheel-65mm}\r  v: {part: wheels/wheel-65mm}\r' >"$dir/shared-part-cr.yaml"
    [ "$t" = pipeline ] || exit 0
    for f in examples/*.yaml; do
        [ -f "$f" ] || continue
        awk -v d="$dir" -v base="${f##*/}" '
            function seed(line) { n++; out = sprintf("%s/base-%s-%02d", d, base, n)
                printf "#base %s\n%s\n", base, line > out; close(out) }
            /^[a-z_]+:/ { sec = $1; sub(/:.*/, "", sec); next }
            /^  [A-Za-z0-9_-]+:/ {
                name = $1; sub(/:.*/, "", name)
                if (sec == "bodies") { seed("bodies." name ".mass=1e-300kg"); seed("bodies." name ".inertia=1e300kg*m^2") }
                if (sec == "joints") seed("joints." name ".at=[1e154, -1e154]")
                if (sec == "motors") { seed("motors." name ".resistance=1e-300ohm"); seed("motors." name ".gear_ratio=1e300") }
                if (sec == "sensors") seed("sensors." name ".gain=-1e308")
            }
            END { seed("gravity=1e300m/s^2"); seed("slope=89.999999deg")
                seed("#delay 2.5"); seed("#delay 536870911"); seed("#delay 1e9") }' "$f"
    done
    ;;
*)
    echo "seeds.sh: unknown target '$t'" >&2
    exit 2
    ;;
esac
