#!/bin/sh
# stages.sh - data flows one way through the stages of src/.
#
# The stages, in order: util model mech sample study emit lib cli.  A file in
# src/<stage>/ may include the headers of its own stage and of earlier ones
# only; include/rigmat.h is public and allowed everywhere; system headers
# (<...>) are not looked at.  Headers of one stage may not include each
# other in a cycle.  The script reads the real #include lines of every .c
# and .h file (outside comments) and resolves each quoted name to the stage
# folder that holds it, as the compiler's -I path does.
#
# Usage: sh tests/stages.sh [ROOT]        check ROOT (default: the repository)
#        sh tests/stages.sh --self-test   plant a backward include and a cycle
#                                         in a scratch copy: both must fail
# Exit 0 when the stages run one way; 1, naming each file and include, when not.
# GENERATED lists headers made by the build (not in the tree), allowed anywhere.
set -u
STAGES="util model mech sample study emit lib cli"
GENERATED=${GENERATED:-"share_dir.h suites.h fwtext.h"}

stage_rank() {
    r=0
    for s in $STAGES; do
        if [ "$s" = "$1" ]; then echo $r; return; fi
        r=$((r + 1))
    done
    echo -1
}

# The quoted includes of a file, one "LINE NAME" a line, outside comments.
includes() {
    awk '
    {
        line = $0; out = ""
        # drop block comments (possibly spanning lines) and line comments
        while (length(line) > 0) {
            if (incomment) {
                e = index(line, "*/")
                if (e == 0) { line = ""; break }
                line = substr(line, e + 2); incomment = 0
            } else {
                b = index(line, "/*"); c = index(line, "//")
                if (c > 0 && (b == 0 || c < b)) { out = out substr(line, 1, c - 1); line = ""; break }
                if (b == 0) { out = out line; line = ""; break }
                out = out substr(line, 1, b - 1); line = substr(line, b + 2); incomment = 1
            }
        }
        if (out ~ /^[ \t]*#[ \t]*include[ \t]*"/) {
            sub(/^[ \t]*#[ \t]*include[ \t]*"/, "", out)
            sub(/".*$/, "", out)
            print NR " " out
        }
    }' "$1"
}

check_tree() {
    root=$1
    bad=0
    edges=$(mktemp)
    for stage in $STAGES; do
        [ -d "$root/src/$stage" ] || continue
        rank=$(stage_rank "$stage")
        for f in "$root/src/$stage"/*.c "$root/src/$stage"/*.h; do
            [ -e "$f" ] || continue
            rel=${f#"$root"/}
            includes "$f" > "$edges.one"
            while read -r line name; do
                case " $GENERATED " in *" $name "*) continue ;; esac
                if [ "$name" = rigmat.h ] && [ -e "$root/include/rigmat.h" ]; then
                    continue
                fi
                where=""
                for s in $STAGES; do
                    if [ -e "$root/src/$s/$name" ]; then where=$s; break; fi
                done
                if [ -z "$where" ]; then
                    echo "stages: $rel:$line: includes \"$name\", which is in no stage folder" >&2
                    bad=1
                    continue
                fi
                hrank=$(stage_rank "$where")
                if [ "$hrank" -gt "$rank" ]; then
                    echo "stages: $rel:$line: includes \"$name\" of the later stage '$where'" \
                         "(a file in src/$stage/ may include only $stage and earlier stages)" >&2
                    bad=1
                fi
                case $rel in *.h) echo "$rel src/$where/$name" >> "$edges" ;; esac
            done < "$edges.one"
        done
    done
    # cycles among headers: repeatedly drop headers that include no header
    # still in the graph; what is left lies on (or hangs from) a cycle.
    cyc=$(awk '
        { n[$1] = 1; n[$2] = 1; from[NR] = $1; to[NR] = $2; m = NR }
        END {
            do {
                changed = 0
                for (h in n) {
                    out = 0
                    for (i = 1; i <= m; i++)
                        if (from[i] == h && (to[i] in n)) { out = 1; break }
                    if (!out) { delete n[h]; changed = 1 }
                }
            } while (changed)
            for (h in n) print h
        }' "$edges" | sort)
    if [ -n "$cyc" ]; then
        for h in $cyc; do
            echo "stages: $h is part of an include cycle: it includes" \
                 "$(awk -v h="$h" '$1 == h { printf "%s ", $2 }' "$edges")" >&2
        done
        bad=1
    fi
    rm -f "$edges" "$edges.one"
    return $bad
}

if [ "${1:-}" = --self-test ]; then
    here=$(cd "$(dirname "$0")/.." && pwd)
    tmp=$(mktemp -d)
    trap 'rm -rf "$tmp"' EXIT
    cp -R "$here/src" "$here/include" "$tmp/"
    fails=0
    check_tree "$tmp" 2>/dev/null || { echo "stages self-test: the clean tree fails" >&2; fails=1; }
    # a model file reaching into mech must be named with the include
    printf '#include "mechanics.h"\n' >> "$tmp/src/model/model.c"
    msg=$(check_tree "$tmp" 2>&1) && { echo "stages self-test: backward include passed" >&2; fails=1; }
    case $msg in *'src/model/model.c'*'"mechanics.h"'*) ;;
        *) echo "stages self-test: message lacks the file and include: $msg" >&2; fails=1 ;; esac
    # an include inside a comment is not an include
    cp "$here/src/model/model.c" "$tmp/src/model/model.c"
    printf '/* #include "mechanics.h" */\n// #include "noise.h"\n' >> "$tmp/src/model/model.c"
    check_tree "$tmp" 2>/dev/null || { echo "stages self-test: a commented include failed" >&2; fails=1; }
    # two headers of one stage including each other
    printf '#include "cyc_b.h"\n' > "$tmp/src/util/cyc_a.h"
    printf '#include "cyc_a.h"\n' > "$tmp/src/util/cyc_b.h"
    msg=$(check_tree "$tmp" 2>&1) && { echo "stages self-test: include cycle passed" >&2; fails=1; }
    case $msg in *cyc_a.h*cycle*) ;;
        *) echo "stages self-test: cycle message: $msg" >&2; fails=1 ;; esac
    [ $fails = 0 ] && echo "stages self-test: ok"
    exit $fails
fi

root=${1:-$(cd "$(dirname "$0")/.." && pwd)}
if check_tree "$root"; then
    echo "stages: src/ includes run one way ($STAGES)"
else
    exit 1
fi
