#!/bin/sh
# man.sh - the manual page and the bash completion agree with the program.
# For every command `rigmat --help` lists: doc/rigmat.1 has a section
# `.SS "rigmat COMMAND"` whose option tags (.TP/.TQ) name exactly the long
# options of `rigmat COMMAND --help`, and the completion offers exactly
# them; every --format value of the help is documented; no section
# documents a command the program lacks; groff renders the page without
# warnings.  Run by `make check` with RIGMAT=path/to/rigmat.
set -u
R=${RIGMAT:-build/rigmat}
MAN=doc/rigmat.1
COMP=doc/rigmat.bash
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
pass=0
fail=0
ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL: $*" >&2; }

if groff -ww -man -Tutf8 "$MAN" >"$T/page" 2>"$T/warn" && [ ! -s "$T/warn" ]; then ok; else
    bad "groff warns on $MAN"; sed 's/^/  | /' "$T/warn" >&2; fi
if [ -s "$T/page" ]; then ok; else bad "groff rendered nothing"; fi

# the commands of `rigmat --help`: the lines under "commands:"
"$R" --help | sed -n '/^commands:/,/^$/s/^  \([a-z][a-z-]*\) .*/\1/p' >"$T/commands"
if [ -s "$T/commands" ]; then ok; else bad "no commands in rigmat --help"; fi

# long options of a help text, sorted
help_options() {
    "$R" "$1" --help | sed -n '/^options:/,$p' | grep -o -- '--[a-z][a-z-]*' | sort -u
}
# long options in the tags of a command's man section, sorted
man_options() {
    awk -v want=".SS \"rigmat $1\"" '
        $0 == want { on = 1; next }
        on && (/^\.SS / || /^\.SH /) { on = 0 }
        on && tag { print; tag = 0 }
        on && (/^\.TP/ || /^\.TQ/) { tag = 1 }' "$MAN" |
        sed 's/\\-/-/g' | grep -o -- '--[a-z][a-z-]*' | sort -u
}
comp_options() {
    bash -c ". ./$COMP; _rigmat_options $1" | tr ' ' '\n' | grep -- '^--' | sort -u
}
while read -r cmd; do
    help_options "$cmd" >"$T/h"
    man_options "$cmd" >"$T/m"
    comp_options "$cmd" >"$T/c"
    if [ -s "$T/h" ] && cmp -s "$T/h" "$T/m"; then ok; else
        bad "man page options of '$cmd' differ from its --help (< help, > man)"
        diff "$T/h" "$T/m" | sed 's/^/  | /' >&2
    fi
    if cmp -s "$T/h" "$T/c"; then ok; else
        bad "completion options of '$cmd' differ from its --help (< help, > completion)"
        diff "$T/h" "$T/c" | sed 's/^/  | /' >&2
    fi
    if grep -qw "$cmd" "$T/commands" && bash -c ". ./$COMP; echo \$_rigmat_commands" | grep -qw "$cmd"; then ok; else
        bad "completion lacks the command '$cmd'"; fi
    # the formats of the usage lines: documented, and completed
    formats=$("$R" "$cmd" --help | sed -n 's/.*FORMAT: //p; s/.*\[--format \([a-z|]*\)\].*/\1/p' |
        tr ',|()' '    ' | tr -s ' ' '\n' | grep -E '^[a-z]+$' | grep -v '^o$' | sort -u)
    for f in $formats; do
        if grep -q "^\.B $f\$" "$MAN"; then ok; else bad "format '$f' of '$cmd' not in the man page"; fi
        if bash -c ". ./$COMP; _rigmat_formats $cmd" | grep -qw "$f"; then ok; else
            bad "completion lacks --format $f for '$cmd'"; fi
    done
done <"$T/commands"

# no section for a command the program does not have
sed -n 's/^\.SS "rigmat \([a-z-]*\)"$/\1/p' "$MAN" | while read -r cmd; do
    grep -qx "$cmd" "$T/commands" || echo "$cmd"
done >"$T/extra"
if [ -s "$T/extra" ]; then bad "man page documents missing commands: $(cat "$T/extra")"; else ok; fi

# the exit codes of `rigmat --help` are the man page's
for code in 0 1 2 3 4 5; do
    if "$R" --help | grep -q "$code [a-z]" && grep -q "^\.B $code\$" "$MAN"; then ok; else
        bad "exit code $code not documented in both"; fi
done
grep -q '^\.B RIGMAT_CATALOG$' "$MAN" && ok || bad "RIGMAT_CATALOG not in the man page"

echo "man: $pass passed, $fail failed"
[ "$fail" = 0 ]
