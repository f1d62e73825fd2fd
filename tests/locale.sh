#!/bin/sh
# locale.sh - make a comma-decimal locale available for the locale case of
# the unit suites (tests/check_locale.c), which reads "0.8 kg" with
# LC_NUMERIC set to it.  Generates de_DE.UTF-8 with localedef (Debian's
# `locales` package, which `make deps-test` installs) when it is missing and
# we may write the locale archive (root).  Otherwise says so: the test case
# then reports itself skipped with the same reason.
set -u
have() { locale -a 2>/dev/null | grep -qi '^de_DE\.utf-\{0,1\}8$'; }
if have; then
    exit 0
fi
if [ "$(id -u)" = 0 ] && command -v localedef >/dev/null 2>&1; then
    if localedef -i de_DE -f UTF-8 de_DE.UTF-8 2>/dev/null && have; then
        echo "locale: generated de_DE.UTF-8 for the locale test"
        exit 0
    fi
fi
echo "locale: de_DE.UTF-8 is not available and cannot be generated here" \
     "(needs root and the 'locales' package); the comma-decimal test will be skipped" >&2
exit 0
