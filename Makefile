# loopwise: loop-stability analysis for small-signal networks.
# Targets: all check demo bench install clean.  V=1 shows the commands.

PREFIX ?= /usr/local
DESTDIR ?=
CC ?= cc
PKGS := gsl
DEB_PKGS := build-essential pkg-config libgsl-dev libcmocka-dev python3-numpy python3-scipy \
            gnuplot-nox
PYTHON := /usr/bin/python3

WARN := -Wall -Wextra -Wshadow -Wconversion -Wstrict-prototypes -Wmissing-prototypes \
        -Wno-sign-conversion
CFLAGS ?= -O2 -g
ALL_CFLAGS := -std=c11 -D_POSIX_C_SOURCE=200809L $(WARN) $(CFLAGS) -Iinclude -MMD -MP \
              $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
LDLIBS := $(shell pkg-config --libs $(PKGS) 2>/dev/null) -lm
TEST_LDLIBS := $(shell pkg-config --libs cmocka 2>/dev/null) $(LDLIBS)

ifeq ($(V),1)
Q :=
else
Q := @
endif

LIB_SRC := $(filter-out src/main.c,$(wildcard src/*.c))
LIB_OBJ := $(LIB_SRC:src/%.c=build/%.o)
TEST_SRC := $(wildcard tests/unit/test_*.c)
TEST_BIN := $(TEST_SRC:tests/unit/%.c=build/tests/%)

.PHONY: all check demo bench install clean deps unit golden reference

# The package check runs first; a second make then sees pkg-config's answers.
all: deps
	@$(MAKE) --no-print-directory loopwise

# Installs the Debian packages the build and tests need (as root), or says
# exactly what to run.
deps:
	@sh tools/deps.sh $(DEB_PKGS)

loopwise: build/main.o build/libloopwise.a
	@echo "  LD      $@"
	$(Q)$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

build/libloopwise.a: $(LIB_OBJ)
	$(Q)rm -f $@ && ar rcs $@ $^

build/%.o: src/%.c | build
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) -c -o $@ $<

build/tests/%: tests/unit/%.c build/libloopwise.a | build
	@mkdir -p build/tests
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) -Wno-missing-prototypes -o $@ $< build/libloopwise.a $(TEST_LDLIBS)

build:
	@mkdir -p build

# Every test binary runs even when an earlier one fails; the target fails if any did.
unit: $(TEST_BIN)
	@failed=0; for t in $(TEST_BIN); do echo "  RUN     $$t"; ./$$t || failed=1; done; exit $$failed

golden: loopwise
	@sh tests/golden/run.sh ./loopwise

reference: loopwise
	@$(PYTHON) tests/ref/numpy_ref.py --selftest
	@LOOPWISE=./loopwise $(PYTHON) tests/ref/numpy_ref.py

check: all
	@$(MAKE) --no-print-directory unit golden reference

# The main job on the reference core: its report, the compensation for 60
# degrees, the series resistor over two decades, and the output tap's load.
demo: all
	./loopwise check cases/refcore.loop; test $$? -le 1
	./loopwise size cases/refcore.loop --tune ccomp --pm 60 --density 2fF/um2
	./loopwise sweep cases/refcore.loop --vary rser --from 540 --to 54k --points 13; test $$? -le 1
	./loopwise load cases/refcore.loop --node vref --cload 1p..1n
	./loopwise bode cases/refcore.loop --each -o plots/refcore-bode.png >/dev/null
	./loopwise polemap cases/refcore.loop -o plots/refcore-polemap.png
	./loopwise sweep cases/refcore.loop --vary rser --from 540 --to 54k -o plots/refcore-sweep-rser.png >/dev/null; test $$? -le 1
	./loopwise load cases/refcore.loop --node brb --cload 0.1p..10p -o plots/refcore-load-brb.png >/dev/null; test $$? -le 1
	@echo "plots written to plots/"

install: all
	install -d $(DESTDIR)$(PREFIX)/bin
	install -m 755 loopwise $(DESTDIR)$(PREFIX)/bin/loopwise

clean:
	rm -rf build loopwise

-include $(LIB_OBJ:.o=.d) build/main.d
