# Sanitizers, valgrind and fuzzing; included from the Makefile.
#
#   make sanitize      build everything in build-asan/ with AddressSanitizer
#                      and UndefinedBehaviorSanitizer (make SANITIZE=1, halt on
#                      the first error) and run the whole suite against it
#                      (tests/scripts/sanitize.sh, which runs tests/run.sh)
#   make valgrind      memcheck over end-to-end commands of build/vibrogate
#                      (tests/scripts/valgrind.sh)
#   make fuzz          each libFuzzer harness tests/fuzz/fuzz_*.c for
#                      FUZZ_SECONDS (default 60) in build-fuzz/
#   make fuzz-replay   each harness over its seed corpus and
#                      tests/fuzz/regressions/<harness>/
#   make fuzz-clean    remove build-fuzz/
#
# make check runs all three as script suites: sanitize.sh (the suites
# against build-asan, two at a time, without mpi.sh), valgrind.sh, and
# fuzz.sh (a fixed number of runs from a fixed seed, then the replay).
# Leak suppressions: tests/lsan.supp and tests/valgrind.supp, library frames
# only, each documented there.
#
# The fuzz build is a directory of its own, compiled with clang: the library
# objects with -fsanitize=fuzzer-no-link,address,undefined, the harnesses
# linked with -fsanitize=fuzzer,address,undefined.  It is built without
# OpenMP (the harnesses never reach the sweep) and without -Werror (a clang
# warning that gcc does not give is reported, not fatal).
#
# Harnesses: fuzz_config (the config loader), fuzz_value (the value
# grammar) and fuzz_modes (the mode-table reader, src/modes.c, on arbitrary
# bytes, NUL bytes included, seeded from tests/data/modes/); the rules
# below pick up any tests/fuzz/fuzz_*.c by name.

.PHONY: sanitize sanitize-cc valgrind fuzz fuzz-build fuzz-replay fuzz-clean test-bins

FUZZ_CC      ?= clang
FUZZ_SECONDS ?= 60
FB           := build-fuzz
FUZZ_SAN     := -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all
FUZZ_CFLAGS   = $(filter-out -fopenmp -Werror,$(ALL_CFLAGS)) $(FUZZ_SAN)
FUZZ_NAMES   := $(patsubst tests/fuzz/%.c,%,$(wildcard tests/fuzz/fuzz_*.c))
FUZZ_BIN     := $(FUZZ_NAMES:%=$(FB)/%)
FUZZ_LIB_OBJ := $(LIB_SRC:src/%.c=$(FB)/obj/%.o)
# libFuzzer options common to every run: inputs up to 4 KiB (a config
# line's limit), the keywords of docs/config.md as a dictionary.
FUZZ_OPTS    := -max_len=4096 -timeout=30 -dict=tests/fuzz/config.dict -print_final_stats=1

# Everything tests/run.sh runs against $(B) (with SANITIZE=1: build-asan).
test-bins: $(B)/vibrogate $(TEST_BIN) $(TOOL_BIN)

# The compiler and sanitizer flags of the build, for sanitize.sh's probes.
sanitize-cc:
	@echo $(CC) $(SANFLAGS)

sanitize: deps
	@VG_SANITIZE_SHOW=1 sh tests/scripts/sanitize.sh

valgrind: deps
	@$(MAKE) --no-print-directory all
	@sh tests/scripts/valgrind.sh

$(FB)/obj/%.o: src/%.c $(wildcard include/*.h src/*.h) | $(FB)/obj
	$(call say,CLANG,$<)
	$(Q)$(FUZZ_CC) $(FUZZ_CFLAGS) -fsanitize=fuzzer-no-link -c $< -o $@

$(FB)/libvibrogate.a: $(FUZZ_LIB_OBJ)
	$(call say,AR,$@)
	$(Q)$(AR) rcs $@ $^

$(FB)/fuzz_%: tests/fuzz/fuzz_%.c tests/fuzz/fuzz_check.h $(FB)/libvibrogate.a
	$(call say,LD,$@)
	$(Q)$(FUZZ_CC) $(FUZZ_CFLAGS) -fsanitize=fuzzer -Itests/fuzz $(LDFLAGS) -o $@ $< \
	    $(FB)/libvibrogate.a $(ALL_LIBS)

# Seeds are made afresh from configs/ and tests/bad/ on every build.
$(FB)/seed: $(wildcard configs/*.ini tests/bad/*.ini tests/bad/*.expect) tests/fuzz/seeds.sh
	$(call say,SEEDS,$@)
	$(Q)sh tests/fuzz/seeds.sh $@
	$(Q)touch $@

$(FB)/obj:
	mkdir -p $@

fuzz-build: deps
	@$(MAKE) --no-print-directory $(FUZZ_BIN) $(FB)/seed

# New inputs found go to $(FB)/corpus/<harness>/ (kept between runs), crash
# inputs to $(FB)/crash/<harness>/; a crash stops make with the path of the
# input, which then belongs in tests/fuzz/regressions/<harness>/.
fuzz: fuzz-build
	@for h in $(FUZZ_NAMES); do \
	    mkdir -p $(FB)/corpus/$$h $(FB)/crash/$$h || exit 1; \
	    echo "fuzz: $$h for $(FUZZ_SECONDS) s"; \
	    $(FB)/$$h $(FUZZ_OPTS) -max_total_time=$(FUZZ_SECONDS) \
	        -artifact_prefix=$(FB)/crash/$$h/ $(FB)/corpus/$$h $(FB)/seed/$$h \
	        >$(FB)/$$h.log 2>&1 || { tail -n 60 $(FB)/$$h.log; \
	        echo "fuzz: $$h crashed; input in $(FB)/crash/$$h/ (copy it to tests/fuzz/regressions/$$h/)"; exit 1; }; \
	    grep -E '^stat::number_of_executed_units|^Done|^#[0-9]+.*DONE' $(FB)/$$h.log | sed "s|^|  $$h: |"; \
	done

# Every seed, every input kept by make fuzz and every regression input,
# each run once.
fuzz-replay: fuzz-build
	@for h in $(FUZZ_NAMES); do \
	    files=$$(find $(FB)/seed/$$h $(FB)/corpus/$$h tests/fuzz/regressions/$$h -type f 2>/dev/null); \
	    n=$$(echo "$$files" | grep -c .); \
	    $(FB)/$$h $$files >$(FB)/$$h-replay.log 2>&1 || { tail -n 60 $(FB)/$$h-replay.log; \
	        echo "fuzz-replay: $$h fails on an input (above)"; exit 1; }; \
	    echo "fuzz-replay: $$h ran $$n inputs, no failure"; \
	done

fuzz-clean:
	rm -rf $(FB)
