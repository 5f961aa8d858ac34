# pacemap - build, test, install.  See README.md for the two set-up commands.

# ---- settings ---------------------------------------------------------------
CC       ?= cc
CXX      ?= g++
PREFIX   ?= /usr/local
BUILD    ?= build
OPT      ?= -O2 -g
WERROR   ?=
SAN      ?=
# -Wsign-conversion (implied by -Wconversion in C) is turned off: index
# arithmetic mixes size_t and uint32_t everywhere and the warning would be
# noise; -Wconversion still reports every narrowing.
WARN     = -std=c11 -Wall -Wextra -Wshadow -Wconversion -Wno-sign-conversion \
           -Wmissing-prototypes $(WERROR)
CPPFLAGS += -Iinclude -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE
CFLAGS   += $(OPT) $(WARN) $(SAN) -MMD -MP
CXXFLAGS += -O2 -g -std=c++17 $(SAN)
LDFLAGS  += $(SAN)
LDLIBS   += -lhwloc -lpthread -lm
# Tests also link the outside references they compare against.
TEST_LDLIBS = -lcmocka -lfftw3f -lfftw3
DEBIAN_PACKAGES = build-essential pkg-config libcmocka-dev libhwloc-dev hwloc \
           libboost-graph-dev glpk-utils python3 python3-networkx libfftw3-dev \
           clang libclang-rt-dev graphviz python3-jsonschema groff-base man-db

# The version lives in include/pacemap/version.h only.
VERSION  := $(shell sed -n 's/^\#define PM_VERSION "\(.*\)"/\1/p' include/pacemap/version.h)

# ---- sources ----------------------------------------------------------------
# The library is every folder of sched/ and sim/ but the command line's.
CLI_SRC  := $(wildcard sim/cli/*.c)
LIB_SRC  := $(wildcard sched/*/*.c) $(filter-out $(CLI_SRC),$(wildcard sim/*/*.c))
LIB_OBJ  := $(LIB_SRC:%.c=$(BUILD)/%.o)
CLI_OBJ  := $(CLI_SRC:%.c=$(BUILD)/%.o)
TEST_SRC := $(wildcard tests/test_*.c)
TEST_BIN := $(TEST_SRC:tests/%.c=$(BUILD)/tests/%)
TEST_LIB := $(wildcard tests/support/*.c)
TEST_LIB_OBJ := $(TEST_LIB:%.c=$(BUILD)/%.o)
HELPER_CXX := $(wildcard tests/helpers/*.cpp)
HELPER_C   := $(wildcard tests/helpers/*.c)
HELPER_BIN := $(HELPER_CXX:tests/helpers/%.cpp=$(BUILD)/tests/helpers/%) \
              $(HELPER_C:tests/helpers/%.c=$(BUILD)/tests/helpers/%)
FUZZ_SRC := $(wildcard tests/fuzz/fuzz_*.c)

Q = @
ifeq ($(V),1)
Q =
endif

.SECONDARY: $(TEST_LIB_OBJ)
.PHONY: all test check-tests asan tsan bench deps demo install uninstall clean fuzz

all: $(BUILD)/pacemap $(BUILD)/libpacemap.a

$(BUILD)/%.o: %.c
	@mkdir -p $(dir $@)
	@echo "  CC      $<"
	$(Q)$(CC) $(CPPFLAGS) $(CFLAGS) -c $< -o $@

$(BUILD)/libpacemap.a: $(LIB_OBJ)
	@echo "  AR      $@"
	$(Q)rm -f $@ && ar rcs $@ $^

$(BUILD)/pacemap: $(CLI_OBJ) $(BUILD)/libpacemap.a
	@echo "  LD      $@"
	$(Q)$(CC) $(LDFLAGS) $(CLI_OBJ) $(BUILD)/libpacemap.a $(LDLIBS) -o $@

$(BUILD)/tests/%: tests/%.c $(BUILD)/libpacemap.a $(TEST_LIB_OBJ)
	@mkdir -p $(dir $@)
	@echo "  TEST    $<"
	$(Q)$(CC) $(CPPFLAGS) -Itests $(CFLAGS) $< $(TEST_LIB_OBJ) $(BUILD)/libpacemap.a \
	    $(LDFLAGS) $(TEST_LDLIBS) $(LDLIBS) -o $@

$(BUILD)/tests/helpers/%: tests/helpers/%.cpp
	@mkdir -p $(dir $@)
	@echo "  CXX     $<"
	$(Q)$(CXX) $(CXXFLAGS) $< -o $@

$(BUILD)/tests/helpers/%: tests/helpers/%.c $(BUILD)/libpacemap.a
	@mkdir -p $(dir $@)
	@echo "  CC      $<"
	$(Q)$(CC) $(CPPFLAGS) $(CFLAGS) $< $(BUILD)/libpacemap.a $(LDFLAGS) $(LDLIBS) -o $@

# The whole suite: cmocka binaries, then the outside-reference scripts.
test: all $(TEST_BIN) $(HELPER_BIN)
	$(Q)BUILD=$(BUILD) sh tests/run.sh

# Same suite under AddressSanitizer + UndefinedBehaviorSanitizer.
asan:
	$(Q)$(MAKE) --no-print-directory BUILD=build-asan OPT="-O1 -g" \
	    SAN="-fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all" test

tsan:
	$(Q)$(MAKE) --no-print-directory BUILD=build-tsan OPT="-O1 -g" \
	    SAN="-fsanitize=thread" PM_TEST_FILTER=thread test

bench: all $(HELPER_BIN)
	$(Q)for s in tests/bench/bench_*.sh; do [ -f "$$s" ] || continue; \
	    BUILD=$(BUILD) sh "$$s" || exit 1; done

fuzz:
	$(Q)sh tests/fuzz/run.sh $(or $(FUZZ_SECONDS),30)

# Installs every Debian package the build, the tests and the references use.
deps:
	$(Q)if [ "$$(id -u)" = 0 ]; then SUDO=; else SUDO=sudo; fi; \
	    $$SUDO apt-get update -qq && \
	    DEBIAN_FRONTEND=noninteractive $$SUDO apt-get install -y -qq $(DEBIAN_PACKAGES)

demo: all
	$(Q)sh scenarios/demo.sh $(BUILD)/pacemap

install: all
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/lib \
	    $(DESTDIR)$(PREFIX)/include/pacemap $(DESTDIR)$(PREFIX)/lib/pkgconfig \
	    $(DESTDIR)$(PREFIX)/share/man/man1
	sed 's/@VERSION@/$(VERSION)/' man/pacemap.1 > $(DESTDIR)$(PREFIX)/share/man/man1/pacemap.1
	chmod 644 $(DESTDIR)$(PREFIX)/share/man/man1/pacemap.1
	install -m 755 $(BUILD)/pacemap $(DESTDIR)$(PREFIX)/bin/pacemap
	install -m 644 $(BUILD)/libpacemap.a $(DESTDIR)$(PREFIX)/lib/libpacemap.a
	install -m 644 include/pacemap/*.h $(DESTDIR)$(PREFIX)/include/pacemap/
	printf '%s\n' 'prefix=$(PREFIX)' 'libdir=$${prefix}/lib' 'includedir=$${prefix}/include' '' \
	    'Name: pacemap' \
	    'Description: Iteration bounds, list schedules and self-timed simulation of DSP graphs on multicore' \
	    'Version: $(VERSION)' 'Libs: -L$${libdir} -lpacemap' 'Libs.private: -lhwloc -lpthread -lm' \
	    'Cflags: -I$${includedir}' > $(DESTDIR)$(PREFIX)/lib/pkgconfig/pacemap.pc

uninstall:
	rm -rf $(DESTDIR)$(PREFIX)/bin/pacemap $(DESTDIR)$(PREFIX)/lib/libpacemap.a \
	    $(DESTDIR)$(PREFIX)/include/pacemap $(DESTDIR)$(PREFIX)/lib/pkgconfig/pacemap.pc \
	    $(DESTDIR)$(PREFIX)/share/man/man1/pacemap.1

clean:
	rm -rf build build-asan build-tsan build-fuzz

-include $(LIB_OBJ:.o=.d) $(CLI_OBJ:.o=.d) $(TEST_LIB_OBJ:.o=.d)
