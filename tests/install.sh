#!/bin/sh
# install.sh - `make install` into a scratch DESTDIR, then build and run a
# library user's program against it with pkg-config, and run the installed
# program on the demo with the installed catalog.
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
flags=$(PKG_CONFIG_PATH="$P/lib/pkgconfig" pkg-config --define-variable=prefix="$P" \
    --cflags --libs --static rigmat)
# shellcheck disable=SC2086
${CC:-cc} -std=c99 -Wall -Wextra -o "$T/libuser" tests/libuser.c $flags
"$T/libuser" examples/balancer.yaml
# The installed program finds the installed catalog through --catalog, as
# the share folder is only right once DESTDIR is gone.
mkdir "$T/elsewhere"
cp examples/balancer.yaml "$T/elsewhere/"
"$P/bin/rigmat" check "$T/elsewhere/balancer.yaml" --catalog "$P/share/rigmat/catalog" >/dev/null
echo "install: 1 passed, 0 failed"
