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
LDLIBS   = -lumfpack -lamd -lsuitesparseconfig $(PKG_LIBS) -lm
LDFLAGS += $(SAN)

B = build

MESH_SRC   = mesh/eddy_status.c mesh/mesh_lib.c mesh/mesh_case.c mesh/mesh_grid.c
SOLVER_SRC = solver/sol.c solver/sol_ref.c solver/sol_ref_case.c
POST_SRC   = post/post_forces.c post/post_report.c post/post_img.c post/post_run.c \
             post/post_fields.c post/post_brake.c
LIB_SRC    = $(MESH_SRC) $(SOLVER_SRC) $(POST_SRC)
LIB_OBJ    = $(LIB_SRC:%.c=$(B)/%.o)

TESTS = test_mesh test_solver test_ref test_validation test_post_img test_post_fields test_outputs test_brake
TEST_BIN = $(TESTS:%=$(B)/tests/%)

.PHONY: all test demo deps clean asan valgrind convergence
.SECONDARY:
all: $(B)/eddy2d

$(B)/%.o: %.c $(wildcard */*.h)
	@mkdir -p $(dir $@)
	@echo "  CC  $<"
	@$(CC) $(CPPFLAGS) $(CFLAGS) -c $< -o $@

$(B)/libeddy2d.a: $(LIB_OBJ)
	ar rcs $@ $^

$(B)/eddy2d: $(B)/post/cli.o $(B)/libeddy2d.a
	$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

$(B)/tests/%: $(B)/tests/%.o $(B)/libeddy2d.a
	$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

# Every test program prints PASS/FAIL lines; tests/run.sh adds them up and
# ends with "N passed, N failed".
test: $(B)/eddy2d $(TEST_BIN)
	@sh tests/run.sh $(B) $(TESTS) test_cli.sh

# Installs the Debian packages listed in .ci/debian-packages (needs root).
deps:
	apt-get install -y $$(grep -v '^#' .ci/debian-packages)

demo: $(B)/eddy2d
	$(B)/eddy2d solve cases/sled_fin.json -o results/sled_fin

# Unknowns vs error against the layered reference, graded and uniform grids.
convergence: $(B)/tests/conv_table
	@$(B)/tests/conv_table

# Sanitizer and valgrind runs of the whole test suite.
asan:
	$(MAKE) B=build/asan SAN="-fsanitize=address,undefined -fno-omit-frame-pointer" OPT="-O1 -g" test

valgrind: $(B)/eddy2d $(TEST_BIN)
	@VALGRIND="valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite --suppressions=tests/valgrind.supp" \
	  sh tests/run.sh $(B) $(TESTS) test_cli.sh

clean:
	rm -rf build
