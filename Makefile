# sheaf: build, test, demo.  See DEVELOPERS.md.

CC      ?= cc
OPT     ?= -O3
CFLAGS  ?= $(OPT) -g
CFLAGS  += -std=c11 -D_GNU_SOURCE -Wall -Wextra -Iinclude -Isrc -MMD -MP
# GSL is linked without its reference CBLAS (-lgslcblas): OpenBLAS provides
# the cblas_* symbols, so GSL and sheaf's own BLAS calls both use it.
PKGS    := libisal libzstd libxxhash openblas lapacke
LDLIBS  := -lgsl $(shell pkg-config --libs $(PKGS) 2>/dev/null || echo -lisal -lzstd -lxxhash -lopenblas -llapacke) -lz -lm -lpthread

# Debian packages sheaf needs to build, test, bench and demo.
DEB_PKGS := build-essential pkg-config libisal-dev isal zlib1g-dev libzstd-dev zstd \
            libxxhash-dev libcriterion-dev libgsl-dev libopenblas-dev liblapacke-dev \
            python3-numpy python3-scipy python3-pandas python3-statsmodels parallel \
            hyperfine time bc clang

LIB_SRC := $(wildcard src/io/*.c src/acc/*.c src/summary/*.c src/stats/*.c src/out/*.c src/pass/*.c)
CLI_SRC := $(wildcard src/cli/*.c)
LIB_OBJ := $(LIB_SRC:%.c=build/%.o)
CLI_OBJ := $(CLI_SRC:%.c=build/%.o)
TEST_SRC := $(wildcard tests/test_*.c)
TEST_BIN := $(TEST_SRC:tests/%.c=build/tests/%)
DEMO_BIN := build/demo/generate

.PHONY: all deps deps-check test demo bench clean fuzz
all: sheaf libsheaf.a

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

$(DEMO_BIN): demo/generate.c
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -O2 -o $@ $< $(LDLIBS)

# Fuzzing (tests/fuzz/, DEVELOPERS.md "Fuzzing"): the library built again with
# clang's libFuzzer, AddressSanitizer and UndefinedBehaviorSanitizer, and a
# replay driver (any compiler, no libFuzzer) for the committed corpus.
FUZZ_CC     ?= clang
FUZZ_FLAGS  := -O1 -g -fno-omit-frame-pointer -fsanitize=address,undefined \
               -fno-sanitize-recover=undefined -std=c11 -D_GNU_SOURCE -Wall -Wextra -Iinclude -Isrc
FUZZ_OBJ    := $(LIB_SRC:%.c=build/fuzz/obj/%.o)
FUZZ_SECONDS ?= 900

build/fuzz/obj/%.o: %.c
	@mkdir -p $(dir $@)
	$(FUZZ_CC) $(FUZZ_FLAGS) -fsanitize=fuzzer-no-link -MMD -MP -c -o $@ $<

build/fuzz/fuzz_scan_split: tests/fuzz/fuzz_scan_split.c $(FUZZ_OBJ)
	$(FUZZ_CC) $(FUZZ_FLAGS) -fsanitize=fuzzer -o $@ $^ $(LDLIBS)

build/fuzz/replay_scan_split: tests/fuzz/fuzz_scan_split.c $(LIB_SRC) $(wildcard src/*/*.h)
	@mkdir -p $(dir $@)
	$(CC) -O1 -g -fsanitize=address,undefined -fno-sanitize-recover=undefined -std=c11 \
	    -D_GNU_SOURCE -Wall -Wextra -Iinclude -Isrc -DFUZZ_REPLAY_MAIN -o $@ \
	    tests/fuzz/fuzz_scan_split.c $(LIB_SRC) $(LDLIBS)

# Long fuzzing: the corpus replay, then FUZZ_SECONDS (default 900) of libFuzzer.
fuzz: deps-check
	@FUZZ_SECONDS=$(FUZZ_SECONDS) bash tests/cli/test_fuzz_bounded.sh

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

test: deps-check
	@$(MAKE) --no-print-directory all $(TEST_BIN) $(DEMO_BIN)
	@tests/run.sh $(TEST_BIN)

demo: deps-check
	@$(MAKE) --no-print-directory all $(DEMO_BIN)
	@demo/run.sh

bench: deps-check
	@$(MAKE) --no-print-directory all $(DEMO_BIN)
	@bench/run.sh

clean:
	rm -rf build sheaf libsheaf.a

-include $(LIB_OBJ:.o=.d) $(CLI_OBJ:.o=.d) $(FUZZ_OBJ:.o=.d)
