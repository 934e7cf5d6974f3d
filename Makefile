# sturdy — build, demo, tests. `make demo` and `make check` install what is missing.
CC      ?= cc
OPT     ?= -O2
# No -DNDEBUG in any build, on purpose: the library's asserts (invariants such as index
# ranges, matching shapes and non-NULL internal arguments; never checks of input, which
# get a status) stay on in the normal, test and sanitizer builds. They sit outside the
# per-row loops of the resampling: a few per rearrangement or replicate at most.
CFLAGS  ?= $(OPT) -g
WARN    := -std=c11 -Wall -Wextra -Wpedantic -Werror -D_POSIX_C_SOURCE=200809L
CLI_CPPFLAGS := $(CPPFLAGS) -Iinclude $(if $(filter 1,$(MPI)),-DSTURDY_MPI=1)
CPPFLAGS += -Iinclude -Isrc
LDLIBS  := -lcsv -lopenblas -lgsl -lm
OMP     := -fopenmp
PREFIX  ?= /usr/local
BINDIR  ?= $(PREFIX)/bin
LIBDIR  ?= $(PREFIX)/lib
INCLUDEDIR ?= $(PREFIX)/include
MANDIR  ?= $(PREFIX)/share/man
PYTHON3 ?= /usr/bin/python3
ifeq ($(MPI),1)
BUILD   ?= build-mpi
else
BUILD   ?= build
endif
# the program is linked in the build folder and copied to ./sturdy by `make`
PROG    := $(BUILD)/sturdy
# The shared library's version is the program's (STURDY_VERSION in common.h), so the two
# cannot disagree; its soname carries the major version only.
VERSION := $(shell sed -n 's/^\#define STURDY_VERSION "\(.*\)"/\1/p' include/sturdy/common.h)
SOMAJOR := $(firstword $(subst ., ,$(VERSION)))
SONAME  := libsturdy.so.$(SOMAJOR)
SHLIB   := $(BUILD)/libsturdy.so.$(VERSION)
# Exported symbols: the functions and data declared in include/sturdy/*.h, listed in the
# version script (tests/xcheck_install.sh checks that the list and the headers agree).
LIBMAP  := $(BUILD)/libsturdy.map

ifeq ($(MPI),1)
CC      := mpicc
CPPFLAGS += -DSTURDY_MPI=1
endif

# The library's stages, lowest first (docs/ARCHITECTURE.md); the CLI is src/cli.
STAGES  := core input model classical resampling checks analysis report
LIB_SRC := $(foreach s,$(STAGES),$(wildcard src/$(s)/*.c))
LIB_HDR := $(foreach s,$(STAGES),$(wildcard src/$(s)/*.h))
CLI_SRC := $(wildcard src/cli/*.c)
LIB_OBJ := $(LIB_SRC:src/%.c=$(BUILD)/lib/%.o)
# the same sources compiled position-independent for the shared library
PIC_OBJ := $(LIB_SRC:src/%.c=$(BUILD)/pic/%.o)
CLI_OBJ := $(CLI_SRC:src/cli/%.c=$(BUILD)/cli/%.o)
TEST_SRC := $(wildcard tests/test_*.c)
TEST_BIN := $(TEST_SRC:tests/%.c=$(BUILD)/tests/%)
# probes: small drivers that the cross-check scripts feed and read
PROBE_SRC := $(wildcard tests/probe_*.c)
TEST_BIN += $(PROBE_SRC:tests/%.c=$(BUILD)/tests/%)

# Debian packages: what the program needs to build and run, and the test oracles.
RUNTIME_PKGS := libcsv-dev libopenblas-dev libgsl-dev
ORACLE_PKGS  := python3-numpy python3-scipy python3-statsmodels r-base-core libpcg-cpp-dev \
                libopenmpi-dev openmpi-bin valgrind g++ mandoc man-db pkg-config \
                chromium tidy clang libomp-dev
MPI_PKGS     := libopenmpi-dev openmpi-bin

.PHONY: all sturdy shared deps deps-test demo check test-bins sanitize install uninstall clean fuzz fuzz-bins \
        bench calibration coverage compare-study

all: sturdy shared

sturdy: $(PROG)
	@cmp -s $(PROG) sturdy || { cp $(PROG) sturdy.tmp && mv -f sturdy.tmp sturdy; }

$(PROG): $(BUILD)/libsturdy.a $(CLI_OBJ)
	$(CC) $(CFLAGS) $(OMP) -o $@ $(CLI_OBJ) $(BUILD)/libsturdy.a $(LDLIBS)

# rebuilt from scratch: `ar r` never drops members of files that were moved or removed
$(BUILD)/libsturdy.a: $(LIB_OBJ)
	@rm -f $@
	ar rcs $@ $^

# libsturdy.so.X.Y.Z with soname libsturdy.so.X, and the two links to it in the build
# folder; --no-undefined makes sure every library it needs is named here.
shared: $(SHLIB)

# The symbols the shared library exports: every function and object the public headers
# declare (both tiers), and nothing else; made from the headers, so it cannot drift.
$(LIBMAP): $(wildcard include/sturdy/*.h)
	@mkdir -p $(dir $@)
	{ echo '{'; echo '  global:'; \
	  printf '#include <sturdy/sturdy.h>\n#include <sturdy/advanced.h>\n' | \
	    $(CC) -E -P -Iinclude -x c - | grep -oE '\bsturdy_[A-Za-z0-9_]+[[:space:]]*[([]' | \
	    grep -oE 'sturdy_[A-Za-z0-9_]+' | sort -u | sed 's/.*/    &;/'; \
	  echo '  local:'; echo '    *;'; echo '};'; } >$@.tmp && mv $@.tmp $@

$(SHLIB): $(PIC_OBJ) $(LIBMAP)
	$(CC) $(CFLAGS) $(OMP) -shared -Wl,-soname,$(SONAME) -Wl,--version-script=$(LIBMAP) \
	  -Wl,--no-undefined -o $@ $(PIC_OBJ) $(LDLIBS)
	ln -sf $(notdir $@) $(BUILD)/$(SONAME)
	ln -sf $(SONAME) $(BUILD)/libsturdy.so

$(BUILD)/lib/%.o: src/%.c $(wildcard include/sturdy/*.h) $(LIB_HDR)
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) $(WARN) $(CFLAGS) $(OMP) -c -o $@ $<

$(BUILD)/pic/%.o: src/%.c $(wildcard include/sturdy/*.h) $(LIB_HDR)
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) $(WARN) $(CFLAGS) $(OMP) -fPIC -c -o $@ $<

# The CLI sees the public headers only (no -Isrc): the build enforces the API boundary.
$(BUILD)/cli/%.o: src/cli/%.c $(wildcard include/sturdy/*.h src/cli/*.h)
	@mkdir -p $(dir $@)
	$(CC) $(CLI_CPPFLAGS) $(WARN) $(CFLAGS) $(OMP) -c -o $@ $<

$(BUILD)/tests/%: tests/%.c tests/check.h $(BUILD)/libsturdy.a
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) -Itests $(WARN) $(CFLAGS) $(OMP) -o $@ $< $(BUILD)/libsturdy.a $(LDLIBS)
# test_sha256 compiles the CLI's SHA-256 into itself
$(BUILD)/tests/test_sha256: src/cli/sha256.c src/cli/cli.h
# test_fisf compiles dist.c into itself (its full bisection is the reference)
$(BUILD)/tests/test_fisf: src/classical/dist.c

# Install missing Debian packages (as root, else through sudo). The package lists
# need one `apt-get update` on a fresh machine.
define install_pkgs
	@missing=""; for p in $(1); do dpkg -s $$p >/dev/null 2>&1 || missing="$$missing $$p"; done; \
	if [ -n "$$missing" ]; then \
	  echo "installing:$$missing"; \
	  if [ "$$(id -u)" = 0 ]; then SUDO=; else SUDO=sudo; fi; \
	  $$SUDO apt-get update -qq && \
	  DEBIAN_FRONTEND=noninteractive $$SUDO apt-get install -y -qq --no-install-recommends $$missing; \
	fi
endef

deps:
	$(call install_pkgs,$(RUNTIME_PKGS) $(if $(filter 1,$(MPI)),$(MPI_PKGS)))

deps-test: deps
	$(call install_pkgs,$(ORACLE_PKGS))

demo: deps
	$(MAKE) sturdy
	./sturdy demo

test-bins: $(TEST_BIN)

check: deps-test
	$(MAKE) sturdy shared test-bins fuzz-bins
	bash tests/run.sh

# ASan + UBSan build of everything, then the same test suite.
sanitize: deps-test
	$(MAKE) BUILD=build-san \
	  OPT="-O1 -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all" \
	  build-san/sturdy shared test-bins
	STURDY_BIN=./build-san/sturdy STURDY_BUILD=build-san STURDY_QUICK=1 \
	  ASAN_OPTIONS=detect_leaks=1 bash tests/run.sh

# Installs from the build folder (building only what it lacks): the program, both
# libraries, the headers, sturdy.pc (written from sturdy.pc.in with these folders; one
# under PREFIX is written as ${prefix}/..., so that pkg-config's --define-variable=prefix=
# moves them all) and the manual page.
pc_dir = $(patsubst $(PREFIX)/%,$${prefix}/%,$(patsubst $(PREFIX),$${prefix},$(1)))

install: $(PROG) $(BUILD)/libsturdy.a $(SHLIB) sturdy.pc.in docs/sturdy.1
	install -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(LIBDIR)/pkgconfig \
	  $(DESTDIR)$(INCLUDEDIR)/sturdy $(DESTDIR)$(MANDIR)/man1
	install -m 755 $(PROG) $(DESTDIR)$(BINDIR)/sturdy
	install -m 644 $(BUILD)/libsturdy.a $(DESTDIR)$(LIBDIR)/
	install -m 755 $(SHLIB) $(DESTDIR)$(LIBDIR)/
	ln -sf $(notdir $(SHLIB)) $(DESTDIR)$(LIBDIR)/$(SONAME)
	ln -sf $(SONAME) $(DESTDIR)$(LIBDIR)/libsturdy.so
	install -m 644 include/sturdy/*.h $(DESTDIR)$(INCLUDEDIR)/sturdy/
	sed -e 's|@PREFIX@|$(PREFIX)|g' -e 's|@LIBDIR@|$(call pc_dir,$(LIBDIR))|g' \
	    -e 's|@INCLUDEDIR@|$(call pc_dir,$(INCLUDEDIR))|g' -e 's|@VERSION@|$(VERSION)|g' \
	    -e 's|@LIBS_PRIVATE@|$(LDLIBS) $(OMP)|g' sturdy.pc.in \
	    > $(DESTDIR)$(LIBDIR)/pkgconfig/sturdy.pc
	chmod 644 $(DESTDIR)$(LIBDIR)/pkgconfig/sturdy.pc
	install -m 644 docs/sturdy.1 $(DESTDIR)$(MANDIR)/man1/sturdy.1

uninstall:
	rm -f $(DESTDIR)$(BINDIR)/sturdy $(DESTDIR)$(LIBDIR)/libsturdy.a \
	  $(DESTDIR)$(LIBDIR)/$(notdir $(SHLIB)) $(DESTDIR)$(LIBDIR)/$(SONAME) \
	  $(DESTDIR)$(LIBDIR)/libsturdy.so $(DESTDIR)$(LIBDIR)/pkgconfig/sturdy.pc \
	  $(DESTDIR)$(MANDIR)/man1/sturdy.1 \
	  $(addprefix $(DESTDIR)$(INCLUDEDIR)/,$(patsubst include/%,%,$(wildcard include/sturdy/*.h)))
	-rmdir $(DESTDIR)$(INCLUDEDIR)/sturdy

# The unequal-variance calibration table with 2000 datasets per design (about 15 minutes
# on 2 cores); `make check` runs it with 400 (table) and 1000 (asserted test).
calibration: deps-test sturdy
	STURDY_CALIB_N=2000 $(PYTHON3) tests/xcheck_unequal_calibration.py

# The whole coverage table of the effect-size intervals (2 designs × 2 cell sizes × 4 error
# laws × 3 effects, STURDY_COVERAGE_N datasets per row, default 1000; about 25 minutes on
# 2 cores at 1000). `make check` runs only the asserted rows.
coverage: deps-test sturdy
	STURDY_COVERAGE_FULL=1 $(PYTHON3) tests/xcheck_coverage.py

# The comparisons' resampling study (tests/xcheck_maxt.py at STURDY_SLOW=1): family-wise
# error of the permutation and bootstrap max-T p over 1000 null datasets, simultaneous
# coverage of the max-|t| bootstrap band over 1000 datasets under the global null and
# with true differences (skewed errors), and all three under unequal and equal spreads
# over 1000 datasets each; about 25 minutes on 2 cores. docs/compare_study.md holds its
# figures.
compare-study: deps-test sturdy
	STURDY_SLOW=1 $(PYTHON3) tests/xcheck_maxt.py

bench: deps-test sturdy
	bash bench/run.sh

clean:
	rm -rf build build-san build-mpi build-fuzz sturdy

# libFuzzer harnesses (tests/fuzz/fuzz_*.c) over the library built with clang's
# coverage, ASan and UBSan in build-fuzz/. `make fuzz` runs each for FUZZ_SECONDS
# (default 600) from its seed corpus (tests/fuzz/corpus/<harness>/), new inputs kept in
# build-fuzz/corpus/; a crash input lands in build-fuzz/ (copy it to
# tests/fuzz/regressions/<harness>/, which tests/xcheck_fuzz.sh replays). `make check`
# runs each for FUZZ_CHECK_SECONDS only (default 20: the suite's time budget is tight).
FUZZ_SECONDS ?= 600
FUZZ_CC    := clang
FUZZ_BUILD := build-fuzz
FUZZ_CFLAGS := -std=c11 -D_POSIX_C_SOURCE=200809L -g -O1 -fno-omit-frame-pointer \
               -fsanitize=address,undefined -fno-sanitize-recover=undefined -fopenmp \
               -Wall -Wextra -Werror
FUZZ_OBJ   := $(LIB_SRC:src/%.c=$(FUZZ_BUILD)/lib/%.o)
FUZZ_SRC   := $(wildcard tests/fuzz/fuzz_*.c)
FUZZ_BIN   := $(FUZZ_SRC:tests/fuzz/%.c=$(FUZZ_BUILD)/%)

$(FUZZ_BUILD)/lib/%.o: src/%.c $(wildcard include/sturdy/*.h) $(LIB_HDR)
	@mkdir -p $(dir $@)
	$(FUZZ_CC) -Iinclude -Isrc $(FUZZ_CFLAGS) -fsanitize=fuzzer-no-link -c -o $@ $<

$(FUZZ_BUILD)/fuzz_%: tests/fuzz/fuzz_%.c $(FUZZ_OBJ)
	$(FUZZ_CC) -Iinclude $(FUZZ_CFLAGS) -fsanitize=fuzzer -o $@ $< $(FUZZ_OBJ) $(LDLIBS)

# kept: as prerequisites of a pattern rule only, make would delete them after each build
.SECONDARY: $(FUZZ_OBJ)

fuzz-bins: $(FUZZ_BIN)

fuzz: deps-test fuzz-bins
	FUZZ_SECONDS=$(FUZZ_SECONDS) FUZZ_BUILD=$(FUZZ_BUILD) bash tests/fuzz/run.sh
