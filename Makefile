# segwise: build the C module in the tree, run specs, demo and benchmarks.
# `make test` and `make demo` install missing Debian packages first.

LUA      ?= lua5.4
PKGS     := lua5.4 liblua5.4-dev libgsl-dev lua-busted luarocks librsvg2-bin
CC       ?= cc
WARN     := -std=c99 -Wall -Wextra -pedantic -Wmissing-prototypes -Wshadow
OPT      ?= -O2 -g
PKGCFG    = $(shell pkg-config --cflags lua5.4 gsl 2>/dev/null)
GSLLIBS   = $(shell pkg-config --libs gsl 2>/dev/null || echo -lgsl -lgslcblas)
CFLAGS   += $(WARN) $(OPT) -fPIC -fvisibility=hidden -D_POSIX_C_SOURCE=200809L -Icsrc/core \
            $(PKGCFG) $(EXTRA_CFLAGS)
LDFLAGS  += -shared $(EXTRA_LDFLAGS)

# The core (csrc/core/<area>/) knows nothing of Lua; csrc/bind/ is the only
# C that includes Lua's headers (checked by `make check-layers`).
CORE_SRC := $(wildcard csrc/core/*/*.c)
CORE_HDR := $(wildcard csrc/core/*/*.h)
BIND_SRC := $(wildcard csrc/bind/*.c)
BUILDDIR ?= build
OBJ      := $(patsubst csrc/%.c,$(BUILDDIR)/%.o,$(CORE_SRC) $(BIND_SRC))
MODULE   := $(BUILDDIR)/segwise/core.so

export LUA_PATH  := ./lua/?.lua;./lua/?/init.lua;$(LUA_PATH);;
export LUA_CPATH := ./$(BUILDDIR)/?.so;$(LUA_CPATH);;

.PHONY: all deps deps-locale test demo bench clean check-exports check-layers

all: $(MODULE)

$(BUILDDIR)/%.o: csrc/%.c $(CORE_HDR) csrc/bind/bind.h | $(BUILDDIR)/segwise
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -c $< -o $@

$(BUILDDIR)/segwise:
	mkdir -p $@

$(MODULE): $(OBJ)
	$(CC) $(LDFLAGS) -o $@ $(OBJ) $(GSLLIBS) -lm

# Installs what is missing from Debian's packages; as root directly, else via
# sudo; where neither works it prints the install line and stops.
deps:
	@missing=""; for p in $(PKGS) $(EXTRA_PKGS); do \
	  dpkg -s $$p >/dev/null 2>&1 || missing="$$missing $$p"; done; \
	if [ -n "$$missing" ]; then \
	  echo "segwise: installing$$missing"; \
	  if [ "$$(id -u)" = 0 ]; then SUDO=""; \
	  elif command -v sudo >/dev/null 2>&1; then SUDO="sudo"; \
	  else echo "segwise: please run: apt-get install -y$$missing" >&2; exit 1; fi; \
	  $$SUDO env DEBIAN_FRONTEND=noninteractive apt-get update -qq && \
	  $$SUDO env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq$$missing || \
	  { echo "segwise: install failed; please run: apt-get install -y$$missing" >&2; exit 1; }; \
	fi

# A decimal-comma locale for spec/locale_spec.lua (numbers in files must not
# follow LC_NUMERIC); generated from the locales package's sources when absent.
deps-locale:
	@locale -a 2>/dev/null | grep -qiE '^de_DE\.utf-?8$$' || { [ "$$(id -u)" = 0 ] && \
	  { [ -e /usr/share/i18n/locales/de_DE ] || $(MAKE) --no-print-directory deps \
	    EXTRA_PKGS=locales; } && localedef -i de_DE -f UTF-8 de_DE.UTF-8 2>/dev/null; } || \
	  echo "segwise: no de_DE.UTF-8 locale (the locale spec will say it skips)" >&2

# Only the entry point is exported, and nothing of our own is left undefined
# (a shared object links even when a binding calls a missing function).
check-exports: $(MODULE)
	@exp=$$(nm -D --defined-only $(MODULE) | awk '{print $$3}' | grep -v '^_' ); \
	if [ "$$exp" != "luaopen_segwise_core" ]; then echo "unexpected exports: $$exp" >&2; exit 1; fi
	@und=$$(nm -D --undefined-only $(MODULE) | awk '{print $$2}' | grep -E '^(sw_|lsw_)' || true); \
	if [ -n "$$und" ]; then echo "undefined symbols: $$und" >&2; exit 1; fi

# The layers: no core file includes a Lua header.
check-layers:
	@bad=$$(grep -lE '^[[:space:]]*#[[:space:]]*include[[:space:]]*[<"](lua|lauxlib|lualib|luaconf)\.h' \
	  $(CORE_SRC) $(CORE_HDR) || true); \
	if [ -n "$$bad" ]; then echo "core files include Lua headers: $$bad" >&2; exit 1; fi

test: deps deps-locale
	@$(MAKE) --no-print-directory all check-exports check-layers
	@$(LUA) rockspec/generate.lua --check || echo "segwise: warning: the rockspec is out of date (CI fails on this)" >&2
	@$(LUA) spec/run.lua $(LUA) $$(command -v busted) --cpath='./$(BUILDDIR)/?.so' $(SPEC)

demo: deps
	@$(MAKE) --no-print-directory all
	@$(LUA) examples/demo_study.lua

bench:
	@$(MAKE) --no-print-directory deps EXTRA_PKGS="python3-numpy python3-scipy"
	@$(MAKE) --no-print-directory all
	@$(LUA) spec/bench/run.lua

clean:
	rm -rf $(BUILDDIR)

# --- reliability: the suite under sanitizers and valgrind -------------------
ASAN_DIR := build-asan
ASAN_LIB  = $(shell $(CC) -print-file-name=libasan.so)
UBSAN_LIB = $(shell $(CC) -print-file-name=libubsan.so)

-include spec/fuzz/fuzz.mk

.PHONY: asan valgrind
asan: deps
	@$(MAKE) --no-print-directory BUILDDIR=$(ASAN_DIR) OPT="-O1 -g -fno-omit-frame-pointer" \
	  EXTRA_CFLAGS="-fsanitize=address,undefined -fno-sanitize-recover=undefined" \
	  EXTRA_LDFLAGS="-fsanitize=address,undefined" all
	@LD_PRELOAD="$(ASAN_LIB) $(UBSAN_LIB)" ASAN_OPTIONS=detect_leaks=1:abort_on_error=0:exitcode=23:allocator_may_return_null=1 \
	  LSAN_OPTIONS=suppressions=$(CURDIR)/spec/lsan.supp:print_suppressions=0 \
	  UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
	  $(LUA) spec/run.lua $(LUA) $$(command -v busted) --cpath='./$(ASAN_DIR)/?.so' $(SPEC)

# The whole suite under memcheck takes well over an hour; CI runs this
# representative part (every module's behaviour and bad-input specs; fitting
# and evaluation speed paths are covered by make asan, make ctest and fuzzing).
VALGRIND_SPECS ?= spec/curve_spec.lua spec/pwl_spec.lua spec/reference_spec.lua spec/net_spec.lua \
  spec/reference_net_spec.lua spec/net_warnings_spec.lua spec/array_spec.lua spec/modelfile_spec.lua \
  spec/badinput_spec.lua spec/examples_spec.lua spec/locale_spec.lua spec/savefile_spec.lua spec/textplot_spec.lua \
  spec/hostile_spec.lua
valgrind: deps
	@command -v valgrind >/dev/null || $(MAKE) --no-print-directory deps EXTRA_PKGS=valgrind
	@$(MAKE) --no-print-directory BUILDDIR=build-vg OPT="-O1 -g" all
	@$(LUA) spec/run.lua "valgrind -q --error-exitcode=99 --leak-check=full --show-leak-kinds=definite,indirect --errors-for-leak-kinds=definite,indirect $(LUA)" \
	  $$(command -v busted) --cpath='./build-vg/?.so' $(VALGRIND_SPECS)
