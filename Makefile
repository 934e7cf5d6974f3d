# sturdy — build, demo, tests. `make demo` and `make check` install what is missing.
CC      ?= cc
OPT     ?= -O2
# No -DNDEBUG in any build, on purpose: the library's asserts (invariants such as index
# ranges, matching shapes and non-NULL internal arguments; never checks of input, which
# get a status) stay on in the normal, test and sanitizer builds. They sit outside the
# per-row loops of the resampling: a few per rearrangement or replicate at most.
CFLAGS  ?= $(OPT) -g
WARN    := -std=c11 -Wall -Wextra -Wpedantic -Werror -D_POSIX_C_SOURCE=200809L
CPPFLAGS += -Iinclude -Isrc
LDLIBS  := -lcsv -llapacke -lopenblas -lgsl -lm
OMP     := -fopenmp
PREFIX  ?= /usr/local
PYTHON3 ?= /usr/bin/python3
ifeq ($(MPI),1)
BUILD   ?= build-mpi
else
BUILD   ?= build
endif
# the program is linked in the build folder and copied to ./sturdy by `make`
PROG    := $(BUILD)/sturdy

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
CLI_OBJ := $(CLI_SRC:src/cli/%.c=$(BUILD)/cli/%.o)
TEST_SRC := $(wildcard tests/test_*.c)
TEST_BIN := $(TEST_SRC:tests/%.c=$(BUILD)/tests/%)
# probes: small drivers that the cross-check scripts feed and read
PROBE_SRC := $(wildcard tests/probe_*.c)
TEST_BIN += $(PROBE_SRC:tests/%.c=$(BUILD)/tests/%)

# Debian packages: what the program needs to build and run, and the test oracles.
RUNTIME_PKGS := libcsv-dev liblapacke-dev libopenblas-dev libgsl-dev
ORACLE_PKGS  := python3-numpy python3-scipy python3-statsmodels r-base-core libpcg-cpp-dev \
                libopenmpi-dev openmpi-bin valgrind g++
MPI_PKGS     := libopenmpi-dev openmpi-bin

.PHONY: all sturdy deps deps-test demo check test-bins sanitize install clean bench calibration

all: sturdy

sturdy: $(PROG)
	@cmp -s $(PROG) sturdy || { cp $(PROG) sturdy.tmp && mv -f sturdy.tmp sturdy; }

$(PROG): $(BUILD)/libsturdy.a $(CLI_OBJ)
	$(CC) $(CFLAGS) $(OMP) -o $@ $(CLI_OBJ) $(BUILD)/libsturdy.a $(LDLIBS)

$(BUILD)/libsturdy.a: $(LIB_OBJ)
	ar rcs $@ $^

$(BUILD)/lib/%.o: src/%.c $(wildcard include/sturdy/*.h) $(LIB_HDR)
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) $(WARN) $(CFLAGS) $(OMP) -c -o $@ $<

$(BUILD)/cli/%.o: src/cli/%.c $(wildcard include/sturdy/*.h src/cli/*.h)
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) $(WARN) $(CFLAGS) $(OMP) -c -o $@ $<

$(BUILD)/tests/%: tests/%.c tests/check.h $(BUILD)/libsturdy.a
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) -Itests $(WARN) $(CFLAGS) $(OMP) -o $@ $< $(BUILD)/libsturdy.a $(LDLIBS)

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
	$(MAKE) sturdy test-bins
	bash tests/run.sh

# ASan + UBSan build of everything, then the same test suite.
sanitize: deps-test
	$(MAKE) BUILD=build-san \
	  OPT="-O1 -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all" \
	  build-san/sturdy test-bins
	STURDY_BIN=./build-san/sturdy STURDY_BUILD=build-san STURDY_QUICK=1 \
	  ASAN_OPTIONS=detect_leaks=1 bash tests/run.sh

install: sturdy
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/lib $(DESTDIR)$(PREFIX)/include/sturdy
	install -m 755 sturdy $(DESTDIR)$(PREFIX)/bin/sturdy
	install -m 644 $(BUILD)/libsturdy.a $(DESTDIR)$(PREFIX)/lib/
	install -m 644 include/sturdy/*.h $(DESTDIR)$(PREFIX)/include/sturdy/

# The unequal-variance calibration table with 2000 datasets per design (about 15 minutes
# on 2 cores); `make check` runs it with 400 (table) and 1000 (asserted test).
calibration: deps-test sturdy
	STURDY_CALIB_N=2000 $(PYTHON3) tests/xcheck_unequal_calibration.py

bench: deps-test sturdy
	bash bench/run.sh

clean:
	rm -rf build build-san build-mpi sturdy
