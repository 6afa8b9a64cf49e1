# mk/fuzz.mk - libFuzzer harnesses (fuzz/fuzz_*.c), included by the Makefile.
#
#   make fuzz [FUZZ_SECONDS=60] [FUZZ_TARGETS="fuzz_import"]  run each harness
#   make fuzz-ci                                             about 60 s each
#   make fuzz-regress        replay the kept crashers (fuzz/crashers/NAME-*)
#
# clang builds the library sources itself with -fsanitize=fuzzer-no-link
# (gcc objects are never reused). New corpus entries and crash artifacts go
# to fuzz-out/NAME/ (git-ignored); the seeds in fuzz/corpus/NAME/ are read
# only. See docs/performance.md ("Fuzzing").

FUZZ_CC      ?= clang
FUZZ_SECONDS ?= 60
FUZZ_MAX_LEN ?= 16384
FUZZ_SAN     := -fsanitize=address,undefined -fno-sanitize-recover=undefined \
                -fno-omit-frame-pointer
FUZZ_CFLAGS  := -g -O1 -std=c11 $(FUZZ_SAN)
FUZZ_TARGETS ?= $(patsubst fuzz/%.c,%,$(wildcard fuzz/fuzz_*.c))
FUZZ_OBJ     := $(patsubst src/%.c,$(BUILD)/fuzz/obj/%.o,$(wildcard src/*.c))
FUZZ_LIB     := $(BUILD)/fuzz/libfrostfit-fuzz.a

$(BUILD)/fuzz/obj/%.o: src/%.c
	@mkdir -p $(dir $@)
	$(FUZZ_CC) $(CPPFLAGS) $(FUZZ_CFLAGS) -fsanitize=fuzzer-no-link -MMD -MP -c -o $@ $<

# An archive, so a harness links only the stages it calls.
$(FUZZ_LIB): $(FUZZ_OBJ)
	rm -f $@ && $(AR) rcs $@ $^

$(BUILD)/fuzz/fuzz_%: fuzz/fuzz_%.c $(FUZZ_LIB)
	@mkdir -p $(dir $@)
	$(FUZZ_CC) $(CPPFLAGS) $(WARN) $(FUZZ_CFLAGS) -fsanitize=fuzzer -o $@ $< $(FUZZ_LIB) $(PKG_LIBS) $(LDLIBS)

fuzz-build: $(addprefix $(BUILD)/fuzz/,$(FUZZ_TARGETS))

# Runs every harness for FUZZ_SECONDS with its seeds; stops at the first
# finding (the crasher is in fuzz-out/NAME/crash-*).
fuzz: fuzz-build
	@set -e; for t in $(FUZZ_TARGETS); do \
	  mkdir -p fuzz-out/$$t/corpus; \
	  echo "fuzz: $$t for $(FUZZ_SECONDS) s"; \
	  $(BUILD)/fuzz/$$t -max_total_time=$(FUZZ_SECONDS) -max_len=$(FUZZ_MAX_LEN) \
	    -timeout=20 -rss_limit_mb=2048 -print_final_stats=1 \
	    -artifact_prefix=fuzz-out/$$t/ fuzz-out/$$t/corpus fuzz/corpus/$$t; \
	done

fuzz-ci: fuzz-regress
	@$(MAKE) --no-print-directory fuzz FUZZ_SECONDS=60

# Each kept crasher runs once through its harness: a regression test.
fuzz-regress: fuzz-build
	@set -e; for t in $(FUZZ_TARGETS); do \
	  files=$$(ls fuzz/crashers/$$t-* 2>/dev/null || true); \
	  if [ -n "$$files" ]; then \
	    echo "fuzz-regress: $$t: $$(echo $$files | wc -w) kept crashers"; \
	    $(BUILD)/fuzz/$$t $$files; \
	  fi; \
	done

.PHONY: fuzz fuzz-ci fuzz-build fuzz-regress

-include $(FUZZ_OBJ:.o=.d)
