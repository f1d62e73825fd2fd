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
           libopenblas-dev python3-numpy python3-scipy python3-sympy python3-mpmath \
           time valgrind clang libclang-rt-14-dev groff-base
# Headers / files whose presence shows each package is installed.
DEB_PROBES = /usr/include/gsl/gsl_matrix.h /usr/include/yaml.h /usr/include/check.h \
             /usr/lib/python3/dist-packages/scipy /usr/lib/python3/dist-packages/sympy \
             /usr/lib/python3/dist-packages/mpmath /usr/lib/python3/dist-packages/numpy \
             /usr/bin/time /usr/bin/valgrind /usr/bin/clang /usr/bin/groff

BUILD = build
.DEFAULT_GOAL := all
# One folder per pipeline stage, in the order data flows (tests/stages.sh
# refuses an include from a later stage into an earlier one).
STAGES = util model mech sample study emit
PROJECT_CFLAGS = -std=c99 -D_POSIX_C_SOURCE=200809L -Iinclude -Isrc $(STAGES:%=-Isrc/%) -Isrc/cli -I$(BUILD) \
    -Wall -Wextra -Wpedantic -Wconversion -Wshadow -Wstrict-prototypes -Wmissing-prototypes \
    -Wold-style-definition -Wvla -Wdouble-promotion -Wcast-qual -Wwrite-strings \
    -Wformat=2 -Wundef -fno-common -ffp-contract=off -MMD -MP
PKG_CFLAGS := $(shell pkg-config --cflags gsl yaml-0.1 2>/dev/null)
ifeq ($(BLAS),openblas)
GSL_LIBS = -lgsl -lopenblas -lm
else
GSL_LIBS = -lgsl -lgslcblas -lm
endif
LIBS      = $(GSL_LIBS) -lyaml -lpthread -lm
CHECK_LIBS := $(shell pkg-config --libs check 2>/dev/null || echo -lcheck -lsubunit -lrt -lpthread -lm)

LIB_SRC  := $(sort $(foreach d,$(STAGES),$(wildcard src/$(d)/*.c)))
CLI_SRC  := $(sort $(wildcard src/cli/*.c))
TEST_SRC := $(sort $(wildcard tests/check_*.c)) tests/run.c tests/testutil.c tests/mechtest.c
BENCH_SRC := $(sort $(wildcard bench/*.c))
# Installed beside rigmat.h as <rigmat/NAME.h>: units, the matrix
# exponential, sampling, the noise model, simulation, the validity range,
# the Riccati solver, the gains and the result writers.
PUBLIC_SUBHEADERS = src/model/units.h src/sample/expm.h src/sample/discretize.h src/sample/noise.h \
    src/study/simulate.h src/study/validity.h src/study/riccati.h src/study/gains.h \
    src/emit/result.h

# Three flavours share the sources: plain, sanitized (ASan+UBSan), and the
# plain -O0 -g one valgrind wants (flavour flags come after CFLAGS, so -O0 holds).
define flavour
$(1)_OBJ_LIB  = $$(LIB_SRC:%.c=$(BUILD)/$(1)/%.o)
$(1)_OBJ_CLI  = $$(CLI_SRC:%.c=$(BUILD)/$(1)/%.o)
$(1)_OBJ_TEST = $$(TEST_SRC:%.c=$(BUILD)/$(1)/%.o)
$(BUILD)/$(1)/%.o: %.c
	@mkdir -p $$(@D)
	$$(CC) $$(PROJECT_CFLAGS) $$(PKG_CFLAGS) $$(CFLAGS) $(2) -c $$< -o $$@
$(BUILD)/$(1)/librigmat.a: $$($(1)_OBJ_LIB)
	@rm -f $$@
	ar rcs $$@ $$^
$(BUILD)/$(1)/rigmat: $$($(1)_OBJ_CLI) $(BUILD)/$(1)/librigmat.a
	$$(CC) $(2) $$(LDFLAGS) -o $$@ $$^ $$(LIBS)
$(BUILD)/$(1)/check_rigmat: $$($(1)_OBJ_TEST) $(BUILD)/$(1)/librigmat.a
	$$(CC) $(2) $$(LDFLAGS) -o $$@ $$^ $$(CHECK_LIBS) $$(LIBS)
$(BUILD)/$(1)/tests/run.o: $(BUILD)/suites.h
$(BUILD)/$(1)/src/cli/main.o: $(BUILD)/share_dir.h
-include $$($(1)_OBJ_LIB:.o=.d) $$($(1)_OBJ_CLI:.o=.d) $$($(1)_OBJ_TEST:.o=.d)
endef
SAN_FLAGS = -fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer
$(eval $(call flavour,plain,))
$(eval $(call flavour,san,$(SAN_FLAGS)))
$(eval $(call flavour,vg,-O0))

# The installed catalog folder, compiled into the program; rewritten only
# when PREFIX changes, so `make install PREFIX=...` rebuilds what it must.
$(BUILD)/share_dir.h: FORCE
	@mkdir -p $(@D)
	@printf '#define RIGMAT_SHARE_DIR "%s"\n' '$(PREFIX)/share/rigmat' > $@.tmp
	@if cmp -s $@.tmp $@; then rm -f $@.tmp; else mv $@.tmp $@; fi
FORCE:

# The list of suites, from the files that define one.
$(BUILD)/suites.h: $(sort $(wildcard tests/check_*.c))
	@mkdir -p $(@D)
	@sed -n 's/^Suite \*\([a-z_0-9]*\)_suite(void)$$/RIGMAT_SUITE(\1)/p' $^ > $@.tmp && mv $@.tmp $@

.PHONY: all deps check check-unit check-cli check-man check-ref check-san check-valgrind demo bench \
        install uninstall clean fuzz format check-install FORCE check-hostile check-fuzz check-fuzz-replay \
        check-fuzz-short check-valgrind-cli check-stages \
        check-mutants
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
	$(BUILD)/rigmat linearize $(DEMO)
	$(BUILD)/rigmat discretize $(DEMO) --rate 200Hz

# check: unit suites (plain), command-line tests, reference scripts, then the
# unit suites again under AddressSanitizer + UndefinedBehaviorSanitizer.
check: all check-stages check-symbols check-unit check-cli check-man check-ref check-install check-san check-hostile check-fuzz
	@echo "rigmat: all checks passed"
# check-stages: no include from a later stage into an earlier one, no
# include cycle (tests/stages.sh, with a self-test that plants both).
check-stages:
	sh tests/stages.sh --self-test
	sh tests/stages.sh
check-symbols: $(BUILD)/librigmat.a
	@nm -g --defined-only $< | awk 'NF==3 && $$3 !~ /^rigmat_/ {bad=1; print "non-prefixed symbol: " $$3} END {exit bad}'
check-unit: $(BUILD)/plain/check_rigmat
	cd tests && CK_DEFAULT_TIMEOUT=120 ../$(BUILD)/plain/check_rigmat
check-install: all
	sh tests/install.sh
check-cli: $(BUILD)/rigmat
	RIGMAT=$(BUILD)/rigmat sh tests/cli.sh
# The man page and the bash completion against the program's help.
check-man: $(BUILD)/rigmat
	RIGMAT=$(BUILD)/rigmat sh tests/man.sh
check-ref: $(BUILD)/rigmat
	@for t in tests/ref/test_*.py; do [ -e "$$t" ] || continue; \
	    echo "reference: $$t"; RIGMAT=$(BUILD)/rigmat $(PYTHON) $$t || exit 1; done
check-san: $(BUILD)/san/check_rigmat $(BUILD)/san/rigmat
	cd tests && ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 UBSAN_OPTIONS=print_stacktrace=1 \
	    CK_DEFAULT_TIMEOUT=300 ../$(BUILD)/san/check_rigmat
	RIGMAT=$(BUILD)/san/rigmat sh tests/cli.sh
check-valgrind: $(BUILD)/vg/check_rigmat check-valgrind-cli
	cd tests && CK_FORK=no CK_DEFAULT_TIMEOUT=600 valgrind --error-exitcode=9 --leak-check=full \
	    --errors-for-leak-kinds=definite,indirect -q ../$(BUILD)/vg/check_rigmat
# check-mutants: plant each one-line bug of tests/mutants.list in a scratch
# copy of the sources, rebuild, and require the tests to catch every one
# (tests/mutants.sh; not part of `make check`; .ci/run runs it).
check-mutants:
	PYTHON=$(PYTHON) MAKE=$(MAKE) sh tests/mutants.sh
# The program under memcheck on the examples and a few hostile files
# (tests/valgrind-cli.sh); exit 9 from valgrind is a memory error.
check-valgrind-cli: $(BUILD)/vg/rigmat
	RIGMAT=$(BUILD)/vg/rigmat sh tests/valgrind-cli.sh

# ------------------------------------------------------------ hostile input and fuzzing
# check-hostile: every file of tests/hostile/ (and big ones generated into
# $(BUILD)/hostile) refused with exit 1 or 4 and a diagnostic, under a memory
# and time bound, by the plain build (tests/hostile.sh).
check-hostile: $(BUILD)/rigmat
	RIGMAT=$(BUILD)/rigmat HOSTILE_GEN=$(BUILD)/hostile sh tests/hostile.sh

# Fuzz targets (tests/fuzz/): libFuzzer builds with clang in $(BUILD)/fuzz;
# the same entry points linked to tests/fuzz/replay.c with the sanitizer
# flavour replay the regression corpus and the seeds in `make check`.
# `make fuzz FUZZ_SECONDS=N` fuzzes each target for N seconds, one after the
# other, and logs the run in tests/fuzz/LOG.md; `make check` fuzzes each for
# FUZZ_CHECK_SECONDS without logging (skipped, with a message, when
# $(FUZZ_CC) cannot link libFuzzer).  fuzz_pipeline needs the linearize and
# discretize modules and is built once their headers exist.
FUZZ_CC ?= clang
FUZZ_SECONDS ?= 60
FUZZ_CHECK_SECONDS ?= 15
FUZZ_SAN = -fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer
FUZZ_NAMES = units load pipeline
FUZZ_OBJ_LIB = $(LIB_SRC:%.c=$(BUILD)/fuzz/%.o)
$(BUILD)/fuzz/%.o: %.c
	@mkdir -p $(@D)
	$(FUZZ_CC) $(PROJECT_CFLAGS) $(PKG_CFLAGS) -O1 -g $(FUZZ_SAN) -fsanitize=fuzzer-no-link -c $< -o $@
$(BUILD)/fuzz/librigmat.a: $(FUZZ_OBJ_LIB)
	@rm -f $@
	ar rcs $@ $^
$(BUILD)/fuzz/fuzz_%: $(BUILD)/fuzz/tests/fuzz/fuzz_%.o $(BUILD)/fuzz/librigmat.a
	$(FUZZ_CC) $(FUZZ_SAN) -fsanitize=fuzzer -o $@ $^ $(LIBS)
$(BUILD)/san/fuzz-replay-%: $(BUILD)/san/tests/fuzz/fuzz_%.o $(BUILD)/san/tests/fuzz/replay.o \
        $(BUILD)/san/librigmat.a
	$(CC) $(SAN_FLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)
-include $(FUZZ_OBJ_LIB:.o=.d) $(wildcard $(BUILD)/fuzz/tests/fuzz/*.d $(BUILD)/san/tests/fuzz/*.d)
# Keep the harness objects make would otherwise delete as intermediate.
.SECONDARY: $(FUZZ_NAMES:%=$(BUILD)/fuzz/tests/fuzz/fuzz_%.o) \
        $(FUZZ_NAMES:%=$(BUILD)/san/tests/fuzz/fuzz_%.o) $(BUILD)/san/tests/fuzz/replay.o

fuzz: $(FUZZ_NAMES:%=$(BUILD)/fuzz/fuzz_%)
	@for t in $(FUZZ_NAMES); do \
	    sh tests/fuzz/run.sh $$t $(FUZZ_SECONDS) $(BUILD)/fuzz tests/fuzz/LOG.md || exit 1; done
check-fuzz: check-fuzz-replay check-fuzz-short
check-fuzz-replay: $(FUZZ_NAMES:%=$(BUILD)/san/fuzz-replay-%)
	@for t in $(FUZZ_NAMES); do \
	    sh tests/fuzz/seeds.sh $$t $(BUILD)/fuzz-seeds/$$t || exit 1; \
	    echo "fuzz replay: $$t"; \
	    RIGMAT_CATALOG=$(CURDIR)/catalog ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 \
	        UBSAN_OPTIONS=print_stacktrace=1:abort_on_error=1 \
	        $(BUILD)/san/fuzz-replay-$$t tests/fuzz/regressions/$$t $(BUILD)/fuzz-seeds/$$t || exit 1; \
	done
check-fuzz-short:
	@mkdir -p $(BUILD); if printf 'int LLVMFuzzerTestOneInput(const char *d, unsigned long n);\nint LLVMFuzzerTestOneInput(const char *d, unsigned long n) { return d == 0 && n > 0; }\n' \
	        | $(FUZZ_CC) -x c -fsanitize=fuzzer - -o $(BUILD)/fuzz-probe 2>/dev/null; then \
	    $(MAKE) --no-print-directory $(FUZZ_NAMES:%=$(BUILD)/fuzz/fuzz_%) || exit 1; \
	    for t in $(FUZZ_NAMES); do \
	        sh tests/fuzz/run.sh $$t $(FUZZ_CHECK_SECONDS) $(BUILD)/fuzz || exit 1; done; \
	else echo "fuzz: $(FUZZ_CC) cannot link libFuzzer; short fuzz run skipped (make deps)"; fi

bench: all
	@for b in $(BENCH_SRC:bench/%.c=$(BUILD)/bench/%); do $(MAKE) --no-print-directory $$b; done
	@for s in bench/*.sh; do [ -e "$$s" ] && RIGMAT=$(BUILD)/rigmat BUILD=$(BUILD) sh $$s; done; true
$(BUILD)/bench/%: bench/%.c $(BUILD)/plain/librigmat.a
	@mkdir -p $(@D)
	$(CC) $(PROJECT_CFLAGS) $(PKG_CFLAGS) $(CFLAGS) -o $@ $< $(BUILD)/plain/librigmat.a $(LIBS)

install: all
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/lib/pkgconfig \
	    $(DESTDIR)$(PREFIX)/include $(DESTDIR)$(PREFIX)/share/rigmat \
	    $(DESTDIR)$(PREFIX)/share/man/man1 $(DESTDIR)$(PREFIX)/share/bash-completion/completions
	install -m 644 doc/rigmat.1 $(DESTDIR)$(PREFIX)/share/man/man1/rigmat.1
	install -m 644 doc/rigmat.bash $(DESTDIR)$(PREFIX)/share/bash-completion/completions/rigmat
	install -m 755 $(BUILD)/rigmat $(DESTDIR)$(PREFIX)/bin/rigmat
	install -m 644 $(BUILD)/librigmat.a $(DESTDIR)$(PREFIX)/lib/librigmat.a
	install -d $(DESTDIR)$(PREFIX)/include/rigmat
	install -m 644 include/rigmat.h $(DESTDIR)$(PREFIX)/include/rigmat.h
	install -m 644 $(PUBLIC_SUBHEADERS) $(DESTDIR)$(PREFIX)/include/rigmat/
	cp -R catalog $(DESTDIR)$(PREFIX)/share/rigmat/
	sed -e 's|@PREFIX@|$(PREFIX)|g' -e 's|@VERSION@|$(shell sed -n 's/^#define RIGMAT_VERSION "\(.*\)"/\1/p' include/rigmat.h)|g' \
	    rigmat.pc.in > $(DESTDIR)$(PREFIX)/lib/pkgconfig/rigmat.pc
uninstall:
	rm -f $(DESTDIR)$(PREFIX)/bin/rigmat $(DESTDIR)$(PREFIX)/lib/librigmat.a \
	    $(DESTDIR)$(PREFIX)/include/rigmat.h $(DESTDIR)$(PREFIX)/lib/pkgconfig/rigmat.pc \
	    $(DESTDIR)$(PREFIX)/share/man/man1/rigmat.1 \
	    $(DESTDIR)$(PREFIX)/share/bash-completion/completions/rigmat
	rm -rf $(DESTDIR)$(PREFIX)/include/rigmat
	rm -rf $(DESTDIR)$(PREFIX)/share/rigmat

format:
	clang-format -i src/*/*.c src/*/*.h include/*.h tests/*.c

clean:
	rm -rf $(BUILD)
