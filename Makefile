# cairn — plain GNU Makefile.
#
#   make            build/cairn and build/libcairn.a
#   make check      install missing packages, build, run every test
#   make check-asan unit tests under AddressSanitizer + UBSan
#   make demo       adjust the demo project
#   make bench      benchmarks (timings live here, never in tests)
#   make install PREFIX=/usr/local [DESTDIR=...]

CC       ?= gcc
PYTHON   ?= /usr/bin/python3
PREFIX   ?= /usr/local
BINDIR   ?= $(PREFIX)/bin
LIBDIR   ?= $(PREFIX)/lib
INCDIR   ?= $(PREFIX)/include
MANDIR   ?= $(PREFIX)/share/man
BUILD    ?= build

# Debian packages (DESIGN.md "Dependencies").
DEB_PACKAGES = build-essential pkg-config libsuitesparse-dev libopenblas-dev \
               liblapacke-dev libxml2-dev libgsl-dev check python3-numpy groff-base \
               valgrind nettle-dev

PKGS         = openblas lapacke libxml-2.0 gsl nettle
# CHOLMOD has no pkg-config file on Debian 12.
CHOLMOD_CFLAGS ?= -I/usr/include/suitesparse
CHOLMOD_LIBS   ?= -lcholmod -lsuitesparseconfig
# Lazy (=) so that pkg-config runs after `make deps` has installed it.
PKG_CFLAGS = $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
# GSL's own CBLAS would shadow OpenBLAS: link OpenBLAS only.
PKG_LIBS   = $(filter-out -lgslcblas,$(shell pkg-config --libs $(PKGS) 2>/dev/null))
CHECK_CFLAGS = $(shell pkg-config --cflags check 2>/dev/null)
CHECK_LIBS   = $(shell pkg-config --libs check 2>/dev/null)

WARN     = -Wall -Wextra -Werror -pedantic -Wshadow -Wstrict-prototypes \
           -Wmissing-prototypes -Wfloat-conversion -Wno-unused-parameter
OPT     ?= -O2 -g
CFLAGS  ?= $(OPT)
ALL_CFLAGS = -std=c11 -D_POSIX_C_SOURCE=200809L $(WARN) $(CFLAGS) -Iinclude \
             $(CHOLMOD_CFLAGS) $(PKG_CFLAGS) $(MOREFLAGS) -MMD -MP
LDLIBS_ALL = $(CHOLMOD_LIBS) $(PKG_LIBS) -lm -pthread

STAGES   = core input model solve quality output
LIB_SRC  = $(sort $(foreach s,$(STAGES),$(wildcard src/$(s)/*.c)))
CLI_SRC  = $(sort $(wildcard src/cli/*.c))
UNIT_SRC = $(sort $(wildcard tests/unit/test_*.c))

LIB_OBJ  = $(LIB_SRC:%.c=$(BUILD)/obj/%.o)
CLI_OBJ  = $(CLI_SRC:%.c=$(BUILD)/obj/%.o)
UNIT_BIN = $(UNIT_SRC:tests/unit/%.c=$(BUILD)/tests/%)

.PHONY: all deps check check-unit check-bad check-integration check-asan check-threads \
        demo demo-check bench bench-load install uninstall clean man-check test-all \
        check-sanitizers check-valgrind fuzz

all: $(BUILD)/cairn $(BUILD)/libcairn.a

$(BUILD)/obj/%.o: %.c
	@mkdir -p $(dir $@)
	$(CC) $(ALL_CFLAGS) -c $< -o $@

$(BUILD)/libcairn.a: $(LIB_OBJ)
	@mkdir -p $(dir $@)
	rm -f $@
	ar rcs $@ $^

$(BUILD)/cairn: $(CLI_OBJ) $(BUILD)/libcairn.a
	$(CC) $(CFLAGS) -o $@ $(CLI_OBJ) $(BUILD)/libcairn.a $(LDLIBS_ALL)

$(BUILD)/tests/%: tests/unit/%.c $(BUILD)/libcairn.a
	@mkdir -p $(dir $@)
	$(CC) $(ALL_CFLAGS) $(CHECK_CFLAGS) -o $@ $< $(BUILD)/libcairn.a \
	    $(CHECK_LIBS) $(LDLIBS_ALL)

# --- dependencies -------------------------------------------------------
deps:
	@missing=""; for p in $(DEB_PACKAGES); do \
	  dpkg-query -W -f='$${Status}' $$p 2>/dev/null | grep -q "install ok installed" \
	    || missing="$$missing $$p"; done; \
	if [ -z "$$missing" ]; then exit 0; fi; \
	echo "make deps: installing:$$missing"; \
	if [ "$$(id -u)" = 0 ]; then SUDO=""; \
	elif command -v sudo >/dev/null && sudo -n true 2>/dev/null; then SUDO="sudo"; \
	else echo "make deps: not root and no sudo; run:"; \
	     echo "  apt-get install -y$$missing"; exit 1; fi; \
	$$SUDO env DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends $$missing \
	  || { $$SUDO apt-get update && \
	       $$SUDO env DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends $$missing; }

# --- tests --------------------------------------------------------------
check: deps
	$(MAKE) test-all

test-all: all check-unit check-bad check-integration man-check demo-check check-sanitizers \
          check-threads

# Issue #9: the unit, bad-input and integration tests again under
# AddressSanitizer + UBSan, and the CLI on the demo under valgrind memcheck
# (zero errors, no leaks definitely lost).
check-sanitizers:
	$(MAKE) BUILD=$(BUILD)/asan CFLAGS="$(ASAN_FLAGS)" check-unit check-bad check-integration
	$(MAKE) check-valgrind

# The loops on several cores and the writer thread under ThreadSanitizer.
TSAN_FLAGS = -O1 -g -fsanitize=thread -fno-omit-frame-pointer
check-threads:
	$(MAKE) BUILD=$(BUILD)/tsan CFLAGS="$(TSAN_FLAGS)" $(BUILD)/tsan/cairn
	sh tests/threads/run.sh $(BUILD)/tsan/cairn $(BUILD)/tsan/threads

VALGRIND = valgrind --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite -q
check-valgrind: $(BUILD)/cairn
	@d=$$(mktemp -d); \
	$(VALGRIND) $(BUILD)/cairn check $(DEMO) >/dev/null; rc=$$?; \
	if [ $$rc -ge 2 ]; then echo "valgrind: cairn check failed ($$rc)"; rm -rf $$d; exit 1; fi; \
	$(VALGRIND) $(BUILD)/cairn adjust $(DEMO) -o $$d --quiet; rc=$$?; rm -rf $$d; \
	if [ $$rc -ge 2 ]; then echo "valgrind: cairn adjust failed ($$rc)"; exit 1; fi; \
	echo "valgrind: demo check and adjust clean"

check-unit: $(UNIT_BIN)
	@fail=0; for t in $(UNIT_BIN); do \
	  echo "== $$t"; $$t || fail=1; done; exit $$fail

check-bad: $(BUILD)/cairn
	@sh tests/bad/run.sh $(abspath $(BUILD)/cairn)

check-integration: $(BUILD)/cairn
	@PYTHON=$(PYTHON) CAIRN=$(abspath $(BUILD)/cairn) sh tests/integration/run.sh

man-check:
	@for m in man/*.[1-9]; do \
	  out=$$(groff -ww -z -man $$m 2>&1); \
	  if [ -n "$$out" ]; then echo "$$m: $$out"; exit 1; fi; done; \
	echo "man pages render without warnings"

ASAN_FLAGS = -O1 -g -fsanitize=address,undefined -fno-omit-frame-pointer \
             -fno-sanitize-recover=undefined
check-asan: deps
	$(MAKE) BUILD=$(BUILD)/asan CFLAGS="$(ASAN_FLAGS)" check-unit check-bad

# --- demo and benchmarks --------------------------------------------------
# The demo writes projects/ollen-crossing/results/ (committed): exit 1 is
# expected, the demo has two planted mistakes. demo-check regenerates the
# results into a temporary directory and compares them with the committed
# ones (apart from the date and the command line of the run).
# (projects/ holds a second project, hollin-beck, for the golden tests:
# name the demo, do not pick the first project found.)
DEMO ?= projects/ollen-crossing/project.xml
demo: deps
	$(MAKE) all
	$(BUILD)/cairn adjust $(DEMO) || test $$? -eq 1

demo-check: $(BUILD)/cairn
	@sh tests/integration/golden/demo_check.sh $(BUILD)/cairn

bench: all
	BUILD=$(abspath $(BUILD)) sh tests/bench/run.sh

FUZZ_SECONDS ?= 60
FUZZ_JOBS    ?= 1
# libFuzzer campaign on the input stage (needs clang); see tests/fuzz/README.md
fuzz:
	$(MAKE) deps DEB_PACKAGES="$(DEB_PACKAGES) clang libclang-rt-14-dev binutils"
	FUZZ_SECONDS=$(FUZZ_SECONDS) FUZZ_JOBS=$(FUZZ_JOBS) BUILD=$(BUILD) sh tests/fuzz/run.sh

bench-load: all
	sh tests/bench/bench-load.sh

# --- install --------------------------------------------------------------
install: all
	install -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(LIBDIR) $(DESTDIR)$(INCDIR)/cairn \
	    $(DESTDIR)$(MANDIR)/man1 $(DESTDIR)$(MANDIR)/man5
	install -m 755 $(BUILD)/cairn $(DESTDIR)$(BINDIR)/cairn
	install -m 644 $(BUILD)/libcairn.a $(DESTDIR)$(LIBDIR)/libcairn.a
	install -m 644 include/cairn/*.h $(DESTDIR)$(INCDIR)/cairn/
	install -m 644 man/*.1 $(DESTDIR)$(MANDIR)/man1/
	install -m 644 man/*.5 $(DESTDIR)$(MANDIR)/man5/

uninstall:
	rm -f $(DESTDIR)$(BINDIR)/cairn $(DESTDIR)$(LIBDIR)/libcairn.a
	rm -rf $(DESTDIR)$(INCDIR)/cairn
	rm -f $(DESTDIR)$(MANDIR)/man1/cairn.1 $(DESTDIR)$(MANDIR)/man5/cairn-*.5

clean:
	rm -rf $(BUILD)

-include $(LIB_OBJ:.o=.d) $(CLI_OBJ:.o=.d)
