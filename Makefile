# rigmat - Makefile.  Plain GNU make; no configure step.
#
# Knobs (override on the command line):
PREFIX  ?= /usr/local
DESTDIR ?=
CC      ?= cc
CFLAGS  ?= -O2 -g
LDFLAGS ?=
PYTHON  ?= /usr/bin/python3

# -Werror when WERROR=1 (.ci/run sets it); off by default so a newer
# compiler's new warning does not stop a user's build.
WERROR  ?= 0

# Debian packages.  `make` (and `make demo`) needs only the build set;
# `make check` adds the test set.  Each set has files whose presence shows
# it is installed (BUILD_PROBES, TEST_PROBES); a missing one installs the
# set with apt-get when run as root (see deps-build / deps-test below).
BUILD_PKGS = gcc make libc6-dev pkg-config libgsl-dev libyaml-dev libopenblas0
# libopenblas0 is not linked: src/util/fastblas.c opens it for large problems
# (rigmat runs without it, slower on those).
BUILD_PROBES = /usr/bin/pkg-config /usr/include/gsl/gsl_matrix.h /usr/include/yaml.h \
               /usr/lib/$(shell $(CC) -dumpmachine 2>/dev/null)/libopenblas.so.0
TEST_PKGS = check libsubunit-dev python3-numpy python3-scipy python3-sympy python3-mpmath \
            time valgrind clang libclang-rt-14-dev locales groff-base \
            libxml2-utils chromium imagemagick gcc-arm-none-eabi libnewlib-arm-none-eabi
TEST_PROBES = /usr/include/check.h /usr/lib/python3/dist-packages/scipy \
              /usr/lib/python3/dist-packages/sympy /usr/lib/python3/dist-packages/mpmath \
              /usr/lib/python3/dist-packages/numpy /usr/bin/time /usr/bin/valgrind \
              /usr/bin/clang /usr/bin/localedef /usr/share/i18n/locales/de_DE \
              /usr/bin/groff /usr/bin/xmllint /usr/bin/chromium /usr/bin/arm-none-eabi-gcc
DEB_PKGS = $(BUILD_PKGS) $(TEST_PKGS)

BUILD = build
.DEFAULT_GOAL := all
# One folder per pipeline stage, in the order data flows (tests/stages.sh
# refuses an include from a later stage into an earlier one).
STAGES = util model mech sample study emit lib
PROJECT_CFLAGS = -std=c99 -D_POSIX_C_SOURCE=200809L -Iinclude -Isrc $(STAGES:%=-Isrc/%) -Isrc/cli -I$(BUILD) \
    -Wall -Wextra -Wpedantic -Wconversion -Wshadow -Wstrict-prototypes -Wmissing-prototypes \
    -Wold-style-definition -Wvla -Wdouble-promotion -Wcast-qual -Wwrite-strings \
    -Wformat=2 -Wundef -fno-common -ffp-contract=off -MMD -MP
ifeq ($(WERROR),1)
PROJECT_CFLAGS += -Werror
endif

# Compiler and linker flags of the libraries come from pkg-config.  They are
# asked once, when first used (the `VAR = $(eval VAR := ...)$(VAR)` idiom),
# which is after deps-build has installed pkg-config and the -dev packages;
# a failing pkg-config stops make with a message instead of linking without.
# GSL's .pc names its own CBLAS (-lgslcblas), which rigmat links: it loads
# fast.  OpenBLAS (libopenblas0, a run-time need for speed only) is opened
# with dlopen by the first large product or LU (src/util/fastblas.h); -ldl
# for that on a C library older than glibc 2.34.
pkgconfig = $(shell pkg-config $(1) 2>/dev/null || echo 'PKG-CONFIG-FAILED')
pkgcheck = $(if $(findstring PKG-CONFIG-FAILED,$(1)),$(error rigmat: 'pkg-config $(2)' failed; 'make deps' installs the packages),$(1))
PKG_CFLAGS = $(eval PKG_CFLAGS := $$(call pkgcheck,$$(call pkgconfig,--cflags gsl yaml-0.1),--cflags gsl yaml-0.1))$(PKG_CFLAGS)
GSL_LIBS_PC = $(eval GSL_LIBS_PC := $$(call pkgcheck,$$(call pkgconfig,--libs gsl),--libs gsl))$(GSL_LIBS_PC)
YAML_LIBS = $(eval YAML_LIBS := $$(call pkgcheck,$$(call pkgconfig,--libs yaml-0.1),--libs yaml-0.1))$(YAML_LIBS)
CHECK_CFLAGS = $(eval CHECK_CFLAGS := $$(call pkgcheck,$$(call pkgconfig,--cflags check),--cflags check))$(CHECK_CFLAGS)
CHECK_LIBS = $(eval CHECK_LIBS := $$(call pkgcheck,$$(call pkgconfig,--libs check),--libs check))$(CHECK_LIBS)
LIBS      = $(GSL_LIBS_PC) $(YAML_LIBS) -lpthread -ldl

LIB_SRC  := $(sort $(foreach d,$(STAGES),$(wildcard src/$(d)/*.c)))
CLI_SRC  := $(sort $(wildcard src/cli/*.c))
TEST_SRC := $(sort $(wildcard tests/check_*.c)) tests/run.c tests/testutil.c tests/mechtest.c
BENCH_SRC := $(sort $(wildcard bench/*.c))
# The one installed header is include/rigmat.h, the public API (opaque
# handles; src/lib/ implements it over src/util/rigmat_internal.h and the
# stage headers, which are not installed).

# Flavours of the same sources, each in $(BUILD)/NAME:
#   plain  -O2 -g, the shipped program and library (invariants pass through)
#   test   plain with -DRIGMAT_TESTING: RIGMAT_ALWAYS/NEVER stop at a broken
#          invariant (src/util/invariant.h); runs the unit suites
#   san    ASan + UBSan, -DRIGMAT_TESTING
#   vg     -O0 -g for valgrind, -DRIGMAT_TESTING
#   tsan   ThreadSanitizer, -DRIGMAT_TESTING (tests/threads.c)
# Flavour flags come after CFLAGS, so -O0 holds.  Every object waits for
# deps-build (order-only: it never makes an object out of date), and test
# objects for deps-test, so a parallel build cannot compile before the
# packages are there.
# The small products of src/util/fastblas.c vectorized: GCC's -O2 cost
# model leaves a loop of unknown length scalar.  Each element keeps its
# own multiply and add in order (ISO mode contracts nothing), so the bits
# do not change (tests/check_fastblas.c); empty for a compiler without it.
VECTORIZE := $(shell $(CC) -fvect-cost-model=dynamic -x c -c -o /dev/null /dev/null 2>/dev/null \
               && echo -fvect-cost-model=dynamic)

# The complex step's arithmetic (src/mech: mechanics.c, recursive.c,
# closure.c) by the textbook formulas inline: C99's rules make every
# complex division a library call (__divdc3) and every product check for
# NaN to rescue infinities, which a finite model never needs (an infinite
# result is refused as not finite either way).  The linearization of the
# demo took 7.2 us, 5.9 us with the flag; the outputs of every example
# stay the same bytes (72 runs compared).  Empty for a compiler without it.
CXRULES := $(shell $(CC) -fcx-fortran-rules -x c -c -o /dev/null /dev/null 2>/dev/null \
               && echo -fcx-fortran-rules)

define flavour
$(1)_OBJ_LIB  = $$(LIB_SRC:%.c=$(BUILD)/$(1)/%.o)
$(1)_OBJ_CLI  = $$(CLI_SRC:%.c=$(BUILD)/$(1)/%.o)
$(1)_OBJ_TEST = $$(TEST_SRC:%.c=$(BUILD)/$(1)/%.o)
$(BUILD)/$(1)/%.o: %.c | deps-build
	@mkdir -p $$(@D)
	$$(CC) $$(PROJECT_CFLAGS) $$(PKG_CFLAGS) $$(OBJ_EXTRA_CFLAGS) $$(CFLAGS) $(2) -c $$< -o $$@
$(BUILD)/$(1)/tests/%.o: OBJ_EXTRA_CFLAGS = $$(CHECK_CFLAGS)
$(BUILD)/$(1)/src/util/fastblas.o: OBJ_EXTRA_CFLAGS = $$(VECTORIZE)
$(BUILD)/$(1)/src/mech/mechanics.o $(BUILD)/$(1)/src/mech/recursive.o \
    $(BUILD)/$(1)/src/mech/closure.o: OBJ_EXTRA_CFLAGS = $$(CXRULES)
$$($(1)_OBJ_TEST): | deps-test
$(BUILD)/$(1)/librigmat.a: $$($(1)_OBJ_LIB)
	@rm -f $$@
	ar rcs $$@ $$^
$(BUILD)/$(1)/rigmat: $$($(1)_OBJ_CLI) $(BUILD)/$(1)/librigmat.a
	$$(CC) $(2) $$(LDFLAGS) -o $$@ $$^ $$(LIBS)
$(BUILD)/$(1)/check_rigmat: $$($(1)_OBJ_TEST) $(BUILD)/$(1)/librigmat.a
	$$(CC) $(2) $$(LDFLAGS) -o $$@ $$^ $$(CHECK_LIBS) $$(LIBS)
$(BUILD)/$(1)/tests/run.o: $(BUILD)/suites.h
$(BUILD)/$(1)/src/cli/main.o $(BUILD)/$(1)/src/lib/api.o: $(BUILD)/share_dir.h
$(BUILD)/$(1)/src/emit/firmware.o: $(BUILD)/fwtext.h
-include $$($(1)_OBJ_LIB:.o=.d) $$($(1)_OBJ_CLI:.o=.d) $$($(1)_OBJ_TEST:.o=.d)
endef
SAN_FLAGS = -fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer
TSAN_FLAGS = -fsanitize=thread -fno-omit-frame-pointer
$(eval $(call flavour,plain,))
$(eval $(call flavour,test,-DRIGMAT_TESTING))
$(eval $(call flavour,san,$(SAN_FLAGS) -DRIGMAT_TESTING))
$(eval $(call flavour,vg,-O0 -DRIGMAT_TESTING))
$(eval $(call flavour,tsan,$(TSAN_FLAGS) -DRIGMAT_TESTING))

# The texts of the firmware evaluator and filters, embedded in rigmat
# (src/emit/firmware.c writes them into the generated NAME.c): each line a
# string, so no literal exceeds what C99 compilers must take.
FW_TEXT = src/emit/fwkernel.inc src/emit/fwfilter.inc
fw_lines = printf 'static const char *const %s[] = {\n' '$(1)'; \
	sed -e 's/\\/\\\\/g' -e 's/"/\\"/g' -e 's/^/    "/' -e 's/$$/\\n",/' $(2); \
	printf '    NULL\n};\n'
$(BUILD)/fwtext.h: $(FW_TEXT)
	@mkdir -p $(@D)
	@{ printf '/* generated by the Makefile from $(FW_TEXT); do not edit */\n'; \
	  $(call fw_lines,rigmat_fw_kernel_text,src/emit/fwkernel.inc); \
	  $(call fw_lines,rigmat_fw_filter_text,src/emit/fwfilter.inc); } > $@.tmp && mv $@.tmp $@

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

.PHONY: all deps deps-build deps-test demo bench install uninstall clean format FORCE \
        check check-symbols check-unit check-cli check-ref check-install check-san \
        check-hostile check-fuzz check-fuzz-replay check-fuzz-short fuzz \
        check-valgrind check-valgrind-cli check-tsan check-oom check-locale \
        check-stages check-man check-report check-mutants check-firmware
all: $(BUILD)/rigmat $(BUILD)/librigmat.a

# Copied through a temporary and renamed, so a test running the old
# binary meanwhile never sees a half-written file ("Text file busy").
$(BUILD)/rigmat: $(BUILD)/plain/rigmat
	cp $< $@.tmp && mv -f $@.tmp $@
$(BUILD)/librigmat.a: $(BUILD)/plain/librigmat.a
	cp $< $@.tmp && mv -f $@.tmp $@

# deps-build / deps-test: install a package set when one of its probe files
# is missing.  As root (and not under fakeroot) `make deps PKGS=...` runs
# apt-get; otherwise it prints the line to run.  `make deps` alone installs
# both sets.
deps-build:
	@missing=0; for f in $(BUILD_PROBES); do test -e $$f || missing=1; done; \
	if [ $$missing = 1 ]; then $(MAKE) --no-print-directory deps PKGS='$(BUILD_PKGS)'; fi
deps-test: deps-build
	@missing=0; for f in $(TEST_PROBES); do test -e $$f || missing=1; done; \
	if [ $$missing = 1 ]; then $(MAKE) --no-print-directory deps PKGS='$(TEST_PKGS)'; fi
PKGS ?= $(DEB_PKGS)
deps:
	@if [ "$$(id -u)" = 0 ] && [ -z "$$FAKEROOTKEY" ]; then \
	    echo "rigmat: installing Debian packages: $(PKGS)"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $(PKGS) \
	    || { echo "rigmat: apt-get failed" >&2; exit 1; }; \
	else \
	    echo "rigmat: missing Debian packages; run as root:" >&2; \
	    echo "  apt-get install $(PKGS)" >&2; exit 1; \
	fi

DEMO = examples/balancer.yaml
demo: all
	$(BUILD)/rigmat check $(DEMO) --rate 200Hz
	$(BUILD)/rigmat linearize $(DEMO)
	$(BUILD)/rigmat discretize $(DEMO) --rate 200Hz
	$(BUILD)/rigmat report $(DEMO) --rate 200Hz -o $(BUILD)/demo-report.html
	@echo "rigmat: the demo's report is $(BUILD)/demo-report.html (open it in a browser)"

# check: unit suites (test build), command-line tests, reference scripts,
# then the suites again under AddressSanitizer + UndefinedBehaviorSanitizer,
# the threads under ThreadSanitizer and the allocation-failure run.  Every
# target names what it runs, so any -j works.
check: all check-stages check-symbols check-unit check-cli check-man check-report check-ref \
        check-firmware check-install check-san check-hostile check-fuzz check-tsan check-oom
	@echo "rigmat: all checks passed"
# check-stages: no include from a later stage into an earlier one, no
# include cycle (tests/stages.sh, with a self-test that plants both).
check-stages:
	sh tests/stages.sh --self-test
	sh tests/stages.sh
# check-symbols: every exported symbol of the library is rigmat_-prefixed,
# and the library holds no writable data, so no global state
# (tests/globals.sh, with a self-test that plants a writable static).
check-symbols: $(BUILD)/librigmat.a
	@nm -g --defined-only $< | awk 'NF==3 && $$3 !~ /^rigmat_/ {bad=1; print "non-prefixed symbol: " $$3} END {exit bad}'
	@sh tests/globals.sh --self-test
	@sh tests/globals.sh $<
# The locale case of the units suite (tests/check_locale.c) needs a
# comma-decimal locale: tests/locale.sh generates de_DE.UTF-8 when it can.
check-locale: deps-test
	@sh tests/locale.sh
check-unit: $(BUILD)/test/check_rigmat check-locale
	cd tests && CK_DEFAULT_TIMEOUT=120 ../$(BUILD)/test/check_rigmat
# install.sh runs `make install` with this PREFIX, so nothing is rebuilt
# under the feet of the other checks running in parallel.
check-install: all deps-test
	+PREFIX='$(PREFIX)' sh tests/install.sh
check-cli: $(BUILD)/rigmat $(BUILD)/shim/writefail.so deps-test
	RIGMAT=$(BUILD)/rigmat WRITE_SHIM=$(BUILD)/shim/writefail.so sh tests/cli.sh
# The man page and the bash completion against the program's help.
check-man: $(BUILD)/rigmat deps-test
	RIGMAT=$(BUILD)/rigmat sh tests/man.sh
# check-report: the HTML report and its figures as XML, self-contained,
# escaped, and rendered by headless Chromium (skipped with a message where
# xmllint or chromium is missing; `make deps` installs them).
check-report: $(BUILD)/rigmat deps-test
	RIGMAT=$(BUILD)/rigmat sh tests/report.sh
check-ref: $(BUILD)/rigmat deps-test
	@for t in tests/ref/test_*.py; do [ -e "$$t" ] || continue; \
	    echo "reference: $$t"; RIGMAT=$(BUILD)/rigmat $(PYTHON) $$t || exit 1; done
# check-firmware: the generated C of `rigmat firmware` compiled for the host
# and a Cortex-M4F, against the library, numpy and a NEES test
# (tests/firmware.sh).
check-firmware: $(BUILD)/rigmat $(BUILD)/librigmat.a $(BUILD)/shim/writefail.so deps-test
	RIGMAT=$(BUILD)/rigmat RIGMAT_LIB=$(BUILD)/librigmat.a FW_LIBS='$(LIBS) -lm' \
	    WRITE_SHIM=$(BUILD)/shim/writefail.so PYTHON=$(PYTHON) sh tests/firmware.sh
check-san: $(BUILD)/san/check_rigmat $(BUILD)/san/rigmat $(BUILD)/shim/writefail.so check-locale
	cd tests && ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 UBSAN_OPTIONS=print_stacktrace=1 \
	    CK_DEFAULT_TIMEOUT=300 ../$(BUILD)/san/check_rigmat
	RIGMAT=$(BUILD)/san/rigmat WRITE_SHIM=$(BUILD)/shim/writefail.so sh tests/cli.sh
check-valgrind: $(BUILD)/vg/check_rigmat check-valgrind-cli check-locale
	cd tests && CK_FORK=no CK_DEFAULT_TIMEOUT=600 valgrind --error-exitcode=9 --leak-check=full \
	    --errors-for-leak-kinds=definite,indirect --suppressions=valgrind.supp -q \
	    ../$(BUILD)/vg/check_rigmat
# check-mutants: plant each one-line bug of tests/mutants.list in a scratch
# copy of the sources, rebuild, and require the tests to catch every one
# (tests/mutants.sh; not part of `make check`; .ci/run runs it).
check-mutants:
	PYTHON=$(PYTHON) MAKE=$(MAKE) sh tests/mutants.sh
# The program under memcheck on the examples and a few hostile files
# (tests/valgrind-cli.sh); exit 9 from valgrind is a memory error.
check-valgrind-cli: $(BUILD)/vg/rigmat deps-test
	RIGMAT=$(BUILD)/vg/rigmat sh tests/valgrind-cli.sh

# The write-fault shim of tests/cli.sh (tests/shim/writefail.c), loaded with
# LD_PRELOAD; built for the tests only, never linked into the program.
$(BUILD)/shim/writefail.so: tests/shim/writefail.c | deps-build
	@mkdir -p $(@D)
	$(CC) -std=c99 -Wall -Wextra -Wpedantic -fPIC -shared $(CFLAGS) -o $@ $< -ldl

# check-tsan: the pipeline on four threads against one thread, byte for
# byte, under ThreadSanitizer (tests/threads.c).  OPENBLAS_NUM_THREADS=1:
# OpenBLAS runs its own thread pool whose hand-offs ThreadSanitizer cannot
# see (the library is not instrumented), which would report races that are
# OpenBLAS's own business; with one thread it uses none.
$(BUILD)/tsan/threads: $(BUILD)/tsan/tests/threads.o $(BUILD)/tsan/tests/pipeline.o \
        $(BUILD)/tsan/librigmat.a
	$(CC) $(TSAN_FLAGS) $(LDFLAGS) -o $@ $^ $(LIBS) -lpthread
# A 10-mass chain (20 states, bench/chains.py) joins the examples: its
# products are large enough to open OpenBLAS (src/util/fastblas.h), so
# the dlopen runs on four threads at once too; no example opens it.
check-tsan: $(BUILD)/tsan/threads deps-test
	$(PYTHON) bench/chains.py mass 10 > $(BUILD)/tsan/chain10.yaml
	OPENBLAS_NUM_THREADS=1 TSAN_OPTIONS=halt_on_error=1:exitcode=66 \
	    $(BUILD)/tsan/threads catalog examples/*.yaml $(BUILD)/tsan/chain10.yaml

# check-oom: a full load + trim + linearize + discretize + noise run in
# which the n-th allocation fails, for every n until the run succeeds:
# through the library (tests/oom.c; with --api through the public API of
# include/rigmat.h, on the demo) and through the program
# (tests/oom-cli.sh: `discretize --format json -o FILE`, exit 4 each time).
# The allocation entry points are wrapped at link time (-Wl,--wrap, see
# tests/oomwrap.c) in these two test executables only; LeakSanitizer checks
# every run.
OOM_WRAP = malloc calloc realloc gsl_matrix_alloc gsl_matrix_calloc \
           gsl_matrix_complex_alloc gsl_vector_alloc gsl_vector_calloc gsl_vector_complex_alloc \
           gsl_permutation_alloc gsl_eigen_nonsymmv_alloc yaml_parser_initialize yaml_parser_parse
$(BUILD)/san/oom: $(BUILD)/san/tests/oom.o $(BUILD)/san/tests/oomwrap.o $(BUILD)/san/tests/pipeline.o \
        $(BUILD)/san/librigmat.a
	$(CC) $(SAN_FLAGS) $(LDFLAGS) $(OOM_WRAP:%=-Wl,--wrap=%) -o $@ $^ $(LIBS)
$(BUILD)/san/rigmat-oom: $(san_OBJ_CLI) $(BUILD)/san/tests/oomwrap.o $(BUILD)/san/librigmat.a
	$(CC) $(SAN_FLAGS) $(LDFLAGS) $(OOM_WRAP:%=-Wl,--wrap=%) -o $@ $^ $(LIBS)
$(BUILD)/tsan/tests/threads.o $(BUILD)/tsan/tests/pipeline.o $(BUILD)/san/tests/oom.o \
        $(BUILD)/san/tests/oomwrap.o $(BUILD)/san/tests/pipeline.o: | deps-test
-include $(BUILD)/tsan/tests/threads.d $(BUILD)/tsan/tests/pipeline.d $(BUILD)/san/tests/oom.d \
        $(BUILD)/san/tests/oomwrap.d $(BUILD)/san/tests/pipeline.d
# Three examples by default (catalog parts and sensors; a datasheet motor
# that warns; disturbances with noise), about 2000 runs;
# OOM_MODELS='examples/*.yaml' runs them all.
OOM_MODELS ?= examples/balancer.yaml examples/ball-beam.yaml examples/quarter-car.yaml
# The program run fails every OOM_CLI_STEP-th allocation (tests/oom-cli.sh).
OOM_CLI_STEP ?= 7
check-oom: $(BUILD)/san/oom $(BUILD)/san/rigmat-oom
	ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 $(BUILD)/san/oom catalog $(OOM_MODELS)
	ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 $(BUILD)/san/oom --api catalog examples/balancer.yaml
	RIGMAT=$(BUILD)/san/rigmat-oom OOM_STEP=$(OOM_CLI_STEP) sh tests/oom-cli.sh

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
$(BUILD)/fuzz/%.o: %.c | deps-test
	@mkdir -p $(@D)
	$(FUZZ_CC) $(PROJECT_CFLAGS) $(PKG_CFLAGS) -O1 -g $(FUZZ_SAN) -DRIGMAT_TESTING -fsanitize=fuzzer-no-link -c $< -o $@
$(BUILD)/fuzz/librigmat.a: $(FUZZ_OBJ_LIB)
	@rm -f $@
	ar rcs $@ $^
$(BUILD)/fuzz/fuzz_%: $(BUILD)/fuzz/tests/fuzz/fuzz_%.o $(BUILD)/fuzz/librigmat.a
	$(FUZZ_CC) $(FUZZ_SAN) -fsanitize=fuzzer -o $@ $^ $(LIBS)
$(BUILD)/san/fuzz-replay-%: $(BUILD)/san/tests/fuzz/fuzz_%.o $(BUILD)/san/tests/fuzz/replay.o \
        $(BUILD)/san/librigmat.a
	$(CC) $(SAN_FLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)
$(BUILD)/fuzz/src/lib/api.o: $(BUILD)/share_dir.h
$(BUILD)/fuzz/src/emit/firmware.o: $(BUILD)/fwtext.h
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
check-fuzz-short: deps-test
	@mkdir -p $(BUILD); if printf 'int LLVMFuzzerTestOneInput(const char *d, unsigned long n);\nint LLVMFuzzerTestOneInput(const char *d, unsigned long n) { return d == 0 && n > 0; }\n' \
	        | $(FUZZ_CC) -x c -fsanitize=fuzzer - -o $(BUILD)/fuzz-probe 2>/dev/null; then \
	    $(MAKE) --no-print-directory $(FUZZ_NAMES:%=$(BUILD)/fuzz/fuzz_%) || exit 1; \
	    for t in $(FUZZ_NAMES); do \
	        sh tests/fuzz/run.sh $$t $(FUZZ_CHECK_SECONDS) $(BUILD)/fuzz || exit 1; done; \
	else echo "fuzz: $(FUZZ_CC) cannot link libFuzzer; short fuzz run skipped (make deps)"; fi

bench: all
	@for b in $(BENCH_SRC:bench/%.c=$(BUILD)/bench/%); do $(MAKE) --no-print-directory $$b; done
	@for s in bench/*.sh; do [ -e "$$s" ] && RIGMAT=$(BUILD)/rigmat BUILD=$(BUILD) sh $$s; done; true
$(BUILD)/bench/%: bench/%.c $(BUILD)/plain/librigmat.a | deps-build
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
	install -m 644 include/rigmat.h $(DESTDIR)$(PREFIX)/include/rigmat.h
	cp -R catalog $(DESTDIR)$(PREFIX)/share/rigmat/
	sed -e 's|@PREFIX@|$(PREFIX)|g' -e 's|@VERSION@|$(shell sed -n 's/^#define RIGMAT_VERSION "\(.*\)"/\1/p' include/rigmat.h)|g' \
	    -e 's|@LIBS@|$(strip $(LIBS))|g' -e 's|@CFLAGS@|$(strip $(PKG_CFLAGS))|g' \
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
