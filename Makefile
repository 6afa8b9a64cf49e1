# frostfit - build, test, demo and install. See DEVELOPERS.md for the layout.
#
# `make check` and `make demo` first run the deps step, which installs the
# Debian packages we need (as root) or prints the apt-get line to run.  The
# real work then happens in a sub-make, so pkg-config is asked only after
# the packages are there.

PKG_CONFIG ?= pkg-config
CFLAGS     ?= -O2 -g
BUILD      ?= build
PREFIX     ?= /usr/local
DESTDIR    ?=
BINDIR     := $(PREFIX)/bin
SHAREDIR   := $(PREFIX)/share/frostfit
MANDIR     := $(PREFIX)/share/man/man1

WARN := -std=c11 -Wall -Wextra -Wpedantic -Wshadow -Wstrict-prototypes \
        -Wmissing-prototypes -Wwrite-strings -Wformat=2 -Wfloat-equal -Wvla
# Recursive (=) so pkg-config runs when a recipe needs it, after `deps`.
PKG_CFLAGS = $(shell $(PKG_CONFIG) --cflags gsl jansson 2>/dev/null)
PKG_LIBS   = $(shell $(PKG_CONFIG) --libs gsl jansson 2>/dev/null || echo -lgsl -lgslcblas -ljansson)
CRIT_CFLAGS = $(shell $(PKG_CONFIG) --cflags criterion 2>/dev/null)
CRIT_LIBS   = $(shell $(PKG_CONFIG) --libs criterion 2>/dev/null || echo -lcriterion)
CPPFLAGS += -Iinclude -D_POSIX_C_SOURCE=200809L -DFF_SHAREDIR='"$(SHAREDIR)"' $(PKG_CFLAGS)
LDLIBS   := -lcsv -lm -lpthread
ifdef DEVELOPER
WARN    += -Werror
endif
ifdef SANITIZE
CFLAGS  += -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=undefined
LDFLAGS += -fsanitize=address,undefined
endif

LIB_SRC := $(wildcard src/*.c)
CLI_SRC := $(wildcard src/cli/*.c)
LIB_OBJ := $(patsubst src/%.c,$(BUILD)/%.o,$(LIB_SRC))
CLI_OBJ := $(patsubst src/%.c,$(BUILD)/%.o,$(CLI_SRC))
TEST_SRC := $(wildcard tests/*.c)
TEST_OBJ := $(patsubst tests/%.c,$(BUILD)/tests/%.o,$(TEST_SRC))
LIB := $(BUILD)/libfrostfit.a
BIN := $(BUILD)/frostfit

# Debian 12 packages: compiler, libraries, test framework, figures.
DEB_PKGS := gcc make pkg-config libgsl-dev libcsv-dev libcriterion-dev \
            libjansson-dev gnuplot-nox locales clang libclang-rt-14-dev
# Seconds each fuzzer runs inside `make check` (`make fuzz` runs longer).
CHECK_FUZZ_SECONDS ?= 20

.PHONY: all deps check check-only test-unit test-cli demo demo-only \
        check-asan bench bench-accuracy bench-speed fuzz install clean
all: $(BIN) frostfit

frostfit: $(BIN)
	ln -sf $(BIN) $@

$(BIN): $(CLI_OBJ) $(LIB)
	$(CC) $(LDFLAGS) -o $@ $(CLI_OBJ) $(LIB) $(PKG_LIBS) $(LDLIBS)
$(LIB): $(LIB_OBJ)
	rm -f $@ && $(AR) rcs $@ $^
$(BUILD)/%.o: src/%.c
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) $(WARN) $(CFLAGS) -MMD -MP -c -o $@ $<
$(BUILD)/tests/%.o: tests/%.c
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) $(CRIT_CFLAGS) $(WARN) -Wno-missing-prototypes $(CFLAGS) -MMD -MP -c -o $@ $<
$(BUILD)/unit-tests: $(TEST_OBJ) $(LIB)
	$(CC) $(LDFLAGS) -o $@ $(TEST_OBJ) $(LIB) $(CRIT_LIBS) $(PKG_LIBS) $(LDLIBS)

deps:
	@scripts/deps.sh $(DEB_PKGS)

# The README's test command: the suite, then the same suite under
# AddressSanitizer and UBSan (about a minute more on 2 cores), then every
# libFuzzer harness briefly (mk/fuzz.mk).
check: deps
	@$(MAKE) --no-print-directory check-only
	@echo "== the same tests under AddressSanitizer and UndefinedBehaviorSanitizer"
	@$(MAKE) --no-print-directory BUILD=build-asan SANITIZE=1 check-only
	@echo "== kept crashers, then each fuzzer for $(CHECK_FUZZ_SECONDS) s"
	@$(MAKE) --no-print-directory BUILD=build-fuzz fuzz-regress
	@$(MAKE) --no-print-directory BUILD=build-fuzz fuzz-build >/dev/null
	@scripts/fuzz-brief.sh build-fuzz/fuzz $(CHECK_FUZZ_SECONDS)
check-only: test-unit test-cli
test-unit: $(BUILD)/unit-tests
	$(BUILD)/unit-tests --jobs 2
test-cli: $(BIN)
	tests/cli.sh $(BIN)

# The whole suite again under AddressSanitizer and UBSan, in its own folder.
check-asan: deps
	@$(MAKE) --no-print-directory BUILD=build-asan SANITIZE=1 check-only

demo: deps
	@$(MAKE) --no-print-directory demo-only
demo-only: $(BIN)
	scripts/demo.sh $(BIN)

# Benchmarks print figures; tests never assert times. bench/NAME.c links the
# library and becomes $(BUILD)/bench/NAME.
$(BUILD)/bench/%: bench/%.c $(LIB)
	@mkdir -p $(dir $@)
	$(CC) $(CPPFLAGS) $(WARN) -Wno-missing-prototypes $(CFLAGS) $(LDFLAGS) -o $@ $< $(LIB) $(PKG_LIBS) $(LDLIBS)
bench: bench-accuracy bench-speed
bench-accuracy: $(BUILD)/bench/accuracy
	$(BUILD)/bench/accuracy
bench-speed: $(BIN)
	scripts/bench-speed.sh $(BIN)

install: $(BIN)
	install -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(SHAREDIR) $(DESTDIR)$(MANDIR)
	install -m 755 $(BIN) $(DESTDIR)$(BINDIR)/frostfit
	cp -R datasets plots $(DESTDIR)$(SHAREDIR)/
	if [ -f docs/frostfit.1 ]; then install -m 644 docs/frostfit.1 $(DESTDIR)$(MANDIR)/; fi

clean:
	rm -rf build build-* frostfit

# Optional fragments (fuzzing, speed benchmarks) live in mk/.
-include mk/*.mk

-include $(LIB_OBJ:.o=.d) $(CLI_OBJ:.o=.d) $(TEST_OBJ:.o=.d)
