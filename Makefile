# loopwise: loop-stability analysis for small-signal networks.
# Targets: all check demo bench install uninstall clean, and the hardening
# runs fuzz (FUZZ_SECONDS=N) and sanitize.  V=1 shows the commands.

# Where 'make install' puts things (DESTDIR stages them elsewhere).
PREFIX ?= /usr/local
DESTDIR ?=
BINDIR ?= $(PREFIX)/bin
LIBDIR ?= $(PREFIX)/lib
INCLUDEDIR ?= $(PREFIX)/include
DATADIR ?= $(PREFIX)/share
MANDIR ?= $(DATADIR)/man
PKGCONFIGDIR ?= $(LIBDIR)/pkgconfig
# bash-completion's own directory, moved under PREFIX (bash-completion also
# reads PREFIX/share from XDG_DATA_DIRS); its default when it is absent
BASHCOMPDIR ?= $(shell pkg-config --define-variable=prefix=$(PREFIX) --variable=completionsdir \
                 bash-completion 2>/dev/null || echo $(DATADIR)/bash-completion/completions)
CC ?= cc
PKGS := gsl lapacke
OMP := -fopenmp
DEB_PKGS := build-essential pkg-config libgsl-dev liblapacke-dev libopenblas-dev libopenblas-pthread-dev \
            libsuitesparse-dev libcmocka-dev python3-numpy python3-scipy gnuplot-nox groff-base mandoc
# For 'make fuzz' and 'make sanitize' only.
FUZZ_PKGS := clang libclang-rt-14-dev valgrind
PYTHON := /usr/bin/python3

WARN := -Wall -Wextra -Wshadow -Wconversion -Wstrict-prototypes -Wmissing-prototypes \
        -Wno-sign-conversion
CFLAGS ?= -O2 -g
# Hidden visibility: the installed library exports only the entry points of
# loopwise.h (LW_API); see $(BUILD)/dist/libloopwise.a below.
ALL_CFLAGS := -std=c11 -D_POSIX_C_SOURCE=200809L -DHAVE_INLINE $(WARN) $(CFLAGS) $(OMP) -Iinclude -MMD -MP \
              -fvisibility=hidden $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
# BLAS and LAPACK: Debian's OpenBLAS in its OpenMP variant. Sweeps and
# Monte Carlo run their points on OpenMP threads, and inside a parallel
# region this variant runs one BLAS thread per caller; its serial variant is
# built without locking and gave wrong Monte Carlo results on two threads,
# and the pthread variant starts a thread pool of its own in every run
# (measured in the README's speed section).
# The program links OpenBLAS and LAPACKE statically, which fixes the
# variant whatever Debian's alternatives point libblas.so.3 at and keeps
# its start-up as short as with the reference LAPACK (a dynamic OpenBLAS
# adds about 9 ms of symbol relocation to every run); the test programs
# link the same variant dynamically, which links faster. GSL's own CBLAS is
# left out, so GSL's few BLAS calls reach OpenBLAS too.
MULTIARCH := $(shell $(CC) -print-multiarch 2>/dev/null)
OPENBLAS_DIR := /usr/lib/$(MULTIARCH)/openblas-pthread
GSL_LIBS := $(filter-out -lgslcblas,$(shell pkg-config --libs gsl 2>/dev/null))
LAPACK_STATIC := /usr/lib/$(MULTIARCH)/liblapacke.a $(OPENBLAS_DIR)/libopenblas.a -l:libgfortran.so.5
LAPACK_SHARED := -llapacke -L$(OPENBLAS_DIR) -Wl,-rpath,$(OPENBLAS_DIR) -Wl,--no-as-needed \
                 -llapack -lblas -lopenblas -Wl,--as-needed
# SuiteSparse's KLU (netlu.c, the sparse LU of a large network) with the
# orderings it calls (AMD, COLAMD, BTF) and SuiteSparse's configuration
# library; Debian ships no pkg-config file for them. Static like LAPACK in
# the program and the installed library's link line, shared in the tests.
SUITESPARSE_LIBS := klu amd colamd btf suitesparseconfig
KLU_STATIC := $(SUITESPARSE_LIBS:%=/usr/lib/$(MULTIARCH)/lib%.a)
KLU_SHARED := $(SUITESPARSE_LIBS:%=-l%)
LDLIBS := $(OMP) $(GSL_LIBS) $(KLU_STATIC) $(LAPACK_STATIC) -lm
SHARED_LDLIBS := $(OMP) $(GSL_LIBS) $(KLU_SHARED) $(LAPACK_SHARED) -lm
TEST_LDLIBS := $(shell pkg-config --libs cmocka 2>/dev/null) $(SHARED_LDLIBS)

# Output directory and binary; 'make sanitize' builds into build/asan.
BUILD ?= build
LW_BIN ?= loopwise

ifeq ($(V),1)
Q :=
else
Q := @
endif

LIB_SRC := $(filter-out src/main.c,$(wildcard src/*.c))
LIB_OBJ := $(LIB_SRC:src/%.c=$(BUILD)/%.o)
TEST_SRC := $(wildcard tests/unit/test_*.c)
TEST_BIN := $(TEST_SRC:tests/unit/%.c=$(BUILD)/tests/%)

.PHONY: all check demo bench install uninstall clean deps ldlibs unit golden golden-scripts golden-finite reference binom bytes fuzz \
        fuzz-run sanitize sanitize-run memcheck man man-lint install-test

VERSION := $(shell sed -n 's/^\#define LOOPWISE_VERSION "\(.*\)"/\1/p' include/loopwise/loopwise.h)
MAN_PAGES := $(BUILD)/man/loopwise.1 $(BUILD)/man/loopwise.5

# The package check runs first; a second make then sees pkg-config's answers.
all: deps
	@$(MAKE) --no-print-directory $(LW_BIN) man $(BUILD)/dist/libloopwise.a

# Installs the Debian packages the build and tests need (as root), or says
# exactly what to run.
deps:
	@sh tools/deps.sh $(DEB_PKGS)

$(LW_BIN): $(BUILD)/main.o $(BUILD)/libloopwise.a
	@echo "  LD      $@"
	$(Q)$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

$(BUILD)/libloopwise.a: $(LIB_OBJ)
	$(Q)rm -f $@ && ar rcs $@ $^

$(BUILD)/%.o: src/%.c | $(BUILD)
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) -c -o $@ $<

$(BUILD)/tests/%: tests/unit/%.c $(BUILD)/libloopwise.a | $(BUILD)
	@mkdir -p $(BUILD)/tests
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) -Wno-missing-prototypes -o $@ $< $(BUILD)/libloopwise.a $(TEST_LDLIBS)

$(BUILD):
	@mkdir -p $(BUILD)

# Every test binary runs even when an earlier one fails; the target fails if any did.
unit: $(TEST_BIN)
	@failed=0; for t in $(TEST_BIN); do echo "  RUN     $$t"; ./$$t || failed=1; done; exit $$failed

# In two halves, so that 'make check' can run them side by side; 'golden'
# runs both.
golden: golden-scripts golden-finite

golden-finite: $(LW_BIN)
	@$(PYTHON) tests/golden/finite.py ./$(LW_BIN)

golden-scripts: $(LW_BIN)
	@sh tests/golden/run.sh ./$(LW_BIN)
	@sh tests/golden/variation.sh ./$(LW_BIN)
	@sh tests/golden/large.sh ./$(LW_BIN)
	@sh tests/golden/rules.sh ./$(LW_BIN)
	@sh tests/golden/bytes.sh ./$(LW_BIN)
	@sh tests/golden/breaknode.sh ./$(LW_BIN)
	@sh tests/golden/across.sh ./$(LW_BIN)
	@sh tests/golden/response.sh ./$(LW_BIN)
	@sh tests/golden/verdicts.sh ./$(LW_BIN)
	@sh tests/golden/help.sh ./$(LW_BIN)
	@sh tests/golden/parts.sh ./$(LW_BIN)

# The reference's numpy runs its BLAS on one thread: its problems are small,
# and the threads of OpenBLAS's pthread variant would spin on the cores the
# loopwise runs under test need (measured: the family took 57 s of CPU with
# them, 12 s without).
REF_ENV := OPENBLAS_NUM_THREADS=1 LOOPWISE=./loopwise

reference: loopwise
	@OPENBLAS_NUM_THREADS=1 $(PYTHON) tests/ref/numpy_ref.py --selftest
	@$(REF_ENV) $(PYTHON) tests/ref/numpy_ref.py
	@$(REF_ENV) $(PYTHON) tests/ref/family.py
	@$(REF_ENV) $(PYTHON) tests/ref/comp_table.py
	@OPENBLAS_NUM_THREADS=1 $(PYTHON) tests/ref/response_ref.py --selftest
	@$(REF_ENV) $(PYTHON) tests/ref/response_ref.py | tail -n 1

# Small drivers print what a library function gives over a whole grid; a
# Python script compares it with an outside reference: the Clopper-Pearson
# bounds with scipy and the definition, the reader's byte rules with
# Python's UTF-8 decoder.
DRIVER_CC = $(Q)mkdir -p $(BUILD)/tests && echo "  CC      $<" && \
            $(CC) $(ALL_CFLAGS) -o $@ $< $(BUILD)/libloopwise.a $(SHARED_LDLIBS)

$(BUILD)/tests/binom_grid: tests/binom/grid.c $(BUILD)/libloopwise.a | $(BUILD)
	$(DRIVER_CC)

$(BUILD)/tests/text_bytes: tests/text/bytes.c $(BUILD)/libloopwise.a | $(BUILD)
	$(DRIVER_CC)

binom: $(BUILD)/tests/binom_grid
	@$(PYTHON) tests/binom/check.py ./$(BUILD)/tests/binom_grid

bytes: $(BUILD)/tests/text_bytes
	@$(PYTHON) tests/text/check.py ./$(BUILD)/tests/text_bytes

# The suites are independent (each works in its own temporary directory):
# they run two at a time, the longest first, each one's output printed whole
# when it ends. OpenMP threads wait passively: a program's second thread
# spinning while the other suite holds the core cost a third of the time.
check: all
	@OMP_WAIT_POLICY=passive $(MAKE) --no-print-directory -j2 --output-sync=target reference golden-scripts binom \
	    golden-finite install-test unit bytes man-lint

# The main job on the reference core: its report, the compensation for 60
# degrees, the series resistor over two decades, and the output tap's load;
# the corners, the compensation for 60 degrees at every corner, and the map
# of compensation against series resistor; the pictures of its loop gain,
# roots, polar plot, sweep, load, map and spread.
# Then the regulator's closed loop: how much supply ripple reaches its output,
# its step response to a load current, where a current disturbs it least, and
# the output capacitor chosen with the margin and its price side by side.
demo: all
	./loopwise check cases/refcore.loop; test $$? -le 1
	./loopwise size cases/refcore.loop --tune ccomp --pm 60 --density 2fF/um2
	./loopwise sweep cases/refcore.loop --vary rser --from 540 --to 54k --points 13; test $$? -le 1
	./loopwise load cases/refcore.loop --node vref --cload 1p..1n
	./loopwise gain cases/refcore.loop --each -o plots/refcore-gain.png >/dev/null
	./loopwise roots cases/refcore.loop -o plots/refcore-roots.png
	./loopwise polar cases/refcore.loop -o plots/refcore-polar.png
	./loopwise sweep cases/refcore.loop --vary rser --from 540 --to 54k -o plots/refcore-sweep-rser.png >/dev/null; test $$? -le 1
	./loopwise load cases/refcore.loop --node brb --cload 0.1p..10p -o plots/refcore-load-brb.png >/dev/null; test $$? -le 1
	./loopwise corners cases/refcore.loop; test $$? -le 1
	./loopwise size cases/refcore.loop --tune ccomp --over corners
	./loopwise sweep cases/refcore.loop --vary ccomp --from 4p --to 64p --vary rser --from 1k --to 16k --points 40 -o plots/refcore-map.png >/dev/null; test $$? -le 1
	./loopwise montecarlo cases/refcore.loop --samples 20000 --seed 1 -o plots/refcore-montecarlo.png
	./loopwise response cases/regulator.loop --to out --points 13 -o plots/regulator-rejection.png
	./loopwise response cases/regulator.loop --to out --inject out --step --points 7 -o plots/regulator-load-step.png
	./loopwise response cases/regulator.loop --to out --inject each
	./loopwise sweep cases/regulator.loop --vary cout --from 0.47u --to 10u --points 7 --to out --inject out
	@echo "plots written to plots/"

# ---- the manual, the library for other programs, install ----------------

# loopwise(1): its OPTIONS and COMMANDS sections written from the option
# table by tools/manpage.c; loopwise(5) as written, with the version.
man: $(MAN_PAGES)

$(BUILD)/tools/manpage: tools/manpage.c $(BUILD)/libloopwise.a
	@mkdir -p $(BUILD)/tools
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) -o $@ $< $(BUILD)/libloopwise.a $(LDLIBS)

$(BUILD)/man/loopwise.1: man/loopwise.1.in $(BUILD)/tools/manpage
	@mkdir -p $(BUILD)/man
	@echo "  MAN     $@"
	$(Q)$(BUILD)/tools/manpage $< >$@.tmp && mv $@.tmp $@

$(BUILD)/man/loopwise.5: man/loopwise.5.in include/loopwise/loopwise.h
	@mkdir -p $(BUILD)/man
	@echo "  MAN     $@"
	$(Q)sed 's/@VERSION@/$(VERSION)/' $< >$@

# Both linters must stay silent: groff's every warning, mandoc's lint at
# the warning level.
man-lint: $(MAN_PAGES)
	@failed=0; for p in $(MAN_PAGES); do \
	    out=$$(groff -ww -z -man -t $$p 2>&1; mandoc -T lint -W warning $$p 2>&1); \
	    if [ -n "$$out" ]; then echo "  MAN LINT FAILED $$p"; echo "$$out"; failed=1; \
	    else echo "  MAN LINT ok     $$p"; fi; \
	done; exit $$failed

# The installed library is one relocatable object with every symbol but the
# LW_API entry points made local (the sources are compiled with hidden
# visibility): a program embedding it may have its own model_new or
# text_read. The tests and the program link build/libloopwise.a as it is.
$(BUILD)/dist/libloopwise.a: $(LIB_OBJ)
	@mkdir -p $(BUILD)/dist
	@echo "  AR      $@"
	$(Q)ld -r -o $(BUILD)/dist/loopwise.o $(LIB_OBJ) && \
	    objcopy --localize-hidden $(BUILD)/dist/loopwise.o && \
	    rm -f $@ && ar rcs $@ $(BUILD)/dist/loopwise.o

# pkg-config: the libraries the build links (LDLIBS: GSL, KLU, LAPACK(E), OpenMP,
# libm), for a program linking the static library. Written by install, for
# the PREFIX and LIBDIR of that install.
# libdir and includedir are written from ${prefix} when they lie under it, so
# that --define-variable=prefix=... (or pkgconf's --define-prefix) finds a
# staged or moved install.
PC_LINES := 'prefix=$(PREFIX)' 'libdir=$(patsubst $(PREFIX)/%,$${prefix}/%,$(LIBDIR))' \
            'includedir=$(patsubst $(PREFIX)/%,$${prefix}/%,$(INCLUDEDIR))' '' \
            'Name: loopwise' \
            'Description: loop gain, margins, sizing and spread of small-signal feedback loops' \
            'Version: $(VERSION)' \
            'Cflags: -I$${includedir}' \
            'Libs: -L$${libdir} -lloopwise $(strip $(LDLIBS))'

# The libraries a program linking build/dist/libloopwise.a needs, for a build
# against the tree without installing (README, "Use from C").
ldlibs:
	@echo '$(LDLIBS)'

# Exactly these files; uninstall removes them and the include directory.
INSTALLED := $(BINDIR)/loopwise $(MANDIR)/man1/loopwise.1 $(MANDIR)/man5/loopwise.5 \
             $(LIBDIR)/libloopwise.a $(INCLUDEDIR)/loopwise/loopwise.h $(PKGCONFIGDIR)/loopwise.pc \
             $(BASHCOMPDIR)/loopwise

install: all
	install -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(MANDIR)/man1 $(DESTDIR)$(MANDIR)/man5 \
	    $(DESTDIR)$(LIBDIR) $(DESTDIR)$(INCLUDEDIR)/loopwise $(DESTDIR)$(PKGCONFIGDIR) \
	    $(DESTDIR)$(BASHCOMPDIR)
	install -m 755 loopwise $(DESTDIR)$(BINDIR)/loopwise
	install -m 644 $(BUILD)/man/loopwise.1 $(DESTDIR)$(MANDIR)/man1/loopwise.1
	install -m 644 $(BUILD)/man/loopwise.5 $(DESTDIR)$(MANDIR)/man5/loopwise.5
	install -m 644 $(BUILD)/dist/libloopwise.a $(DESTDIR)$(LIBDIR)/libloopwise.a
	install -m 644 include/loopwise/loopwise.h $(DESTDIR)$(INCLUDEDIR)/loopwise/loopwise.h
	printf '%s\n' $(PC_LINES) >$(DESTDIR)$(PKGCONFIGDIR)/loopwise.pc
	chmod 644 $(DESTDIR)$(PKGCONFIGDIR)/loopwise.pc
	install -m 644 completion/loopwise.bash $(DESTDIR)$(BASHCOMPDIR)/loopwise

uninstall:
	rm -f $(addprefix $(DESTDIR),$(INSTALLED))
	-rmdir $(DESTDIR)$(INCLUDEDIR)/loopwise 2>/dev/null

# A staged install into a scratch DESTDIR: the file list, the example built
# against it through pkg-config and compared with the program's JSON, and
# an uninstall that leaves nothing behind.
install-test: all
	@sh tests/install/run.sh "$(MAKE)" "$(CC)"

clean:
	rm -rf build loopwise

# ---- hardening: fuzzing, sanitizers, memcheck ------------------------------

# libFuzzer over the argument checks, option parsing and every command that
# draws no picture, on a fuzzed file (tests/fuzz/fuzz_check.c),
# the library built with clang and sanitizers into build/fuzz. New inputs go
# to build/fuzz/corpus, crashes to build/fuzz/crash-*; the committed seeds in
# tests/fuzz/corpus and tests/fuzz/regress are only read. FUZZ_ARGS adds
# libFuzzer options (e.g. -fork=1 -ignore_crashes=1 to go on after a crash).
FUZZ_SECONDS ?= 60
FUZZ_ARGS ?=
SAN_FLAGS := -fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer
FUZZ_CFLAGS := -std=c11 -D_POSIX_C_SOURCE=200809L $(WARN) -O1 -g $(SAN_FLAGS) \
               -fsanitize=fuzzer-no-link -Iinclude -MMD -MP $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
FUZZ_LDLIBS := $(GSL_LIBS) $(KLU_SHARED) $(LAPACK_SHARED) -lm
FUZZ_OBJ := $(LIB_SRC:src/%.c=build/fuzz/%.o)

fuzz: deps
	@sh tools/deps.sh $(FUZZ_PKGS)
	@$(MAKE) --no-print-directory fuzz-run

build/fuzz/%.o: src/%.c
	@mkdir -p build/fuzz
	@echo "  CC      $< (fuzz)"
	$(Q)clang $(FUZZ_CFLAGS) -c -o $@ $<

# The target includes src/main.c itself (its option parser is static).
build/fuzz/fuzz_check: tests/fuzz/fuzz_check.c src/main.c $(FUZZ_OBJ)
	@echo "  LD      $@"
	$(Q)clang $(FUZZ_CFLAGS) -fsanitize=fuzzer -o $@ $< $(FUZZ_OBJ) $(FUZZ_LDLIBS)

fuzz-run: build/fuzz/fuzz_check
	@mkdir -p build/fuzz/corpus
	./build/fuzz/fuzz_check -max_total_time=$(FUZZ_SECONDS) -timeout=25 -max_len=8192 \
	    -dict=tests/fuzz/loop.dict -artifact_prefix=build/fuzz/ -print_final_stats=1 \
	    $(FUZZ_ARGS) build/fuzz/corpus tests/fuzz/corpus $(wildcard tests/fuzz/regress)

# The unit and command-line tests with the binary and tests built under
# AddressSanitizer and UndefinedBehaviorSanitizer (gcc, into build/asan), then
# memcheck. Every sanitizer report goes to build/asan/logs, so one is caught
# even where a test throws stderr away; any report fails the target.
SAN_LOGS := $(CURDIR)/build/asan/logs
SAN_ENV := ASAN_OPTIONS=detect_leaks=1:exitcode=86:log_path=$(SAN_LOGS)/asan \
           UBSAN_OPTIONS=print_stacktrace=1:exitcode=86:log_path=$(SAN_LOGS)/ubsan

sanitize: all
	@sh tools/deps.sh $(FUZZ_PKGS)
	@rm -rf $(SAN_LOGS) && mkdir -p $(SAN_LOGS)
	@$(SAN_ENV) $(MAKE) --no-print-directory BUILD=build/asan LW_BIN=build/asan/loopwise \
	    CC=gcc CFLAGS="-O1 -g $(SAN_FLAGS)" LDFLAGS="$(SAN_FLAGS)" sanitize-run
	@$(MAKE) --no-print-directory memcheck

sanitize-run: $(LW_BIN) $(TEST_BIN)
	@failed=0; $(MAKE) --no-print-directory unit || failed=1; \
	    $(MAKE) --no-print-directory golden || failed=1; \
	    if [ -n "$$(ls $(SAN_LOGS))" ]; then \
	        echo "sanitize: sanitizer reports:"; cat $(SAN_LOGS)/*; failed=1; \
	    else echo "sanitize: no sanitizer reports"; fi; exit $$failed

# valgrind memcheck of the normal binary: check on every case, and the design
# and variation commands and gain on the reference core (no plots), and the roots
# and polar pictures (their layout, paths and sampling; gnuplot itself is not
# traced). Zero errors and zero
# definite or indirect leaks, whatever loopwise's own exit code (0 or 1); the
# OpenMP runtime's thread stacks are only "possibly lost" and not counted.
VG := valgrind -q --error-exitcode=97 --leak-check=full --show-leak-kinds=definite,indirect \
      --errors-for-leak-kinds=definite,indirect --log-file=build/memcheck.log
MC := cases/refcore.loop

memcheck: all
	@pass=0; failed=0; \
	for run in $(foreach c,$(wildcard cases/*.loop),"check $(c)") \
	        "size $(MC) --tune ccomp --pm 60 --density 2fF/um2" \
	        "sweep $(MC) --vary rser --from 540 --to 54k --points 13" \
	        "load $(MC) --node vref --cload 1p..1n" "load $(MC) --node brb --cload 0.1p..10p" \
	        "gain $(MC) --points 50" "corners $(MC)" "montecarlo $(MC) --samples 200 --seed 1" \
	        "roots $(MC) -o build/memcheck.png" "polar $(MC) -o build/memcheck.png" \
	        "corners $(MC) --levels 3" "size $(MC) --tune ccomp --over corners" \
	        "size $(MC) --tune ccomp --over montecarlo --samples 50 --seed 1 --yield 0.8" \
	        "size tests/golden/nulling.loop --tune cc --tune rz" \
	        "sweep $(MC) --vary ccomp --from 2p --to 60p --vary rser --from 1k --to 30k --points 5" \
	        "check tests/ref/nets/10_break_node.loop" \
	        "response cases/regulator.loop --to out --step --points 20" \
	        "response cases/regulator.loop --to out --inject each" \
	        "sweep cases/regulator.loop --vary cout --from 1u --to 4u --points 3 --to out" \
	        "montecarlo $(MC) --samples 200 --seed 1 --samples-out build/memcheck-samples.csv" \
	        "montecarlo $(MC) --merge build/memcheck-samples.csv" "sweep --help"; do \
	    $(VG) ./loopwise $$run >/dev/null 2>&1; rc=$$?; \
	    if [ $$rc -le 1 ] && [ ! -s build/memcheck.log ]; then echo "  MEMCHECK ok      $$run"; \
	        pass=$$((pass + 1)); \
	    else echo "  MEMCHECK FAILED  $$run (exit $$rc)"; cat build/memcheck.log; \
	        failed=$$((failed + 1)); fi; \
	done; echo "memcheck: $$pass passed, $$failed failed"; [ $$failed = 0 ]

# Timings against the numpy/scipy reference; not part of check (bench/run.sh).
bench: all
	@OPENBLAS_DIR=$(OPENBLAS_DIR) sh bench/run.sh

# The benchmark programs link as loopwise does (bench/run.sh builds them).
$(BUILD)/bench/%: bench/%.c $(BUILD)/libloopwise.a
	@mkdir -p $(BUILD)/bench
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) -o $@ $< $(BUILD)/libloopwise.a $(LDLIBS)

-include $(FUZZ_OBJ:.o=.d) build/fuzz/fuzz_check.d
-include $(LIB_OBJ:.o=.d) $(BUILD)/main.d $(TEST_BIN:=.d) $(BUILD)/tests/binom_grid.d $(BUILD)/tests/text_bytes.d
