# sheaf: build, test, demo.  See DEVELOPERS.md.

CC      ?= cc
OBJCOPY ?= objcopy
OPT     ?= -O3
CFLAGS  ?= $(OPT) -g
CFLAGS  += -std=c11 -ffp-contract=off -D_GNU_SOURCE -Wall -Wextra -Iinclude -Isrc -MMD -MP
# GSL is linked without its reference CBLAS (-lgslcblas): OpenBLAS provides
# the cblas_* symbols, so GSL and sheaf's own BLAS calls both use it.
PKGS    := libisal libzstd libxxhash openblas lapacke
LDLIBS  := -lgsl $(shell pkg-config --libs $(PKGS) 2>/dev/null || echo -lisal -lzstd -lxxhash -lopenblas -llapacke) -lz -lm -lpthread

# Debian packages sheaf needs to build, test, bench and demo.
DEB_PKGS := build-essential pkg-config strace libisal-dev isal zlib1g-dev libzstd-dev zstd \
            libxxhash-dev libcriterion-dev libgsl-dev libopenblas-dev liblapacke-dev \
            python3-numpy python3-scipy python3-pandas python3-statsmodels python3-sklearn python3-mpmath parallel \
            hyperfine time bc clang mandoc groff-base slurm-wlm munge openssh-server rsync chromium

NPROC   := $(shell nproc 2>/dev/null || echo 1)
LIB_SRC := $(wildcard src/io/*.c src/acc/*.c src/summary/*.c src/stats/*.c src/out/*.c src/pass/*.c \
                     src/api/*.c)
CLI_SRC := $(wildcard src/cli/*.c)
LIB_OBJ := $(LIB_SRC:%.c=build/%.o)
CLI_OBJ := $(CLI_SRC:%.c=build/%.o)
TEST_SRC := $(wildcard tests/test_*.c)
TEST_BIN := $(TEST_SRC:tests/%.c=build/tests/%)
DEMO_BIN := build/demo/generate

.PHONY: FORCE all deps deps-check test demo bench clean fuzz fuzz-build replay-build \
        sanitize-build check-sanitize check-sanitize-quick trust-run help \
        shared man completion install uninstall
all: sheaf libsheaf.a man completion

libsheaf.a: $(LIB_OBJ)
	@rm -f $@
	$(AR) rcs $@ $^

sheaf: $(CLI_OBJ) libsheaf.a
	$(CC) $(CFLAGS) -o $@ $(CLI_OBJ) libsheaf.a $(LDLIBS)

build/%.o: %.c
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -c -o $@ $<

build/tests/%: tests/%.c libsheaf.a tests/testutil.h
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -Itests -o $@ $< libsheaf.a -lcriterion $(LDLIBS)

# test_api uses the public header alone (include/sheaf.h): built without
# -Isrc, so that a reach into an internal header does not compile.
build/tests/test_api: tests/test_api.c libsheaf.a include/sheaf.h
	@mkdir -p $(dir $@)
	$(CC) $(filter-out -Isrc,$(CFLAGS)) -o $@ $< libsheaf.a -lcriterion $(LDLIBS)
build/tests/test_api_more: tests/test_api_more.c libsheaf.a include/sheaf.h
	@mkdir -p $(dir $@)
	$(CC) $(filter-out -Isrc,$(CFLAGS)) -o $@ $< libsheaf.a -lcriterion $(LDLIBS)

$(DEMO_BIN): demo/generate.c
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -O2 -o $@ $< $(LDLIBS)

# ---- The shared library, the man pages, the completion, install ----
# (DEVELOPERS.md "Installing".)  The version comes from one place,
# SHEAF_VERSION in include/sheaf.h: "0.1" is 0.1.0, the soname carries the
# major number (libsheaf.so.0 -> libsheaf.so.0.1.0).
VERSION    := $(shell sed -n -E 's/^.[[:space:]]*define[[:space:]]+SHEAF_VERSION[[:space:]]+"([0-9.]+)".*/\1/p' include/sheaf.h)
VERSION_W  := $(subst ., ,$(VERSION))
SO_MAJOR   := $(word 1,$(VERSION_W))
SO_VERSION := $(SO_MAJOR).$(or $(word 2,$(VERSION_W)),0).$(or $(word 3,$(VERSION_W)),0)
SONAME     := libsheaf.so.$(SO_MAJOR)
SHARED     := build/lib/libsheaf.so.$(SO_VERSION)
# libsheaf.so is built from position-independent objects of its own
# (build/pic/), with every symbol hidden but those the version script
# src/libsheaf.map exports (sheaf_*).  sheaf itself links libsheaf.a.
PIC_OBJ    := $(LIB_SRC:%.c=build/pic/%.o)

build/pic/%.o: %.c
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -fPIC -fvisibility=hidden -c -o $@ $<

$(SHARED): $(PIC_OBJ) src/libsheaf.map
	@test -n "$(SO_MAJOR)" || { echo 'Makefile: no #define SHEAF_VERSION "X.Y[.Z]" in include/sheaf.h' >&2; exit 1; }
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -shared -Wl,-soname,$(SONAME) -Wl,--version-script=src/libsheaf.map \
	    -Wl,--no-undefined -o $@ $(PIC_OBJ) $(LDLIBS)
	ln -sf $(notdir $@) build/lib/$(SONAME)
	ln -sf $(SONAME) build/lib/libsheaf.so

# The static library a program links (installed as libsheaf.a): the same
# hidden-visibility objects joined into one (ld -r) whose hidden symbols are
# then made local (objcopy --localize-hidden; and --keep-global-symbol for
# the dispatchers of the hot loops' clones, src/io/clones.h, which GCC makes
# global whatever the visibility), so that only sheaf_* is global
# and the internal modules (json_*, table_*, csv_*, ...) cannot clash with a
# program's own names.  The root libsheaf.a keeps them global: sheaf and the
# unit tests reach the internals through it.
STATIC := build/lib/libsheaf.a

$(STATIC): $(PIC_OBJ)
	@mkdir -p $(dir $@)
	$(LD) -r -o build/lib/libsheaf-all.o $(PIC_OBJ)
	$(OBJCOPY) --localize-hidden --wildcard --keep-global-symbol='sheaf_*' build/lib/libsheaf-all.o
	rm -f $@ && $(AR) rcs $@ build/lib/libsheaf-all.o

shared: $(SHARED) $(STATIC)

# Man pages and the bash completion, written by sheaf from the option tables
# that --help prints (src/cli/doc.h), so they cannot drift from it.  The
# commands are those of the COMMANDS table in src/cli/main.c.  The pages
# are dated by SOURCE_DATE_EPOCH, else by the last commit.
CLI_COMMANDS := $(shell sed -n 's/^ *{"\([a-z]*\)", cmd_[a-z_]*,.*/\1/p' src/cli/main.c)
MAN_PAGES    := build/man/sheaf.1 $(CLI_COMMANDS:%=build/man/sheaf-%.1)
COMPLETION   := build/completion/sheaf
DOC_EPOCH     = $(or $(SOURCE_DATE_EPOCH),$(shell git log -1 --format=%ct 2>/dev/null))

build/man/sheaf.1: sheaf
	@mkdir -p $(dir $@)
	SOURCE_DATE_EPOCH=$(DOC_EPOCH) ./sheaf help --roff >$@.tmp && mv $@.tmp $@

build/man/sheaf-%.1: sheaf
	@mkdir -p $(dir $@)
	SOURCE_DATE_EPOCH=$(DOC_EPOCH) ./sheaf help --roff $* >$@.tmp && mv $@.tmp $@

$(COMPLETION): sheaf
	@mkdir -p $(dir $@)
	./sheaf help --completion >$@.tmp && mv $@.tmp $@

man: $(MAN_PAGES)
completion: $(COMPLETION)

# GNU directory variables; DESTDIR is prepended to every one of them.
PREFIX       ?= /usr/local
EXEC_PREFIX  ?= $(PREFIX)
BINDIR       ?= $(EXEC_PREFIX)/bin
LIBDIR       ?= $(EXEC_PREFIX)/lib
INCLUDEDIR   ?= $(PREFIX)/include
DATAROOTDIR  ?= $(PREFIX)/share
MANDIR       ?= $(DATAROOTDIR)/man
MAN1DIR      ?= $(MANDIR)/man1
PKGCONFIGDIR ?= $(LIBDIR)/pkgconfig
BASHCOMPDIR  ?= $(DATAROOTDIR)/bash-completion/completions
INSTALL      ?= install
# sheaf.pc: the libraries with a .pc file on Debian 12 are required
# privately by name; GSL is named by -lgsl because gsl.pc adds -lgslcblas,
# which sheaf does not link (OpenBLAS provides the cblas_* symbols).
PC_REQUIRES  := $(PKGS) zlib
PC_LIBS      := -lgsl -lm -lpthread
# In sheaf.pc, libdir relative to ${exec_prefix} and includedir to ${prefix}
# where they are under them.
PC_LIBDIR     = $(patsubst $(PREFIX)/%,$${prefix}/%,$(patsubst $(EXEC_PREFIX)/%,$${exec_prefix}/%,$(LIBDIR)))
PC_INCLUDEDIR = $(patsubst $(PREFIX)/%,$${prefix}/%,$(INCLUDEDIR))
# Every file install writes (uninstall removes these, and only these).
INSTALLED := $(BINDIR)/sheaf $(LIBDIR)/libsheaf.a $(LIBDIR)/libsheaf.so.$(SO_VERSION) \
             $(LIBDIR)/$(SONAME) $(LIBDIR)/libsheaf.so $(INCLUDEDIR)/sheaf.h \
             $(PKGCONFIGDIR)/sheaf.pc $(MAN_PAGES:build/man/%=$(MAN1DIR)/%) $(BASHCOMPDIR)/sheaf

build/sheaf.pc: sheaf.pc.in FORCE
	@mkdir -p $(dir $@)
	sed -e 's|@PREFIX@|$(PREFIX)|' \
	    -e 's|@EXEC_PREFIX@|$(if $(filter $(PREFIX),$(EXEC_PREFIX)),$${prefix},$(EXEC_PREFIX))|' \
	    -e 's|@LIBDIR@|$(PC_LIBDIR)|' -e 's|@INCLUDEDIR@|$(PC_INCLUDEDIR)|' \
	    -e 's|@VERSION@|$(SO_VERSION)|' -e 's|@REQUIRES_PRIVATE@|$(PC_REQUIRES)|' \
	    -e 's|@LIBS_PRIVATE@|$(PC_LIBS)|' sheaf.pc.in >$@.tmp && mv $@.tmp $@

FORCE:

install: all $(SHARED) $(STATIC) build/sheaf.pc
	$(INSTALL) -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(LIBDIR) $(DESTDIR)$(INCLUDEDIR) \
	    $(DESTDIR)$(PKGCONFIGDIR) $(DESTDIR)$(MAN1DIR) $(DESTDIR)$(BASHCOMPDIR)
	$(INSTALL) -m 755 sheaf $(DESTDIR)$(BINDIR)/sheaf
	$(INSTALL) -m 644 $(STATIC) $(DESTDIR)$(LIBDIR)/libsheaf.a
	$(INSTALL) -m 755 $(SHARED) $(DESTDIR)$(LIBDIR)/libsheaf.so.$(SO_VERSION)
	ln -sf libsheaf.so.$(SO_VERSION) $(DESTDIR)$(LIBDIR)/$(SONAME)
	ln -sf $(SONAME) $(DESTDIR)$(LIBDIR)/libsheaf.so
	$(INSTALL) -m 644 include/sheaf.h $(DESTDIR)$(INCLUDEDIR)/sheaf.h
	$(INSTALL) -m 644 build/sheaf.pc $(DESTDIR)$(PKGCONFIGDIR)/sheaf.pc
	$(INSTALL) -m 644 $(MAN_PAGES) $(DESTDIR)$(MAN1DIR)
	$(INSTALL) -m 644 $(COMPLETION) $(DESTDIR)$(BASHCOMPDIR)/sheaf
	@if [ -z "$(DESTDIR)" ] && [ "$$(id -u)" = 0 ] && command -v ldconfig >/dev/null; then ldconfig; fi

uninstall:
	rm -f $(addprefix $(DESTDIR),$(INSTALLED))

# Sanitizers (DEVELOPERS.md "Tests"): the library, sheaf and the Criterion
# suites built again with AddressSanitizer and UndefinedBehaviorSanitizer
# into build/asan/.  `make check-sanitize` runs the whole suite against
# them; `make test` runs the fast subset ASAN_QUICK_SCRIPTS (and every unit
# suite).  test_summary is left out: it replaces malloc with glibc's
# __libc_malloc to inject failures, and ASan cannot free those blocks.
ASAN_DIR    := build/asan
ASAN_FLAGS  := -O1 -g -fno-omit-frame-pointer -fsanitize=address,undefined \
               -fno-sanitize-recover=undefined
ASAN_CFLAGS := $(ASAN_FLAGS) -std=c11 -ffp-contract=off -D_GNU_SOURCE -Wall -Wextra -Iinclude -Isrc -MMD -MP
ASAN_LIB_OBJ := $(LIB_SRC:%.c=$(ASAN_DIR)/%.o)
ASAN_CLI_OBJ := $(CLI_SRC:%.c=$(ASAN_DIR)/%.o)
ASAN_TEST_BIN := $(filter-out $(ASAN_DIR)/tests/test_summary,$(TEST_SRC:tests/%.c=$(ASAN_DIR)/tests/%))
# The CLI suites of the quick subset: small inputs, about 20 s together
# (test_scan_info.sh, 1.5 minutes even unsanitized, and test_merge_shard.sh,
# over 10 minutes sanitized, run only in check-sanitize).
ASAN_QUICK_SCRIPTS := tests/cli/test_output_modes.sh tests/cli/test_trim.sh
# What the sanitized runs report, and why each option is set:
#   detect_leaks=0     LeakSanitizer finds leaks only in test code (test_csv
#                      leaves csv_record buffers, test_scan its scan_options'
#                      missing spellings, unfreed); with it on, those tests
#                      count as crashed.  sheaf itself reports no leak under
#                      the quick subset: turn it on once those tests free;
#   abort_on_error=1   a report ends the process with SIGABRT, which the
#                      suites count as a failure;
#   halt_on_error / print_stacktrace: stop at the first report, with a stack.
ASAN_ENV := ASAN_OPTIONS=detect_leaks=0:abort_on_error=1:halt_on_error=1 \
            UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1

$(ASAN_DIR)/%.o: %.c
	@mkdir -p $(dir $@)
	$(CC) $(ASAN_CFLAGS) -c -o $@ $<

$(ASAN_DIR)/libsheaf.a: $(ASAN_LIB_OBJ)
	@rm -f $@
	$(AR) rcs $@ $^

$(ASAN_DIR)/sheaf: $(ASAN_CLI_OBJ) $(ASAN_DIR)/libsheaf.a
	$(CC) $(ASAN_CFLAGS) -o $@ $(ASAN_CLI_OBJ) $(ASAN_DIR)/libsheaf.a $(LDLIBS)

$(ASAN_DIR)/tests/%: tests/%.c $(ASAN_DIR)/libsheaf.a tests/testutil.h
	@mkdir -p $(dir $@)
	$(CC) $(ASAN_CFLAGS) -Itests -o $@ $< $(ASAN_DIR)/libsheaf.a -lcriterion $(LDLIBS)

$(ASAN_DIR)/tests/test_api: tests/test_api.c $(ASAN_DIR)/libsheaf.a include/sheaf.h
	@mkdir -p $(dir $@)
	$(CC) $(filter-out -Isrc,$(ASAN_CFLAGS)) -o $@ $< $(ASAN_DIR)/libsheaf.a -lcriterion $(LDLIBS)
$(ASAN_DIR)/tests/test_api_more: tests/test_api_more.c $(ASAN_DIR)/libsheaf.a include/sheaf.h
	@mkdir -p $(dir $@)
	$(CC) $(filter-out -Isrc,$(ASAN_CFLAGS)) -o $@ $< $(ASAN_DIR)/libsheaf.a -lcriterion $(LDLIBS)

sanitize-build: $(ASAN_DIR)/sheaf $(ASAN_DIR)/libsheaf.a $(ASAN_TEST_BIN)

# The whole suite (unit, reference and CLI) against the sanitized build.
check-sanitize: deps-check
	@$(MAKE) --no-print-directory sanitize-build $(DEMO_BIN)
	@$(ASAN_ENV) SHEAF_BIN=$(ASAN_DIR)/sheaf SHEAF_TEST_LOGS=build/test-logs/asan \
	    tests/run.sh $(ASAN_TEST_BIN)

# The part of it that `make test` runs: every unit suite, the quick CLI suites.
ASAN_QUICK_RUN = $(ASAN_ENV) SHEAF_BIN=$(ASAN_DIR)/sheaf SHEAF_TEST_LOGS=build/test-logs/asan \
                 SHEAF_TEST_SCRIPTS="$(ASAN_QUICK_SCRIPTS)" tests/run.sh $(ASAN_TEST_BIN)
check-sanitize-quick: deps-check
	@$(MAKE) --no-print-directory sanitize-build
	@$(ASAN_QUICK_RUN)

# Fuzzing (tests/fuzz/, DEVELOPERS.md "Fuzzing"): every tests/fuzz/fuzz_NAME.c
# is a libFuzzer target, build/fuzz/fuzz_NAME (clang, libFuzzer, ASan and
# UBSan over the library rebuilt with coverage into build/fuzz/obj/), and a
# replay driver, build/fuzz/replay_NAME (-DFUZZ_REPLAY_MAIN, $(CC) with ASan
# and UBSan, no libFuzzer, linked with build/asan/libsheaf.a) for the corpus
# tests/fuzz/corpus/NAME/.
FUZZ_CC     ?= clang
FUZZ_FLAGS  := $(ASAN_FLAGS) -std=c11 -D_GNU_SOURCE -Wall -Wextra -Iinclude -Isrc -MMD -MP
FUZZ_OBJ    := $(LIB_SRC:%.c=build/fuzz/obj/%.o)
FUZZ_NAMES  := $(patsubst tests/fuzz/fuzz_%.c,%,$(wildcard tests/fuzz/fuzz_*.c))
FUZZ_BIN    := $(FUZZ_NAMES:%=build/fuzz/fuzz_%)
REPLAY_BIN  := $(FUZZ_NAMES:%=build/fuzz/replay_%)
# Seconds of `make fuzz` for each harness (so the whole run takes
# FUZZ_SECONDS times the number of harnesses).
FUZZ_SECONDS ?= 900

build/fuzz/obj/%.o: %.c
	@mkdir -p $(dir $@)
	$(FUZZ_CC) $(FUZZ_FLAGS) -fsanitize=fuzzer-no-link -c -o $@ $<

build/fuzz/fuzz_%: tests/fuzz/fuzz_%.c $(FUZZ_OBJ)
	@mkdir -p $(dir $@)
	$(FUZZ_CC) $(FUZZ_FLAGS) -fsanitize=fuzzer -o $@ $< $(FUZZ_OBJ) $(LDLIBS)

build/fuzz/replay_%: tests/fuzz/fuzz_%.c $(ASAN_DIR)/libsheaf.a
	@mkdir -p $(dir $@)
	$(CC) $(ASAN_CFLAGS) -DFUZZ_REPLAY_MAIN -o $@ $< $(ASAN_DIR)/libsheaf.a $(LDLIBS)

fuzz-build: $(FUZZ_BIN)
replay-build: $(REPLAY_BIN)

# Long fuzzing: each harness's corpus replayed, then FUZZ_SECONDS (default
# 900) of libFuzzer per harness with a random seed.  FUZZ_ONLY=NAME... picks
# harnesses.  Exits non-zero when a line says FAIL (build/fuzz-run.log).
fuzz: deps-check
	@mkdir -p build; FUZZ_SECONDS=$(FUZZ_SECONDS) FUZZ_ONLY="$(FUZZ_ONLY)" \
	    bash tests/cli/test_fuzz_bounded.sh | tee build/fuzz-run.log; \
	    ! grep -q '^FAIL' build/fuzz-run.log

# The bad-input run (tests/trust/bad_input_run.sh, docs/trust-run.md): bad
# inputs over every command, damaged summaries, signals, fuzzing and memory
# limits, counted; about 10 minutes plus 5 x FUZZ_SECONDS of fuzzing.  Its
# FUZZ_SECONDS default is 180 (not make fuzz's 900); TRUST_REPORT=FILE also
# writes the table as markdown.  Exits non-zero when a problem was counted.
trust-run: deps-check
	@FUZZ_SECONDS=$(if $(filter file,$(origin FUZZ_SECONDS)),180,$(FUZZ_SECONDS)) \
	    bash tests/trust/bad_input_run.sh $(if $(TRUST_REPORT),--report $(TRUST_REPORT))

# Quick check: dpkg-query over the list; apt-get only when something is missing.
deps-check:
	@missing=$$(for p in $(DEB_PKGS); do dpkg-query -W -f='$${Status}\n' $$p 2>/dev/null | grep -q 'ok installed' || echo $$p; done); \
	if [ -n "$$missing" ]; then $(MAKE) --no-print-directory deps; fi

deps:
	@missing=$$(for p in $(DEB_PKGS); do dpkg-query -W -f='$${Status}\n' $$p 2>/dev/null | grep -q 'ok installed' || echo $$p; done); \
	if [ -z "$$missing" ]; then echo "deps: all Debian packages present"; exit 0; fi; \
	echo "deps: missing:" $$missing; \
	if [ "$$(id -u)" = 0 ]; then \
	  apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends $$missing; \
	else \
	  echo "deps: run as root:  apt-get update && apt-get install -y $$missing"; exit 1; \
	fi

# The suites, then the sanitized quick subset (both always run).
test: deps-check
	@$(MAKE) --no-print-directory -j$(NPROC) all $(TEST_BIN) $(DEMO_BIN) sanitize-build
	@mkdir -p build/test-logs; \
	tests/run.sh $(TEST_BIN) | tee build/test-logs/total-main.txt | sed '$$d'; \
	echo "-- under AddressSanitizer and UndefinedBehaviorSanitizer (build/asan/):"; \
	$(ASAN_QUICK_RUN) | tee build/test-logs/total-asan.txt | sed '$$d'; \
	awk '/^[0-9]+ passed, [0-9]+ failed$$/ { p += $$1; f += $$3; n++ } \
	     END { if (n < 2) f++; printf "%d passed, %d failed\n", p, f; exit f > 0 }' \
	    build/test-logs/total-main.txt build/test-logs/total-asan.txt

demo: deps-check
	@$(MAKE) --no-print-directory all $(DEMO_BIN)
	@demo/run.sh

bench: deps-check
	@$(MAKE) --no-print-directory all $(DEMO_BIN)
	@bench/run.sh

# What the build, the tests and the demo wrote; bench/out (the benchmark
# tables, slow to make) stays: remove it by hand.
clean:
	rm -rf build sheaf libsheaf.a demo/out

help:
	@echo "make targets:"
	@echo "  all (default)          build sheaf, libsheaf.a, the man pages and the bash completion"
	@echo "  deps                   install the Debian packages the build and tests need (root)"
	@echo "  demo                   build, then run the demo scenario (writes demo/out/)"
	@echo "  test                   every suite, then the sanitized quick subset; ends 'N passed, N failed'"
	@echo "  check-sanitize         every suite against the AddressSanitizer/UBSan build"
	@echo "  check-sanitize-quick   the sanitized subset that 'make test' runs"
	@echo "  bench                  the benchmarks (bench/run.sh), results in bench/RESULTS.md"
	@echo "  fuzz                   long libFuzzer runs (FUZZ_SECONDS per harness, FUZZ_ONLY=NAME)"
	@echo "  trust-run              the bad-input run (TRUST_REPORT=FILE writes its table)"
	@echo "  shared                 build build/lib/libsheaf.so (soname $(SONAME)) and build/lib/libsheaf.a, only sheaf_* global"
	@echo "  man                    write the man pages into build/man/ (part of all)"
	@echo "  completion             write the bash completion into build/completion/ (part of all)"
	@echo "  install                install under PREFIX (/usr/local) into DESTDIR: sheaf, libsheaf.a/.so,"
	@echo "                         sheaf.h, sheaf.pc, man pages, bash completion (BINDIR, LIBDIR, ... too)"
	@echo "  uninstall              remove what install wrote (the same PREFIX, DESTDIR)"
	@echo "  clean                  remove build/, sheaf, libsheaf.a and demo/out/ (not bench/out/)"
	@echo "  help                   this list"

-include $(LIB_OBJ:.o=.d) $(CLI_OBJ:.o=.d) $(PIC_OBJ:.o=.d) $(FUZZ_OBJ:.o=.d) $(ASAN_LIB_OBJ:.o=.d) \
         $(ASAN_CLI_OBJ:.o=.d) $(wildcard build/tests/*.d build/fuzz/*.d $(ASAN_DIR)/tests/*.d)
