# rigmat - Makefile.  Plain GNU make; no configure step.
#
# Knobs (override on the command line):
PREFIX  ?= /usr/local
DESTDIR ?=
CC      ?= cc
CFLAGS  ?= -O2 -g
LDFLAGS ?=
# BLAS for GSL: openblas when libopenblas-dev is installed, else gslcblas.
BLAS    ?= $(shell test -e /usr/lib/$(shell $(CC) -dumpmachine 2>/dev/null)/libopenblas.so && echo openblas || echo gslcblas)
PYTHON  ?= /usr/bin/python3

# Debian packages the build, tests and reference scripts need.
DEB_PKGS = build-essential pkg-config libgsl-dev libyaml-dev check libsubunit-dev \
           libopenblas-dev python3-numpy python3-scipy python3-sympy python3-mpmath
# Headers / files whose presence shows each package is installed.
DEB_PROBES = /usr/include/gsl/gsl_matrix.h /usr/include/yaml.h /usr/include/check.h \
             /usr/lib/python3/dist-packages/scipy /usr/lib/python3/dist-packages/sympy \
             /usr/lib/python3/dist-packages/mpmath /usr/lib/python3/dist-packages/numpy

BUILD = build
PROJECT_CFLAGS = -std=c99 -D_POSIX_C_SOURCE=200809L -Iinclude -Isrc -Isrc/util -I$(BUILD) \
    -Wall -Wextra -Wpedantic -Wconversion -Wshadow -Wstrict-prototypes -Wmissing-prototypes \
    -Wold-style-definition -Wvla -Wdouble-promotion -Wcast-qual -Wwrite-strings \
    -Wformat=2 -Wundef -fno-common -ffp-contract=off -MMD -MP \
    -DRIGMAT_SHARE_DIR=\"$(PREFIX)/share/rigmat\"
PKG_CFLAGS := $(shell pkg-config --cflags gsl yaml-0.1 2>/dev/null)
ifeq ($(BLAS),openblas)
GSL_LIBS = -lgsl -lopenblas -lm
else
GSL_LIBS = -lgsl -lgslcblas -lm
endif
LIBS      = $(GSL_LIBS) -lyaml -lm
CHECK_LIBS := $(shell pkg-config --libs check 2>/dev/null || echo -lcheck -lsubunit -lrt -lpthread -lm)

LIB_SRC  := $(sort $(wildcard src/*.c src/util/*.c))
CLI_SRC  := $(sort $(wildcard src/cli/*.c))
TEST_SRC := $(sort $(wildcard tests/check_*.c)) tests/run.c tests/testutil.c
BENCH_SRC := $(sort $(wildcard bench/*.c))

# Three flavours share the sources: plain, sanitized (ASan+UBSan), and the
# plain -O0 -g one valgrind wants.
define flavour
$(1)_OBJ_LIB  = $$(LIB_SRC:%.c=$(BUILD)/$(1)/%.o)
$(1)_OBJ_CLI  = $$(CLI_SRC:%.c=$(BUILD)/$(1)/%.o)
$(1)_OBJ_TEST = $$(TEST_SRC:%.c=$(BUILD)/$(1)/%.o)
$(BUILD)/$(1)/%.o: %.c
	@mkdir -p $$(@D)
	$$(CC) $$(PROJECT_CFLAGS) $$(PKG_CFLAGS) $(2) $$(CFLAGS) -c $$< -o $$@
$(BUILD)/$(1)/librigmat.a: $$($(1)_OBJ_LIB)
	@rm -f $$@
	ar rcs $$@ $$^
$(BUILD)/$(1)/rigmat: $$($(1)_OBJ_CLI) $(BUILD)/$(1)/librigmat.a
	$$(CC) $(2) $$(LDFLAGS) -o $$@ $$^ $$(LIBS)
$(BUILD)/$(1)/check_rigmat: $$($(1)_OBJ_TEST) $(BUILD)/$(1)/librigmat.a
	$$(CC) $(2) $$(LDFLAGS) -o $$@ $$^ $$(CHECK_LIBS) $$(LIBS)
$(BUILD)/$(1)/tests/run.o: $(BUILD)/suites.h
-include $$($(1)_OBJ_LIB:.o=.d) $$($(1)_OBJ_CLI:.o=.d) $$($(1)_OBJ_TEST:.o=.d)
endef
SAN_FLAGS = -fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer
$(eval $(call flavour,plain,))
$(eval $(call flavour,san,$(SAN_FLAGS)))
$(eval $(call flavour,vg,-O0))

# The list of suites, from the files that define one.
$(BUILD)/suites.h: $(sort $(wildcard tests/check_*.c))
	@mkdir -p $(@D)
	@sed -n 's/^Suite \*\([a-z_0-9]*\)_suite(void)$$/RIGMAT_SUITE(\1)/p' $^ > $@.tmp && mv $@.tmp $@

.PHONY: all deps check check-unit check-cli check-ref check-san check-valgrind demo bench \
        install uninstall clean fuzz format
all: deps-ok $(BUILD)/rigmat $(BUILD)/librigmat.a

$(BUILD)/rigmat: $(BUILD)/plain/rigmat
	cp $< $@
$(BUILD)/librigmat.a: $(BUILD)/plain/librigmat.a
	cp $< $@

# deps: install the Debian packages when one is missing.  As root (and not
# under fakeroot) it runs apt-get; otherwise it prints the line to run.
deps-ok:
	@missing=0; for f in $(DEB_PROBES); do test -e $$f || missing=1; done; \
	if [ $$missing = 1 ]; then $(MAKE) --no-print-directory deps; fi
deps:
	@if [ "$$(id -u)" = 0 ] && [ -z "$$FAKEROOTKEY" ]; then \
	    echo "rigmat: installing Debian packages: $(DEB_PKGS)"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $(DEB_PKGS) \
	    || { echo "rigmat: apt-get failed" >&2; exit 1; }; \
	else \
	    echo "rigmat: missing Debian packages; run as root:" >&2; \
	    echo "  apt-get install $(DEB_PKGS)" >&2; exit 1; \
	fi

DEMO = examples/balancer.yaml
demo: all
	$(BUILD)/rigmat check $(DEMO) --rate 200Hz
	@if $(BUILD)/rigmat --help | grep -q '^  linearize'; then $(BUILD)/rigmat linearize $(DEMO); fi
	@if $(BUILD)/rigmat --help | grep -q '^  discretize'; then $(BUILD)/rigmat discretize $(DEMO) --rate 200Hz; fi

# check: unit suites (plain), command-line tests, reference scripts, then the
# unit suites again under AddressSanitizer + UndefinedBehaviorSanitizer.
check: all check-symbols check-unit check-cli check-ref check-san
	@echo "rigmat: all checks passed"
check-symbols: $(BUILD)/librigmat.a
	@nm -g --defined-only $< | awk 'NF==3 && $$3 !~ /^rigmat_/ {bad=1; print "non-prefixed symbol: " $$3} END {exit bad}'
check-unit: $(BUILD)/plain/check_rigmat
	cd tests && CK_DEFAULT_TIMEOUT=120 ../$(BUILD)/plain/check_rigmat
check-cli: $(BUILD)/rigmat
	RIGMAT=$(BUILD)/rigmat sh tests/cli.sh
check-ref: $(BUILD)/rigmat
	@for t in tests/ref/test_*.py; do [ -e "$$t" ] || continue; \
	    echo "reference: $$t"; RIGMAT=$(BUILD)/rigmat $(PYTHON) $$t || exit 1; done
check-san: $(BUILD)/san/check_rigmat $(BUILD)/san/rigmat
	cd tests && ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 UBSAN_OPTIONS=print_stacktrace=1 \
	    CK_DEFAULT_TIMEOUT=300 ../$(BUILD)/san/check_rigmat
	RIGMAT=$(BUILD)/san/rigmat sh tests/cli.sh
check-valgrind: $(BUILD)/vg/check_rigmat
	cd tests && CK_FORK=no CK_DEFAULT_TIMEOUT=600 valgrind --error-exitcode=9 --leak-check=full \
	    --errors-for-leak-kinds=definite,indirect -q ../$(BUILD)/vg/check_rigmat

bench: all
	@for b in $(BENCH_SRC:bench/%.c=$(BUILD)/bench/%); do $(MAKE) --no-print-directory $$b; done
	@for s in bench/*.sh; do [ -e "$$s" ] && RIGMAT=$(BUILD)/rigmat BUILD=$(BUILD) sh $$s; done; true
$(BUILD)/bench/%: bench/%.c $(BUILD)/plain/librigmat.a
	@mkdir -p $(@D)
	$(CC) $(PROJECT_CFLAGS) $(PKG_CFLAGS) $(CFLAGS) -o $@ $< $(BUILD)/plain/librigmat.a $(LIBS)

install: all
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/lib/pkgconfig \
	    $(DESTDIR)$(PREFIX)/include $(DESTDIR)$(PREFIX)/share/rigmat
	install -m 755 $(BUILD)/rigmat $(DESTDIR)$(PREFIX)/bin/rigmat
	install -m 644 $(BUILD)/librigmat.a $(DESTDIR)$(PREFIX)/lib/librigmat.a
	install -m 644 include/rigmat.h $(DESTDIR)$(PREFIX)/include/rigmat.h
	cp -R catalog $(DESTDIR)$(PREFIX)/share/rigmat/
	sed -e 's|@PREFIX@|$(PREFIX)|g' -e 's|@VERSION@|$(shell sed -n 's/^#define RIGMAT_VERSION "\(.*\)"/\1/p' include/rigmat.h)|g' \
	    rigmat.pc.in > $(DESTDIR)$(PREFIX)/lib/pkgconfig/rigmat.pc
uninstall:
	rm -f $(DESTDIR)$(PREFIX)/bin/rigmat $(DESTDIR)$(PREFIX)/lib/librigmat.a \
	    $(DESTDIR)$(PREFIX)/include/rigmat.h $(DESTDIR)$(PREFIX)/lib/pkgconfig/rigmat.pc
	rm -rf $(DESTDIR)$(PREFIX)/share/rigmat

format:
	clang-format -i src/*.c src/*.h src/*/*.c src/*/*.h include/*.h tests/*.c

clean:
	rm -rf $(BUILD)
