#!/bin/sh
# globals.sh - librigmat keeps no global state: no object of the archive
# may hold writable data.  Every symbol objdump lists in a writable data
# section (.data, .bss, thread-local .tdata/.tbss, or common) is reported;
# tables of pointers that the linker must relocate live in .data.rel.ro
# (read-only after relocation) and are allowed.
#
# Usage: sh tests/globals.sh LIBRARY.a        check the archive
#        sh tests/globals.sh --self-test      plant a writable static: must fail
# Exit 0 when there is none; 1, naming object and symbol, when there is.
set -u
check() {
    objdump -t "$1" 2>/dev/null | awk '
        /^In archive/ { next }
        /file format/ { obj = $1; sub(/:$/, "", obj); next }
        NF >= 5 {
            sec = ""
            for (i = 2; i < NF; i++)
                if ($i ~ /^\./ || $i == "*COM*") { sec = $i; break }
            if (sec == "") next
            if (sec ~ /^\.data\.rel\.ro/) next
            if (sec !~ /^\.(data|bss|tdata|tbss)/ && sec != "*COM*") next
            # section symbols (the section itself) are not data
            if ($NF == sec) next
            print "globals: " obj ": writable " sec " symbol " $NF; bad = 1
        }
        END { exit bad }'
}
if [ "${1:-}" = --self-test ]; then
    t=$(mktemp -d)
    trap 'rm -rf "$t"' EXIT
    printf 'static int calls;\nint counted(void);\nint counted(void) { return ++calls; }\n' > "$t/a.c"
    printf 'static const char *const names[] = {"a", "b"};\nconst char *name(int i);\nconst char *name(int i) { return names[i]; }\n' > "$t/b.c"
    ${CC:-cc} -O2 -c "$t/a.c" -o "$t/a.o" && ${CC:-cc} -O2 -fPIC -c "$t/b.c" -o "$t/b.o" || exit 1
    ar rcs "$t/bad.a" "$t/a.o" "$t/b.o" && ar rcs "$t/good.a" "$t/b.o"
    fails=0
    msg=$(check "$t/bad.a") && { echo "globals self-test: a writable static passed" >&2; fails=1; }
    case $msg in *a.o*calls*) ;; *) echo "globals self-test: message: $msg" >&2; fails=1 ;; esac
    check "$t/good.a" >/dev/null || { echo "globals self-test: a const table failed" >&2; fails=1; }
    [ $fails = 0 ] && echo "globals self-test: ok"
    exit $fails
fi
[ $# -eq 1 ] || { echo "usage: sh tests/globals.sh LIBRARY.a | --self-test" >&2; exit 2; }
if check "$1"; then
    echo "globals: $1 holds no writable data (no global state)"
else
    exit 1
fi
