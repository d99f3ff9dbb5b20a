# eddy2d - build, test, demo.  Plain GNU make; build output goes to build/.
CC      ?= gcc
CSTD     = -std=c11
WARN     = -Wall -Wextra -Wshadow -Wstrict-prototypes -Werror
OPT     ?= -O2 -g
PKGS     = libcjson libpng cairo
PKG_CFLAGS := $(shell pkg-config --cflags $(PKGS) 2>/dev/null | sed 's/-I/-isystem /g')
PKG_LIBS   := $(shell pkg-config --libs $(PKGS) 2>/dev/null || echo -lcjson -lpng16 -lcairo)
CPPFLAGS = -D_POSIX_C_SOURCE=200809L -I. -isystem /usr/include/suitesparse $(PKG_CFLAGS)
CFLAGS  += $(CSTD) $(WARN) $(OPT) $(SAN)
LDLIBS   = -lcholmod -lumfpack -lamd -lsuitesparseconfig $(PKG_LIBS) -lm -lpthread
LDFLAGS += $(SAN)

B = build

# One folder per module; every .c file of a folder belongs to its library,
# except the command-line files of app/ (CLI_SRC: main, the batch command and
# its case runner).  Dependencies point one way:
#   mesh -> solver -> post -> app, and design (numbers only) -> app.
CLI_SRC    = app/app_main.c app/app_batch_cli.c app/app_batch_runner.c
LIB_SRC    = $(wildcard mesh/*.c) $(wildcard solver/*.c) $(wildcard post/*.c) \
             $(wildcard design/*.c) $(filter-out $(CLI_SRC),$(wildcard app/*.c))
LIB_OBJ    = $(LIB_SRC:%.c=$(B)/%.o)
CLI_OBJ    = $(CLI_SRC:%.c=$(B)/%.o)

TESTS = test_mesh test_solver test_ref test_validation test_damping test_post_forces test_open test_estimate test_post_img test_post_fields test_outputs test_sweep test_design test_brake test_nonlinear test_batch test_batch_alloc test_fuzz_corpus test_rz test_pass test_pass_motion
TEST_BIN = $(TESTS:%=$(B)/tests/%)

.PHONY: all test demo deps clean asan sanitize fuzz valgrind valgrind-case slurm-test browser-test convergence bench same-outputs
.SECONDARY:
all: $(B)/eddy2d

$(B)/%.o: %.c $(wildcard */*.h)
	@mkdir -p $(dir $@)
	@echo "  CC  $<"
	@$(CC) $(CPPFLAGS) $(CFLAGS) -c $< -o $@

$(B)/libeddy2d.a: $(LIB_OBJ)
	@rm -f $@
	ar rcs $@ $^

$(B)/eddy2d: $(CLI_OBJ) $(B)/libeddy2d.a
	$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

$(B)/tests/%: $(B)/tests/%.o $(B)/libeddy2d.a
	$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

# The allocation-failure test: every malloc, calloc, realloc and free made from
# the project's objects goes through the test's counting wrappers.
$(B)/tests/test_batch_alloc: $(B)/tests/test_batch_alloc.o $(B)/libeddy2d.a
	$(CC) $(LDFLAGS) -Wl,--wrap=malloc,--wrap=calloc,--wrap=realloc,--wrap=free -o $@ $^ $(LDLIBS)

# The fuzz harness with a main() that replays the saved inputs (no clang needed).
$(B)/tests/fuzz_case_replay.o: tests/fuzz_case.c $(wildcard */*.h)
	@mkdir -p $(dir $@)
	@echo "  CC  $< (replay)"
	@$(CC) $(CPPFLAGS) $(CFLAGS) -DEDDY_FUZZ_REPLAY -c $< -o $@

$(B)/tests/test_fuzz_corpus: $(B)/tests/fuzz_case_replay.o $(B)/libeddy2d.a
	$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

# Every test program prints PASS/FAIL lines; tests/run.sh adds them up and
# ends with "N passed, N failed".
test: $(B)/eddy2d $(TEST_BIN)
	@sh tests/run.sh $(B) $(TESTS) test_cli.sh test_batch.sh

# Every output file of the demos and of tests/golden/*.json against the stored
# digests (timings and version removed): the check that a restructuring changed
# no behaviour.  UPDATE=1 stores the new digests instead.
same-outputs: $(B)/eddy2d
	@sh tests/same_outputs.sh $(B) $(B)/same-outputs > $(B)/same-outputs.txt
	@if [ -n "$(UPDATE)" ]; then cp $(B)/same-outputs.txt tests/golden/digests.txt; \
	  echo "stored $$(wc -l < tests/golden/digests.txt) digests in tests/golden/digests.txt"; \
	elif diff tests/golden/digests.txt $(B)/same-outputs.txt; then \
	  echo "same outputs: $$(wc -l < tests/golden/digests.txt) files identical"; \
	else echo "outputs differ from tests/golden/digests.txt (lines above)"; exit 1; fi

# Installs the Debian packages listed in .ci/debian-packages: as root
# directly, as another user through sudo.
SUDO := $(shell [ "$$(id -u)" -eq 0 ] || echo sudo)
deps:
	$(SUDO) apt-get update
	$(SUDO) apt-get install -y $$(grep -v '^#' .ci/debian-packages)

demo: $(B)/eddy2d
	$(B)/eddy2d solve cases/sled_fin.json -o results/sled_fin

# The whole job's speed and memory on a ladder of grids against scipy and the
# BLAS's dgemm rate (not part of make test).
# tests/bench.c runs tests/bench_scipy.py (/usr/bin/python3 with Debian's
# python3-scipy) on each exported matrix and prints its figures beside its own.
bench: $(B)/tests/bench $(B)/eddy2d
	@$(B)/tests/bench $(B)/bench

# Unknowns vs error against the layered reference, graded and uniform grids.
convergence: $(B)/tests/conv_table
	@$(B)/tests/conv_table

# Sanitizer and valgrind runs of the whole test suite.  `make sanitize`: every
# test under AddressSanitizer, LeakSanitizer and UBSan (a UBSan report stops
# the program, so it fails its test; an allocation too large for the machine
# returns NULL, as without ASan, so out-of-memory paths are tested as they
# run); `asan` is the same.
sanitize:
	ASAN_OPTIONS=allocator_may_return_null=1 $(MAKE) B=build/asan \
	  SAN="-fsanitize=address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer" \
	  OPT="-O1 -g" test

asan: sanitize

# libFuzzer run of the case reader and the variant expansion (tests/fuzz_case.c)
# for FUZZ_SECONDS; needs clang.  A crash is saved as build/fuzz/crash-*: copy it
# into tests/fuzz_corpus/ so that every `make test` replays it.
FUZZ_SECONDS ?= 60
FUZZ_CC ?= clang
FUZZ_SAN = -fsanitize=address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer
# glibc defines CMPLX only for GCC >= 4.7; clang has the same builtin
FUZZ_CMPLX = $(shell printf '\043include <complex.h>\nCMPLX(1.0, 2.0)\n' | $(FUZZ_CC) -std=c11 -E -x c - 2>/dev/null | \
  grep -q __builtin_complex || echo "'-DCMPLX(x,y)=__builtin_complex((double)(x),(double)(y))'")
fuzz:
	$(MAKE) B=build/fuzz CC=$(FUZZ_CC) SAN="-fsanitize=fuzzer-no-link $(FUZZ_SAN) $(FUZZ_CMPLX)" OPT="-O1 -g" build/fuzz/libeddy2d.a
	$(FUZZ_CC) $(CPPFLAGS) $(CSTD) $(WARN) -O1 -g -fsanitize=fuzzer $(FUZZ_SAN) tests/fuzz_case.c \
	  build/fuzz/libeddy2d.a $(LDLIBS) -o build/fuzz/fuzz_case
	rm -rf build/fuzz/corpus && mkdir -p build/fuzz/corpus
	cp cases/*.json tests/catalogue/*.json build/fuzz/corpus/
	-cp tests/fuzz_corpus/* build/fuzz/corpus/ 2>/dev/null
	build/fuzz/fuzz_case -max_total_time=$(FUZZ_SECONDS) -timeout=20 -rss_limit_mb=2560 \
	  -max_len=65536 -dict=tests/fuzz_case.dict -artifact_prefix=build/fuzz/ build/fuzz/corpus

# Checks that need more than the compiler (CI runs them; each says SKIP when its
# tool is missing): valgrind memcheck on one small case; a job array on a
# one-node Slurm cluster on localhost (root); summary.html in headless chromium.
valgrind-case: $(B)/eddy2d
	@sh .ci/valgrind-case.sh $(B)

slurm-test: $(B)/eddy2d
	@sh .ci/slurm-test.sh $(B)

browser-test: $(B)/eddy2d $(B)/tests/test_batch_pngstat
	@sh .ci/browser-test.sh $(B)

valgrind: $(B)/eddy2d $(TEST_BIN)
	@TEST_TIMEOUT=7200 VALGRIND="valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite --suppressions=tests/valgrind.supp" \
	  sh tests/run.sh $(B) $(TESTS) test_cli.sh test_batch.sh

clean:
	rm -rf build
