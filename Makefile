# lantern - build, test, demo, benchmark, install.
#
#   make            liblantern.a and bin/lantern (packages must be installed)
#   make mpi        bin/lantern-mpi (campaigns over Open MPI ranks; mpicc)
#   make demo       install missing packages, build, run the demo
#   make test       install missing packages, build, run every test
#   make bench      benchmarks
#   make asan       every test again, built with AddressSanitizer and UBSan
#   make valgrind   the end-to-end tests under valgrind
#   make fuzz       each libFuzzer target for FUZZ_SECONDS (default 30)
#   make test-long  make test, then the longer checks (fuzzing, the 200-survey coverage,
#                   300 simulated light-curve surveys)
#   make python     the Python package, build/python/lantern (PYTHONPATH=build/python)
#   make install PREFIX=/usr/local   (the program, library, headers and Python package)
#   make clean

PREFIX ?= /usr/local
CC ?= cc
PKG_CONFIG ?= pkg-config

# Every library lantern uses, by pkg-config name.
PKGS := gsl cfitsio libcjson inih lapacke openblas plplot cairo
TEST_PKGS := cmocka

PKG_CFLAGS := $(shell $(PKG_CONFIG) --cflags $(PKGS) 2>/dev/null)
# GSL asks for its reference CBLAS; OpenBLAS provides the same symbols, faster.
PKG_LIBS := $(filter-out -lgslcblas,$(shell $(PKG_CONFIG) --libs $(PKGS) 2>/dev/null))
TEST_CFLAGS := $(shell $(PKG_CONFIG) --cflags $(TEST_PKGS) 2>/dev/null)
TEST_LIBS := $(shell $(PKG_CONFIG) --libs $(TEST_PKGS) 2>/dev/null)

WARN := -Wall -Wextra -Werror -Wshadow -Wstrict-prototypes -Wmissing-prototypes
CFLAGS ?= -O2 -g
ALL_CFLAGS := -std=c17 -D_DEFAULT_SOURCE -fopenmp $(WARN) $(CFLAGS) -Iinclude $(PKG_CFLAGS)
LDLIBS := $(PKG_LIBS) -lm

BUILD ?= build
BINDIR ?= bin
LIB_SRC := $(wildcard src/util/*.c src/cosmology/*.c src/survey/*.c src/simulate/*.c src/likelihood/*.c src/inference/*.c src/posterior/*.c src/pipeline/*.c src/report/*.c src/campaign/*.c)
CLI_SRC := $(wildcard src/cli/*.c)
LIB_OBJ := $(LIB_SRC:%.c=$(BUILD)/%.o)
# The command line's help texts (src/cli/help/*.txt, plain text as printed)
# become one generated C file, $(BUILD)/gen/help.c (scripts/embed-text.sh).
HELP_TXT := $(sort $(wildcard src/cli/help/*.txt))
HELP_OBJ := $(BUILD)/gen/help.o
CLI_OBJ := $(CLI_SRC:%.c=$(BUILD)/%.o) $(HELP_OBJ)
HEADERS := $(wildcard include/lantern/*.h src/*/*.h)

TEST_SRC := $(wildcard tests/unit/test_*.c tests/reference/test_*.c)
TEST_BIN := $(TEST_SRC:tests/%.c=$(BUILD)/tests/%)
BENCH_SRC := $(wildcard tests/bench/bench_*.c)
BENCH_BIN := $(BENCH_SRC:tests/%.c=$(BUILD)/tests/%)

LIB := $(BUILD)/liblantern.a
BIN := $(BINDIR)/lantern
MPI_BIN := $(BINDIR)/lantern-mpi
MPICC ?= mpicc
# lantern-mpi: the same command line with its own entry (src/cli/mpi/).
MPI_CLI_OBJ := $(filter-out $(BUILD)/src/cli/entry.o,$(CLI_OBJ)) $(BUILD)/src/cli/mpi/main_mpi.o

# The Python package (make python): build/python/lantern/, the C extension
# python/_lantern.c linked with the library, for Debian's /usr/bin/python3
# (PYTHON; the tests and Debian's numpy use that one).
PYTHON ?= /usr/bin/python3
PY_INC := $(shell $(PYTHON) -c "import sysconfig; print(sysconfig.get_paths()['include'])" 2>/dev/null)
PY_NP_INC := $(shell $(PYTHON) -c "import numpy; print(numpy.get_include())" 2>/dev/null)
PY_EXT := $(shell $(PYTHON) -c "import sysconfig; print(sysconfig.get_config_var('EXT_SUFFIX'))" 2>/dev/null)
# The library once more as position-independent code, for the extension
# (a shared object; the programs keep their faster position-dependent build).
PIC_OBJ := $(LIB_SRC:%.c=$(BUILD)/pic/%.o)
PIC_LIB := $(BUILD)/pic/liblantern.a
PY_DIR := $(BUILD)/python/lantern
PY_SITE = $(PREFIX)/lib/python$(shell $(PYTHON) -c "import sys; print('%d.%d' % sys.version_info[:2])")/dist-packages
PY_MOD := $(PY_DIR)/_lantern$(PY_EXT)
PY_SRC := $(wildcard python/lantern/*.py)

.PHONY: mpi all deps check-pkgs demo test check bench install clean asan valgrind fuzz test-long tests-built python
all: $(LIB) $(BIN)

# Refuse to build with missing libraries, with a message that says what to do.
check-pkgs:
	@$(PKG_CONFIG) --exists $(PKGS) || { \
	  echo "lantern: missing libraries; run 'make deps' (or scripts/install-deps.sh as root)" >&2; exit 2; }

# V=1 shows the full compiler lines.
Q := $(if $(V),,@)

$(BUILD)/%.o: %.c $(HEADERS) | check-pkgs
	@mkdir -p $(dir $@)
	@$(if $(Q),echo "  CC      $<")
	$(Q)$(CC) $(ALL_CFLAGS) -c $< -o $@

$(BUILD)/gen/help.c: $(HELP_TXT) scripts/embed-text.sh
	@mkdir -p $(dir $@)
	@$(if $(Q),echo "  GEN     $@")
	$(Q)sh scripts/embed-text.sh $@ cli_help_ help.h $(HELP_TXT)

$(HELP_OBJ): $(BUILD)/gen/help.c src/cli/help.h | check-pkgs
	@$(if $(Q),echo "  CC      $<")
	$(Q)$(CC) $(ALL_CFLAGS) -Isrc/cli -c $< -o $@

$(LIB): $(LIB_OBJ)
	@mkdir -p $(dir $@)
	@rm -f $@
	@$(if $(Q),echo "  AR      $@")
	$(Q)ar rcs $@ $^

$(BIN): $(CLI_OBJ) $(LIB)
	@mkdir -p $(BINDIR)
	@$(if $(Q),echo "  LINK    $@")
	$(Q)$(CC) $(ALL_CFLAGS) $(CLI_OBJ) $(LIB) $(LDLIBS) -o $@

$(BUILD)/tests/%: tests/%.c $(LIB) $(HEADERS)
	@mkdir -p $(dir $@)
	@$(if $(Q),echo "  LINK    $@")
	$(Q)$(CC) $(ALL_CFLAGS) $(TEST_CFLAGS) -Isrc $< $(LIB) $(TEST_LIBS) $(LDLIBS) -o $@

$(BUILD)/src/cli/mpi/main_mpi.o: src/cli/mpi/main_mpi.c $(HEADERS) src/cli/campaign.h | check-pkgs
	@mkdir -p $(dir $@)
	@$(if $(Q),echo "  MPICC   $<")
	$(Q)OMPI_CC=$(CC) $(MPICC) $(ALL_CFLAGS) -c $< -o $@

$(MPI_BIN): $(MPI_CLI_OBJ) $(LIB)
	@mkdir -p $(BINDIR)
	@$(if $(Q),echo "  LINK    $@")
	$(Q)OMPI_CC=$(CC) $(MPICC) $(ALL_CFLAGS) $(MPI_CLI_OBJ) $(LIB) $(LDLIBS) -o $@

mpi: $(MPI_BIN)

deps:
	@bash scripts/install-deps.sh

# The two set-up commands of the README: each installs what is missing first,
# then runs make again so that pkg-config sees the new packages.
demo: deps
	@$(MAKE) --no-print-directory demo-run

# The whole job on the demo survey (configs/demo.ini): out/demo/.
# OpenBLAS picks its kernels by CPU, and kernels round differently in the
# last bit; the w0-wa chains carry such a bit to the second digit of the
# table. One kernel family (AVX2, on every x86-64 of the last decade) makes
# the demo print the README's table on any such machine.
DEMO_BLAS := OPENBLAS_CORETYPE=$${OPENBLAS_CORETYPE:-Haswell}
demo-run: all
	$(DEMO_BLAS) $(BIN) run configs/demo.ini --force

test: deps
	@$(MAKE) --no-print-directory check

tests-built: all $(MPI_BIN) $(TEST_BIN)

python: $(PY_MOD) $(PY_SRC:python/lantern/%=$(PY_DIR)/%)

$(BUILD)/pic/%.o: %.c $(HEADERS) | check-pkgs
	@mkdir -p $(dir $@)
	@$(if $(Q),echo "  CC -fPIC $<")
	$(Q)$(CC) $(ALL_CFLAGS) -fPIC -c $< -o $@

$(PIC_LIB): $(PIC_OBJ)
	@rm -f $@
	@$(if $(Q),echo "  AR      $@")
	$(Q)ar rcs $@ $^

PY_C := $(wildcard python/*.c)
$(PY_MOD): $(PY_C) python/internal.h $(PIC_LIB) $(HEADERS) | check-pkgs
	@mkdir -p $(dir $@)
	@echo "  PY      $@"
	@$(CC) -std=c17 -D_DEFAULT_SOURCE -shared -fPIC -fopenmp -Wall -Wextra -Werror $(CFLAGS) \
	    -Iinclude -I$(PY_INC) -I$(PY_NP_INC) $(PKG_CFLAGS) -o $@ $(PY_C) $(PIC_LIB) $(LDLIBS)

$(PY_DIR)/%.py: python/lantern/%.py
	@mkdir -p $(dir $@)
	@cp $< $@

check: tests-built python
	@bash tests/run.sh

# The sanitizer build lives in build/asan (objects, test programs, bin/),
# so it never mixes with the normal one. Every finding stops the program
# (no recovery), so a finding is a failed test. tests/sanitizers/ holds the
# suppressions for third-party libraries, each with its reason.
SAN_CFLAGS := -O1 -g -fno-omit-frame-pointer -fsanitize=address,undefined -fno-sanitize-recover=all
SAN_ENV := LANTERN_BUILD=build/asan LANTERN_BIN=$(CURDIR)/build/asan/bin/lantern LANTERN_SANITIZE=1 \
	ASAN_OPTIONS=detect_leaks=1:abort_on_error=0:strict_string_checks=1 \
	LSAN_OPTIONS=suppressions=$(CURDIR)/tests/sanitizers/lsan.supp:print_suppressions=0 \
	UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1
# (the Python tests load the plain build's package: Python itself is not
# built with the sanitizers)
asan: deps python
	@$(MAKE) --no-print-directory BUILD=build/asan BINDIR=build/asan/bin CFLAGS="$(SAN_CFLAGS)" tests-built
	@$(SAN_ENV) bash tests/run.sh

# The end-to-end tests with every lantern call under valgrind (memcheck):
# an error or a definite leak in our code makes the call exit 99.
valgrind: all
	@LANTERN_BIN=$(CURDIR)/tests/sanitizers/valgrind-lantern bash tests/run.sh e2e

# libFuzzer targets (clang), one per reader and parser: tests/fuzz/. The
# library is compiled once with clang and the sanitizers (build/fuzz/obj),
# each target links it with -fsanitize=fuzzer.
FUZZ_SECONDS ?= 30
FUZZ_SRC := $(wildcard tests/fuzz/fuzz_*.c)
FUZZ_BIN := $(FUZZ_SRC:tests/fuzz/%.c=build/fuzz/%)
FUZZ_OBJ := $(LIB_SRC:%.c=build/fuzz/obj/%.o)
FUZZ_CFLAGS := -std=c17 -D_DEFAULT_SOURCE -fopenmp -O1 -g -fno-omit-frame-pointer \
	-fsanitize=address,undefined -fno-sanitize-recover=all -Iinclude -Isrc $(PKG_CFLAGS)
.SECONDARY: $(FUZZ_OBJ)
build/fuzz/obj/%.o: %.c $(HEADERS) | check-pkgs
	@mkdir -p $(dir $@)
	@$(if $(Q),echo "  CLANG   $<")
	$(Q)clang $(FUZZ_CFLAGS) -fsanitize=fuzzer-no-link -c $< -o $@
build/fuzz/%: tests/fuzz/%.c tests/fuzz/fuzz.h $(FUZZ_OBJ)
	@$(if $(Q),echo "  FUZZ    $@")
	$(Q)clang $(FUZZ_CFLAGS) -fsanitize=fuzzer $< $(FUZZ_OBJ) $(LDLIBS) -o $@
fuzz: deps
	@$(MAKE) --no-print-directory $(FUZZ_BIN)
	@FUZZ_SECONDS=$(FUZZ_SECONDS) bash tests/fuzz/run.sh $(FUZZ_BIN)

# The longer checks: fuzzing 30 s a target, the coverage campaign on all
# 200 realizations of configs/campaign-coverage.ini (CI runs 40), and the
# importance sampler against DRAM chains twenty times longer (ESS 20000;
# make test runs 4000). About an hour.
test-long: test
	@$(MAKE) --no-print-directory fuzz FUZZ_SECONDS=30
	@SAMPLERS_DRAM_ESS=20000 bash tests/e2e/test_samplers.sh | tee build/samplers-long.log; \
	! grep -q '^not ok' build/samplers-long.log
	@COVERAGE_REALIZATIONS=200 bash tests/e2e/test_coverage.sh >build/coverage-long.log 2>&1; \
	cat build/coverage-long.log; \
	grep -q '^ok ' build/coverage-long.log && ! grep -q '^not ok' build/coverage-long.log
	@STD_BIAS_REALIZATIONS=300 bash tests/e2e/test_standardise_bias.sh >build/std-bias-long.log 2>&1; \
	cat build/std-bias-long.log; \
	grep -q '^ok ' build/std-bias-long.log && ! grep -q '^not ok' build/std-bias-long.log

bench: all $(BENCH_BIN)
	@bash scripts/bench.sh

install: all python
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/lib $(DESTDIR)$(PREFIX)/include/lantern
	install -m 755 $(BIN) $(DESTDIR)$(PREFIX)/bin/lantern
	install -m 644 $(LIB) $(DESTDIR)$(PREFIX)/lib/liblantern.a
	install -m 644 include/lantern/*.h $(DESTDIR)$(PREFIX)/include/lantern/
	@# the Python package where Debian's python3 looks for a prefix's packages
	@# (/usr/local/lib/python3.X/dist-packages is on its path)
	install -d $(DESTDIR)$(PY_SITE)/lantern
	install -m 644 $(PY_DIR)/*.py $(PY_MOD) $(DESTDIR)$(PY_SITE)/lantern/

clean:
	rm -rf $(BUILD) bin
