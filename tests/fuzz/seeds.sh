#!/bin/sh
# seeds.sh TARGET DIR - fill DIR with the seed inputs of a fuzz target.
#   units:          tests/fuzz/units.seeds (one quantity a line) and every
#                   "number unit" written in examples/ and catalog/;
#   load, pipeline: the models of examples/, the broken ones of tests/bad/,
#                   the hostile corpus (tests/hostile/, its catalog/) and
#                   the catalog parts.
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
    ;;
*)
    echo "seeds.sh: unknown target '$t'" >&2
    exit 2
    ;;
esac
