# steamloft Makefile.  Toggles (set on the command line, e.g. `make MPI=1`):
#   OPENMP=1   OpenMP across ensemble members (default on; OPENMP=0 to disable)
#   MPI=0      MPI=1 builds with mpicc for cluster ensembles
#   LTO=1      link-time optimisation of the program (default on; LTO=0 to disable)
#   BUILD=dir  build directory; default build/ (serial) and build-mpi/ (MPI=1),
#              so the two configurations never share objects
#   PREFIX, DESTDIR for `make install` and `make uninstall`
# Targets: all (default), check, demo, bench, sanitize, fuzz, deps, install,
# uninstall, man, clean.
# `all`, `check`, `demo`, `bench` and `sanitize` first install the missing
# Debian packages of their groups (scripts/deps.sh: build and plot; check
# adds test; MPI=1 adds mpi), so each is one command on a fresh machine.  `install` never
# installs packages.

OPENMP  ?= 1
MPI     ?= 0
ifeq ($(MPI),1)
  BUILD ?= build-mpi
else
  BUILD ?= build
endif
PREFIX  ?= /usr/local
VERSION := 0.1.0
DEPGROUPS := build plot$(if $(filter 1,$(MPI)), mpi)

PKGS     = gsl netcdf hdf5 zlib inih
TESTPKGS = check
CC       = cc
ifeq ($(MPI),1)
  CC = mpicc
  CPPFLAGS += -DSL_HAVE_MPI
endif
# -O3 and link-time optimisation: 5-7 % less CPU time per scenario than
# -O2 on the bench ensemble, with byte-identical member files (neither lets the
# compiler reassociate or contract floating-point arithmetic: no -ffast-math,
# and -std=c11 keeps -ffp-contract=off).  The library's objects carry both the
# LTO code and ordinary code (-ffat-lto-objects): the program is linked with
# LTO, the test programs without it (faster to build, same arithmetic).
CFLAGS   ?= -O3 -g
LTO      ?= 1
override CFLAGS +=  -std=c11 -Wall -Wextra -Wpedantic -MMD -MP
ifeq ($(LTO),1)
  override CFLAGS += -flto=auto -ffat-lto-objects
  BIN_LDFLAGS := -flto=auto
endif
CPPFLAGS += -D_GNU_SOURCE -Iinclude -I$(BUILD)/gen -DSL_VERSION=\"$(VERSION)\"
PKG_CFLAGS := $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
PKG_LIBS   := $(shell pkg-config --libs $(PKGS) 2>/dev/null)
CHECK_LIBS := $(shell pkg-config --libs $(TESTPKGS) 2>/dev/null)
override CFLAGS +=  $(PKG_CFLAGS)
LDLIBS   += $(PKG_LIBS) -lm
ifeq ($(OPENMP),1)
  override CFLAGS +=  -fopenmp
  override LDFLAGS +=  -fopenmp
endif

SRC      := $(wildcard src/*.c)
LIBSRC   := $(filter-out src/main.c,$(SRC))
OBJ      := $(LIBSRC:src/%.c=$(BUILD)/obj/%.o)
LIB      := $(BUILD)/libsteamloft.a
BIN      := $(BUILD)/steamloft
TESTSRC  := $(wildcard tests/test_*.c)
TESTBIN  := $(TESTSRC:tests/%.c=$(BUILD)/tests/%)
GITHASH  := $(shell git rev-parse --short=12 HEAD 2>/dev/null || echo unknown)

MAN      := $(BUILD)/steamloft.1
COMPL    := $(BUILD)/steamloft.bash

.PHONY: all build check check-run demo demo-run bench bench-run sanitize fuzz deps \
        ensure-deps ensure-test-deps install uninstall man clean check-symbols check-shape atmospheres FORCE

all: ensure-deps
	@$(MAKE) --no-print-directory build

build: $(BIN) $(TESTBIN) $(MAN) $(COMPL)

ensure-deps:
	@scripts/deps.sh --if-missing $(DEPGROUPS)

ensure-test-deps:
	@scripts/deps.sh --if-missing $(DEPGROUPS) test

# `make deps` installs the build, test and (with MPI=1) mpi groups;
# `scripts/deps.sh mpi cdo fuzz` the optional extras.
deps:
	scripts/deps.sh $(DEPGROUPS) test

# The manual page and the bash completion are generated from the help the
# program itself prints, so they cannot drift from it.
man: $(MAN)

$(MAN): $(BIN) scripts/gen-man.sh
	scripts/gen-man.sh $(BIN) $(VERSION) $(PREFIX) > $@.tmp && mv $@.tmp $@

$(COMPL): $(BIN) scripts/gen-completion.sh
	scripts/gen-completion.sh $(BIN) > $@.tmp && mv $@.tmp $@

# The version header changes only when the git hash does, so a commit does not
# force a full rebuild.
$(BUILD)/gen/sl_gitversion.h: FORCE
	@mkdir -p $(@D)
	@echo '#define SL_GIT_HASH "$(GITHASH)"' > $@.tmp
	@cmp -s $@.tmp $@ && rm -f $@.tmp || mv $@.tmp $@

$(BUILD)/obj/%.o: src/%.c | $(BUILD)/gen/sl_gitversion.h
	@mkdir -p $(@D)
	$(CC) $(CPPFLAGS) $(CFLAGS) -c -o $@ $<

$(BUILD)/obj/cli.o: $(BUILD)/gen/sl_gitversion.h

$(LIB): $(OBJ)
	@rm -f $@
	ar rcs $@ $^

$(BIN): $(BUILD)/obj/main.o $(LIB)
	$(CC) $(CFLAGS) $(LDFLAGS) $(BIN_LDFLAGS) -o $@ $^ $(LDLIBS)

$(BUILD)/tests/%: tests/%.c tests/sl_test.h $(LIB)
	@mkdir -p $(@D)
	$(CC) $(CPPFLAGS) -Itests $(CFLAGS) -fno-lto $(LDFLAGS) -o $@ $< $(LIB) $(LDLIBS) $(CHECK_LIBS)

check: ensure-test-deps
	@$(MAKE) --no-print-directory check-run

check-run: build check-symbols check-shape
	@tests/run-all.sh $(BUILD)

# Lines per command file and the longest functions; fails when a command file
# outgrows "argument parsing and one call" (scripts/code-shape.sh).
check-shape:
	@scripts/code-shape.sh src

# Every exported symbol of the library starts with sl_ (style rule, DEVELOPERS.md).
check-symbols: $(LIB)
	@bad=$$(nm -g --defined-only $(LIB) | awk 'NF==3 && $$2 ~ /^[TDBRC]$$/ {print $$3}' | grep -v -e '^sl_' -e '^__odr_asan[._]' || true); \
	if [ -n "$$bad" ]; then echo "check-symbols: exported without sl_ prefix:"; echo "$$bad"; exit 1; fi; \
	echo "check-symbols: all exported symbols start with sl_"

# (CFLAGS and LDFLAGS given on the command line, as `sanitize` does, keep the
# warnings, -std, pkg-config and OpenMP flags: they are added with override.)

# A benchmark, not a test (not part of `check`): user CPU time per scenario
# (getrusage) against the 0.15 ms target, the stage split by thread CPU
# clock, wall rates on 1 and 2 threads, identical member files for both, and
# peak memory (scripts/bench.sh).
bench: ensure-deps
	@$(MAKE) --no-print-directory bench-run

bench-run: $(BIN)
	@scripts/bench.sh $(BUILD)

# The demo: one invented scenario through every stage, with every output.
DEMO_SCENARIO ?= examples/demo.ini
DEMO_OUT      ?= demo-output

demo: ensure-deps
	@$(MAKE) --no-print-directory demo-run

demo-run: $(BIN)
	@mkdir -p $(DEMO_OUT)
	$(BIN) --force run $(DEMO_SCENARIO) -o $(DEMO_OUT)/demo.nc --csv $(DEMO_OUT)/csv --plot $(DEMO_OUT)/plots
	@echo
	@echo "demo: outputs in $(DEMO_OUT)/:"
	@echo "  demo.nc   CF-1.11 netCDF: try 'ncdump -h $(DEMO_OUT)/demo.nc' (package netcdf-bin)"
	@echo "            or 'cdo sinfon $(DEMO_OUT)/demo.nc' (scripts/deps.sh cdo)"
	@echo "  csv/      profile.csv, background.csv, series.csv, series_layers.csv"
	@echo "  plots/    profile, decay, column, section and sinks plots (SVG, PNG) and the"
	@echo "            editable script steamloft.gp"

# Regenerate the shipped profiles in atmospheres/ (scripts/make-atmospheres.sh).
atmospheres: build
	scripts/make-atmospheres.sh $(BIN) atmospheres

sanitize: ensure-test-deps
	@LSAN_OPTIONS=suppressions=$(CURDIR)/tests/lsan.supp:print_suppressions=0 \
	  $(MAKE) --no-print-directory BUILD=build-sanitize OPENMP=$(OPENMP) LTO=0 \
	  CFLAGS="-O1 -g -fsanitize=address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer" \
	  LDFLAGS="-fsanitize=address,undefined" check-run

# libFuzzer harnesses in tests/fuzz/, one per parser (needs clang and
# libclang-rt-14-dev: scripts/deps.sh fuzz).  Each runs FUZZ_RUNS executions
# or FUZZ_SECONDS seconds, whichever comes first, niced; corpora grow in
# $(BUILD)/fuzz/corpus-NAME, seeds come from examples/, atmospheres/ and
# tests/fuzz/seeds/.  A crash stops the target and leaves crash-* in
# $(BUILD)/fuzz/; make it a test in tests/test_fuzz_regressions.c.
#   make fuzz FUZZ_RUNS=1000000 FUZZ_SECONDS=300
FUZZ_SECONDS ?= 60
FUZZ_RUNS    ?= 1000000
FUZZSRC := $(wildcard tests/fuzz/fuzz_*.c)
FUZZ_CFLAGS = -g -O1 -fsanitize=fuzzer-no-link,address,undefined -D_GNU_SOURCE \
  -DSL_VERSION=\"$(VERSION)\" -Iinclude -Isrc -I$(BUILD)/gen $(PKG_CFLAGS)
fuzz: ensure-deps
	@command -v clang >/dev/null || { echo "fuzz: clang is missing: scripts/deps.sh fuzz"; exit 1; }
	@mkdir -p $(BUILD)/fuzz/obj $(BUILD)/gen
	@echo '#define SL_GIT_HASH "$(GITHASH)"' > $(BUILD)/gen/sl_gitversion.h
	@set -e; for f in $(LIBSRC); do o=$(BUILD)/fuzz/obj/$$(basename $$f .c).o; \
	  [ "$$o" -nt "$$f" ] || nice clang $(FUZZ_CFLAGS) -c $$f -o $$o; done
	@set -e; for f in $(FUZZSRC); do n=$$(basename $$f .c); \
	  echo "fuzz: building $$n"; \
	  nice clang $(FUZZ_CFLAGS) -fsanitize=fuzzer $$f $(BUILD)/fuzz/obj/*.o $(PKG_LIBS) -lm \
	    -o $(BUILD)/fuzz/$$n; \
	done
	@set -e; for f in $(FUZZSRC); do n=$$(basename $$f .c); \
	  mkdir -p $(BUILD)/fuzz/corpus-$$n; \
	  seeds=""; case $$n in fuzz_scenario) seeds=examples ;; fuzz_atmosphere_text) seeds=atmospheres ;; esac; \
	  [ -d tests/fuzz/seeds/$${n#fuzz_} ] && seeds="$$seeds tests/fuzz/seeds/$${n#fuzz_}"; \
	  echo "fuzz: running $$n: $(FUZZ_RUNS) runs or $(FUZZ_SECONDS) s"; \
	  (cd $(BUILD)/fuzz && nice ./$$n -runs=$(FUZZ_RUNS) -max_total_time=$(FUZZ_SECONDS) \
	     -rss_limit_mb=2048 -malloc_limit_mb=1024 -print_final_stats=1 corpus-$$n \
	     $$(for d in $$seeds; do echo $(CURDIR)/$$d; done) 2>&1 | \
	     grep -E '^(Done|stat::number_of_executed_units|==[0-9]+==ERROR|SUMMARY)' || true) ; \
	  ls $(BUILD)/fuzz/crash-* $(BUILD)/fuzz/leak-* $(BUILD)/fuzz/oom-* $(BUILD)/fuzz/timeout-* >/dev/null 2>&1 && \
	    { echo "fuzz: $$n found a failure (see $(BUILD)/fuzz/)"; exit 1; } || true; \
	done

# install never installs Debian packages: it fails with the apt-get line to
# run when a build package is missing.
BINDIR   = $(DESTDIR)$(PREFIX)/bin
DATADIR  = $(DESTDIR)$(PREFIX)/share/steamloft
DOCDIR   = $(DESTDIR)$(PREFIX)/share/doc/steamloft
MANDIR   = $(DESTDIR)$(PREFIX)/share/man/man1
COMPLDIR = $(DESTDIR)$(PREFIX)/share/bash-completion/completions
EXAMPLES := $(wildcard examples/*)
ATMOS    := $(wildcard atmospheres/*)

install:
	@scripts/deps.sh --if-missing --check build$(if $(filter 1,$(MPI)), mpi)
	@$(MAKE) --no-print-directory $(BIN) $(MAN) $(COMPL)
	install -d $(BINDIR) $(DATADIR)/atmospheres $(DATADIR)/examples $(DOCDIR)/examples \
	  $(MANDIR) $(COMPLDIR)
	install -m 755 $(BIN) $(BINDIR)/steamloft
	install -m 644 $(ATMOS) $(DATADIR)/atmospheres/
	install -m 644 $(EXAMPLES) $(DATADIR)/examples/
	install -m 644 README.md LICENSE $(DOCDIR)/
	install -m 644 $(EXAMPLES) $(DOCDIR)/examples/
	scripts/gen-man.sh $(BIN) $(VERSION) $(PREFIX) > $(MAN).install
	install -m 644 $(MAN).install $(MANDIR)/steamloft.1
	install -m 644 $(COMPL) $(COMPLDIR)/steamloft

# Removes exactly what install wrote, then the folders it made if empty.
uninstall:
	rm -f $(BINDIR)/steamloft $(MANDIR)/steamloft.1 $(COMPLDIR)/steamloft
	rm -f $(DOCDIR)/README.md $(DOCDIR)/LICENSE
	rm -f $(ATMOS:atmospheres/%=$(DATADIR)/atmospheres/%) $(EXAMPLES:examples/%=$(DATADIR)/examples/%) \
	  $(EXAMPLES:examples/%=$(DOCDIR)/examples/%)
	-rmdir $(DATADIR)/atmospheres $(DATADIR)/examples $(DATADIR) $(DOCDIR)/examples $(DOCDIR) 2>/dev/null

clean:
	rm -rf build build-sanitize build-*

-include $(OBJ:.o=.d) $(BUILD)/obj/main.d $(TESTBIN:=.d)
