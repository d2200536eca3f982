# shoal: adequacy and coverage analyzer for causal test suites. See LICENSE (GPL-3.0-or-later).

# ---- user variables ---------------------------------------------------------------------------
PREFIX   ?= /usr/local
DESTDIR  ?=
CC       ?= cc
CFLAGS   ?= -O2 -g
# Debian's own interpreter: the python3 first on PATH may not see python3-scipy and friends.
PYTHON   ?= /usr/bin/python3
BUILD    ?= build

# Quiet build: one short line a file; `make V=1` shows every command.
V        ?= 0
ifeq ($(V),1)
Q   =
SAY = @:
else
Q   = @
SAY = @printf '  %-6s %s\n'
endif

# ---- what the build needs ---------------------------------------------------------------------
PKGS      = gsl sqlite3
WARN      = -std=c11 -Wall -Wextra -Wshadow -Wstrict-prototypes -Werror
ALL_CPPFLAGS = -D_POSIX_C_SOURCE=200809L -I. $(CPPFLAGS)
PKG_CFLAGS = $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
PKG_LIBS   = $(shell pkg-config --libs $(PKGS) 2>/dev/null)
ALL_CFLAGS = $(WARN) $(CFLAGS) $(PKG_CFLAGS) -pthread -MMD -MP
LIBS       = $(PKG_LIBS) -lm -pthread

# Debian packages: to build, to plot, and for the reference checks in `make check`.
DEB_BUILD = libgsl-dev libsqlite3-dev pkg-config gnuplot-nox sqlite3
# Keep in step with tests/deps/manifest, which the guard reads before any test runs.
DEB_CHECK = python3-scipy python3-numpy python3-mpmath python3-pandas python3-networkx \
            python3-statsmodels r-cran-pwr valgrind chromium clang libclang-rt-14-dev
# Stops a check with one line per missing dependency and its Debian package.
GUARD     = PYTHON=$(PYTHON) sh tests/deps/guard.sh

LIB_SRC  = $(wildcard coverage/*/*.c) $(wildcard power/*.c)
LIB_OBJ  = $(LIB_SRC:%.c=$(BUILD)/%.o)
TEST_SRC = $(wildcard tests/test_*.c)
TEST_BIN = $(TEST_SRC:tests/%.c=$(BUILD)/tests/%)
# Probes: small programs the Python reference checks drive (not run on their own).
PROBE_SRC = $(wildcard tests/probe_*.c)
PROBE_BIN = $(PROBE_SRC:tests/%.c=$(BUILD)/tests/%)
BENCH_SRC = $(wildcard tests/bench/*.c)
BENCH_BIN = $(BENCH_SRC:tests/bench/%.c=$(BUILD)/bench/%)
FIXTURE_SRC = $(wildcard fixtures/*.c)
FIXTURE_BIN = $(FIXTURE_SRC:fixtures/%.c=$(BUILD)/fixtures/%)
SHOAL    = $(BUILD)/shoal
# Fuzz harnesses (tests/fuzz/): libFuzzer binaries for `make fuzz`, replayers for `make check`.
FUZZ_NAMES  = graph csv plan
FUZZ_COMMON = $(BUILD)/tests/fuzz/fuzz_util.o
REPLAY_BIN  = $(FUZZ_NAMES:%=$(BUILD)/fuzz/replay_%)
FUZZ_BIN    = $(FUZZ_NAMES:%=$(BUILD)/fuzz/fuzz_%)
# Seconds each harness runs under `make fuzz`; Debian's clang brings libFuzzer.
FUZZ_SECONDS ?= 60
FUZZ_CC   ?= clang

.PHONY: all deps deps-check demo check check-arch check-slow check-asan check-valgrind bench install \
        clean fuzz check-faults

all: $(SHOAL) $(FIXTURE_BIN)

# Install what is missing with apt-get when run as root; otherwise print the exact command.
deps:
	@DEB="$(DEB_BUILD)" sh .ci/deps
deps-check:
	@DEB="$(DEB_BUILD) $(DEB_CHECK)" sh .ci/deps

$(BUILD)/%.o: %.c
	@mkdir -p $(dir $@)
	$(SAY) CC $<
	$(Q)$(CC) $(ALL_CPPFLAGS) $(ALL_CFLAGS) -c $< -o $@

$(BUILD)/libshoal.a: $(LIB_OBJ)
	@rm -f $@
	$(SAY) AR $@
	$(Q)ar rcs $@ $(LIB_OBJ)

$(SHOAL): $(BUILD)/shoal.o $(BUILD)/libshoal.a
	$(SAY) LINK $@
	$(Q)$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)

$(BUILD)/tests/%: $(BUILD)/tests/%.o $(BUILD)/libshoal.a
	$(SAY) LINK $@
	$(Q)$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)

$(BUILD)/bench/%: $(BUILD)/tests/bench/%.o $(BUILD)/libshoal.a
	@mkdir -p $(dir $@)
	$(SAY) LINK $@
	$(Q)$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)

$(BUILD)/fuzz/replay_%: $(BUILD)/tests/fuzz/fuzz_%.o $(FUZZ_COMMON) $(BUILD)/tests/fuzz/replay.o \
                      $(BUILD)/libshoal.a
	@mkdir -p $(dir $@)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)

$(BUILD)/fuzz/fuzz_%: $(BUILD)/tests/fuzz/fuzz_%.o $(FUZZ_COMMON) $(BUILD)/libshoal.a
	@mkdir -p $(dir $@)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -fsanitize=fuzzer -o $@ $^ $(LIBS)

$(BUILD)/fixtures/%: $(BUILD)/fixtures/%.o
	$(SAY) LINK $@
	$(Q)$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)

# The main job on the bundled, invented demo campaign.
DEMO_GRAPH   = fixtures/demo/triage.graph
DEMO_CSV     = fixtures/demo/triage-runs.csv
DEMO_ARCHIVE = $(BUILD)/demo/triage.db
# The build stays silent unless it fails (V=1 shows it), so the verdict is what the demo prints.
demo: deps
	@$(MAKE) --no-print-directory all $(if $(filter 1,$(V)),,-s SAY=@:)
	@sh .ci/demo "$(SHOAL)" "$(DEMO_GRAPH)" "$(DEMO_CSV)" "$(DEMO_ARCHIVE)"

check: deps deps-check
	@$(GUARD)
	@$(MAKE) --no-print-directory all $(TEST_BIN) $(PROBE_BIN) $(REPLAY_BIN)
	@SHOAL=$(SHOAL) BUILD=$(BUILD) PYTHON=$(PYTHON) sh tests/run.sh

# The architecture check alone (make check runs it too, as tests/cli_arch.sh).
check-arch:
	@sh tests/arch/check.sh .

check-slow: deps deps-check
	@$(GUARD)
	@$(MAKE) --no-print-directory all $(TEST_BIN) $(PROBE_BIN)
	@SHOAL_SLOW=1 SHOAL=$(SHOAL) BUILD=$(BUILD) PYTHON=$(PYTHON) sh tests/run.sh

# AddressSanitizer and UBSan over the whole suite, in a build directory of its own.
check-asan: deps deps-check
	@$(MAKE) --no-print-directory BUILD=build-asan \
	  CFLAGS="-O1 -g -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all" \
	  LDFLAGS="-fsanitize=address,undefined" check

# The C tests under valgrind (memcheck, leak check, non-zero exit on any error).
check-valgrind: deps deps-check
	@$(GUARD)
	@$(MAKE) --no-print-directory all $(TEST_BIN) $(PROBE_BIN)
	@VALGRIND=1 SHOAL=$(SHOAL) BUILD=$(BUILD) PYTHON=$(PYTHON) sh tests/run.sh

bench: deps deps-check
	@$(GUARD)
	@$(MAKE) --no-print-directory all $(BENCH_BIN)
	@SHOAL=$(SHOAL) BUILD=$(BUILD) PYTHON=$(PYTHON) sh tests/bench/run.sh

# Allocation faults: the library built with malloc, calloc, realloc and strdup renamed to the
# counting allocator of tests/fault/fault_alloc.c (this build only), under ASan and LeakSanitizer;
# every entry point is run with each of its allocations failing in turn.
FAULT_DEFS = -Dmalloc=cov_fault_malloc -Dcalloc=cov_fault_calloc -Drealloc=cov_fault_realloc \
             -Dstrdup=cov_fault_strdup
$(BUILD)/fault/fault_run: $(BUILD)/tests/fault/fault_run.o $(BUILD)/tests/fault/fault_alloc.o \
                          $(BUILD)/libshoal.a
	@mkdir -p $(dir $@)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $^ $(LIBS)
check-faults: deps
	@$(MAKE) --no-print-directory BUILD=build-fault CPPFLAGS="$(FAULT_DEFS)" \
	  CFLAGS="-O1 -g -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all" \
	  LDFLAGS="-fsanitize=address,undefined" build-fault/fault/fault_run
	@rm -rf build-fault/work && mkdir -p build-fault/work
	@PATH=/nonexistent ASAN_OPTIONS=detect_leaks=1 build-fault/fault/fault_run build-fault/work
	@$(MAKE) --no-print-directory $(SHOAL)
	@SHOAL=$(SHOAL) sh tests/cli_io_faults.sh

# Each libFuzzer harness for FUZZ_SECONDS, seeded from fixtures/, with ASan and UBSan; a crash
# leaves its input in build-fuzz/artifacts/ (copy it to tests/fuzz/regress/NAME/).
fuzz: deps
	@$(MAKE) --no-print-directory BUILD=build-fuzz CC=$(FUZZ_CC) \
	  CFLAGS="-O1 -g -fsanitize=fuzzer-no-link,address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all" \
	  LDFLAGS="-fsanitize=address,undefined" $(FUZZ_NAMES:%=build-fuzz/fuzz/fuzz_%)
	@FUZZ_SECONDS=$(FUZZ_SECONDS) sh tests/fuzz/run.sh build-fuzz $(FUZZ_NAMES)

install: $(SHOAL)
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/share/man/man1
	install -d $(DESTDIR)$(PREFIX)/share/man/man5
	install -m 755 $(SHOAL) $(DESTDIR)$(PREFIX)/bin/shoal
	install -m 644 coverage/shoal.1 $(DESTDIR)$(PREFIX)/share/man/man1/shoal.1
	install -d $(DESTDIR)$(PREFIX)/share/man/man5
	install -m 644 coverage/shoal.graph.5 $(DESTDIR)$(PREFIX)/share/man/man5/shoal.graph.5

clean:
	rm -rf build build-asan build-fuzz build-fault shoal-report

-include $(LIB_OBJ:.o=.d) $(BUILD)/shoal.d $(wildcard $(BUILD)/tests/fuzz/*.d) $(TEST_BIN:%=%.d) $(PROBE_BIN:%=%.d) $(BENCH_SRC:%.c=$(BUILD)/%.d)
