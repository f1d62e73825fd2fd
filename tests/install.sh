#!/bin/sh
# install.sh - `make install` into a scratch DESTDIR, then build the
# embedding example (examples/embed.c) against it with pkg-config, run it,
# and require its JSON to be the bytes `rigmat discretize` writes for the
# same model, override and rate; and run the installed program on the demo
# with the installed catalog.
#
# PREFIX must be the one the build was made with (the Makefile passes its
# own): the catalog folder is compiled in, and another PREFIX would rebuild
# and re-copy build/rigmat while other checks of a `make -j check` run it.
set -eu
PREFIX=${PREFIX:-/usr/local}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
make --no-print-directory install DESTDIR="$T" PREFIX="$PREFIX" >/dev/null
P="$T$PREFIX"
test -x "$P/bin/rigmat" && test -f "$P/include/rigmat.h" && test -f "$P/lib/librigmat.a"
test -f "$P/share/rigmat/catalog/motors/gearmotor-24v-27.yaml"
test -f "$P/share/man/man1/rigmat.1" && test -f "$P/share/bash-completion/completions/rigmat"
man -l "$P/share/man/man1/rigmat.1" >/dev/null 2>&1 || groff -man -Tutf8 "$P/share/man/man1/rigmat.1" >/dev/null
# Only the public header is installed: the internal ones stay in the tree.
test "$(find "$P/include" -name '*.h' | wc -l)" -eq 1
# pkg-config as a user of the installed tree runs it: the .pc file in
# DESTDIR, its prefix moved there (the sysroot of a staged install).
flags=$(PKG_CONFIG_PATH="$P/lib/pkgconfig" pkg-config --define-variable=prefix="$P" \
    --cflags --libs rigmat)
case $flags in *"-I$P/include"*"-L$P/lib"*|*"-L$P/lib"*"-I$P/include"*) ;;
    *) echo "install: pkg-config does not point into DESTDIR: $flags" >&2; exit 1 ;; esac
# The example is C99 that compiles clean with the strict warnings, and as C++.
# shellcheck disable=SC2086
${CC:-cc} -std=c99 -Wall -Wextra -Wpedantic -Wconversion -Werror -o "$T/embed" examples/embed.c $flags
if command -v g++ >/dev/null 2>&1; then
    # shellcheck disable=SC2086
    g++ -x c++ -Wall -Wextra -Werror -fsyntax-only examples/embed.c $flags
fi
"$T/embed" examples/balancer.yaml > "$T/embed.json" 2> "$T/embed.err" || {
    cat "$T/embed.err" >&2; echo "install: examples/embed.c failed" >&2; exit 1; }
grep -q 'unstable' "$T/embed.err" || { echo "install: embed printed no modes" >&2; exit 1; }
"$P/bin/rigmat" discretize examples/balancer.yaml --rate 200Hz --set 'bodies.chassis.mass=4.5 kg' \
    --format json > "$T/cli.json" 2>/dev/null
cmp "$T/embed.json" "$T/cli.json" || {
    echo "install: the embedded library's JSON differs from rigmat discretize's" >&2; exit 1; }
# and the override took effect: the JSON differs from the model without it
"$P/bin/rigmat" discretize examples/balancer.yaml --rate 200Hz --format json > "$T/plain.json" \
    2>/dev/null
if cmp -s "$T/embed.json" "$T/plain.json"; then
    echo "install: the override in examples/embed.c changed nothing" >&2; exit 1
fi
# A model that does not load: the diagnostics reach stderr with a place,
# and the exit code is the program's (1).
printf 'rigmat: 1\nbodies:\n  b: {mass: -1 kg}\n' > "$T/bad.yaml"
set +e
"$T/embed" "$T/bad.yaml" > "$T/bad.out" 2> "$T/bad.err"
rc=$?
set -e
test "$rc" -eq 1 || { echo "install: embed on a bad model exited $rc, not 1" >&2; exit 1; }
grep -q "bad.yaml:3:" "$T/bad.err" || { cat "$T/bad.err" >&2; echo "install: no place" >&2; exit 1; }
test ! -s "$T/bad.out"
# The installed program finds the installed catalog through --catalog, as
# the share folder is only right once DESTDIR is gone.
mkdir "$T/elsewhere"
cp examples/balancer.yaml "$T/elsewhere/"
"$P/bin/rigmat" check "$T/elsewhere/balancer.yaml" --catalog "$P/share/rigmat/catalog" >/dev/null
echo "install: 1 passed, 0 failed (embed.c JSON = rigmat discretize JSON, byte for byte)"
