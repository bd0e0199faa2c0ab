# vibrogate -- build, test and install.
#
#   make            build build/vibrogate
#   make demo       install missing Debian packages, run the demo scenario
#   make check      install missing Debian packages, build, run every test
#   make install    PREFIX=/usr/local DESTDIR= (binary and man page)
#   make MPI=1      the cluster build (Open MPI, docs/cluster.md) in build-mpi/
#
# The user's CFLAGS, CPPFLAGS and LDFLAGS are respected; OPENMP=0 builds
# without OpenMP; WERROR=1 (set automatically when CI=true) adds -Werror.

VERSION    := 0.1.0
PREFIX     ?= /usr/local
BINDIR     ?= $(PREFIX)/bin
MANDIR     ?= $(PREFIX)/share/man
DESTDIR    ?=
PKG_CONFIG ?= pkg-config
PYTHON     ?= /usr/bin/python3
OPENMP     ?= 1
MPI        ?= 0
CFLAGS     ?= -O2 -g

ifeq ($(CI),true)
WERROR ?= 1
endif

PKGS      := gsl inih netcdf libpng zlib cairo cairo-pdf cairo-svg pangocairo
WARN      := -Wall -Wextra -Wshadow -Wconversion -Wstrict-prototypes
ifeq ($(WERROR),1)
WARN      += -Werror
endif
# No fused multiply-add contractions: the rate kernel's vector lanes and its
# one-point path must round alike, whatever -march the user's CFLAGS name.
FPFLAGS   := -ffp-contract=off
ifeq ($(OPENMP),1)
OMPFLAGS  := -fopenmp
endif
# The cluster build has a directory of its own, so that its objects (compiled
# with VG_MPI) never mix with the normal build's.
ifeq ($(MPI),1)
PKGS      += ompi-c
MPIFLAGS  := -DVG_MPI
B         := build-mpi
else
B         := build
endif
# The baseline build: the rate kernel's vector lanes compiled for baseline
# x86-64 only (no AVX2 or AVX-512 version chosen at run time), in a directory of its
# own.  tests/scripts/lanes.sh compares its output with the normal build's
# bit for bit; tests/scripts/valgrind.sh memchecks it (valgrind 3.19 does
# not decode every AVX2 instruction GCC emits).
# The AVX2 build (AVX2=1): the lanes' AVX2 and baseline versions only (no
# x86-64-v4 one), so that tests/scripts/lanes.sh can compare the AVX2
# version with the baseline build on a CPU with AVX-512 too.
ifeq ($(BASELINE)$(MPI),10)
LANEFLAGS := -DVG_NO_CLONES
B         := build-base
else ifeq ($(AVX2)$(MPI),10)
LANEFLAGS := -DVG_NO_V4_CLONE
B         := build-avx2
endif
# The sanitizer build (tests/hardening.mk): AddressSanitizer and UBSan,
# halting on the first error, in a directory of its own.  MPI=1 ignores it.
ifeq ($(SANITIZE)$(MPI),10)
SANFLAGS  := -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all
B         := build-asan
endif

# Recursive (=) so that pkg-config runs after the deps step has installed it.
# Library headers as system headers, so our warning flags judge only our code.
PKG_CFLAGS = $(patsubst -I%,-isystem %,$(shell $(PKG_CONFIG) --cflags $(PKGS)))
PKG_LIBS   = $(shell $(PKG_CONFIG) --libs $(PKGS))
ALL_CFLAGS = -std=c17 $(WARN) $(FPFLAGS) $(OMPFLAGS) $(MPIFLAGS) $(SANFLAGS) $(LANEFLAGS) -Iinclude -Isrc $(PKG_CFLAGS) \
             -DVG_VERSION='"$(VERSION)"' -DVG_INIH_VERSION='"$(shell $(PKG_CONFIG) --modversion inih)"' $(CPPFLAGS) $(CFLAGS)
ALL_LIBS   = $(PKG_LIBS) -lm

# V=1 shows the full commands.
ifeq ($(V),1)
Q :=
say = @true
else
Q := @
say = @printf '  %-6s %s\n' $(1) $(2)
endif
SRC       := $(wildcard src/*.c)
LIB_SRC   := $(filter-out src/main.c,$(SRC))
LIB_OBJ   := $(LIB_SRC:src/%.c=$(B)/obj/%.o)
MAIN_OBJ  := $(B)/obj/main.o
TEST_SRC  := $(wildcard tests/test_*.c)
TEST_BIN  := $(TEST_SRC:tests/%.c=$(B)/tests/%)
TOOL_SRC  := $(wildcard tests/tools/*.c)
TOOL_BIN  := $(TOOL_SRC:tests/tools/%.c=$(B)/tests/%)
BENCH_SRC := $(wildcard tests/bench/*.c)
BENCH_BIN := $(BENCH_SRC:tests/bench/%.c=$(B)/bench/%)

.PHONY: all deps demo maps bench check test-run install uninstall clean

all: $(B)/vibrogate

$(B)/obj/%.o: src/%.c $(wildcard include/*.h src/*.h) | $(B)/obj
	$(call say,CC,$<)
	$(Q)$(CC) $(ALL_CFLAGS) -c $< -o $@

$(B)/libvibrogate.a: $(LIB_OBJ)
	$(call say,AR,$@)
	$(Q)$(AR) rcs $@ $^

$(B)/vibrogate: $(MAIN_OBJ) $(B)/libvibrogate.a
	$(call say,LD,$@)
	$(Q)$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $^ $(ALL_LIBS)

$(B)/tests/test_%: tests/test_%.c $(B)/libvibrogate.a | $(B)/tests
	$(call say,LD,$@)
	$(Q)$(CC) $(ALL_CFLAGS) $(shell $(PKG_CONFIG) --cflags cmocka) $(LDFLAGS) -Itests -o $@ $< \
	    $(B)/libvibrogate.a $(shell $(PKG_CONFIG) --libs cmocka) $(ALL_LIBS)

$(B)/tests/%: tests/tools/%.c $(B)/libvibrogate.a | $(B)/tests
	$(call say,LD,$@)
	$(Q)$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $< $(B)/libvibrogate.a $(ALL_LIBS)

$(B)/bench/%: tests/bench/%.c $(wildcard tests/bench/*.h) $(B)/libvibrogate.a | $(B)/bench
	$(call say,LD,$@)
	$(Q)$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $< $(B)/libvibrogate.a $(ALL_LIBS)

$(B)/obj $(B)/tests $(B)/bench:
	mkdir -p $@

deps:
	@sh src/deps.sh

demo: deps
	@$(MAKE) --no-print-directory all
	./$(B)/vibrogate sweep configs/demo.ini --out $(B)/demo
	@echo "demo outputs: $(B)/demo/ (sweep.nc, sweep.csv, map-*.png/.pdf/.svg)"

# The demo's figures in maps/, reproducible (time stamp of the last commit).
maps: deps
	@$(MAKE) --no-print-directory all
	rm -rf $(B)/maps-run
	SOURCE_DATE_EPOCH=$$(git log -1 --format=%ct 2>/dev/null || echo 0) \
	    ./$(B)/vibrogate sweep configs/demo.ini --out $(B)/maps-run --quiet
	cp $(B)/maps-run/map-*.png maps/
	@echo "maps: $$(ls maps/*.png | wc -l) figures in maps/"

bench: deps
	@$(MAKE) --no-print-directory all $(BENCH_BIN) $(B)/tests/rate_dump
	@VG_BUILD=$(B) PYTHON=$(PYTHON) sh tests/bench/bench.sh

check: deps
	@$(MAKE) --no-print-directory test-run

test-run: $(B)/vibrogate $(TEST_BIN) $(TOOL_BIN)
	@PYTHON=$(PYTHON) sh tests/run.sh $(B)

install: $(B)/vibrogate
	install -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(MANDIR)/man1
	install -m 755 $(B)/vibrogate $(DESTDIR)$(BINDIR)/vibrogate
	install -m 644 docs/vibrogate.1 $(DESTDIR)$(MANDIR)/man1/vibrogate.1

uninstall:
	rm -f $(DESTDIR)$(BINDIR)/vibrogate $(DESTDIR)$(MANDIR)/man1/vibrogate.1

clean:
	rm -rf $(B)

include tests/hardening.mk
