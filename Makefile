# Makefile - builds dervish, its library, tests and samples with GNU make.
#   make            the dervish executable and libdervish.a
#   make check      every test (unit, end-to-end, bad input, runtime)
#   make samples    build and run the sample models with their drivers, and
#                   draw their graphs (NAME.svg beside them) when Graphviz's
#                   dot is installed
#   make install    the executable and the man page dervish.1; PREFIX
#                   (default /usr/local), MANDIR and DESTDIR are honoured
#   make uninstall  removes what install put there
#   make SANITIZE=1 ...   the same with AddressSanitizer and UBSan (build-san/)

.SUFFIXES:
.DELETE_ON_ERROR:
.SECONDARY:

CC      ?= cc
PREFIX  ?= /usr/local
MANDIR  ?= $(PREFIX)/share/man
DESTDIR ?=
VERSION := 0.1.0
DEMO    ?= kiln

WARN    := -std=c99 -Wall -Wextra -Wpedantic -Wshadow -Wstrict-prototypes \
           -Wmissing-prototypes
CFLAGS  ?= -O2 -g
LDFLAGS ?=
LDLIBS  := -lm -pthread

ifeq ($(SANITIZE),1)
B := build-san
SANFLAGS := -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all
else
B := build
SANFLAGS :=
endif

ALL_CFLAGS  = $(WARN) $(CFLAGS) $(SANFLAGS) -D_POSIX_C_SOURCE=200809L \
              -DDERVISH_VERSION='"$(VERSION)"' -Icompiler -Iruntime -I$(B)
ALL_LDFLAGS = $(LDFLAGS) $(SANFLAGS)

CHECK_CFLAGS := $(shell pkg-config --cflags check 2>/dev/null)
CHECK_LIBS   := $(shell pkg-config --libs check 2>/dev/null || echo -lcheck -lsubunit -lrt -lm -pthread)

LIB_SRCS := $(filter-out compiler/main.c,$(wildcard compiler/*.c))
LIB_OBJS := $(LIB_SRCS:compiler/%.c=$(B)/%.o) $(B)/lexer.o $(B)/parser.o \
            $(B)/runtime_text.o
# runtime/float/NAME.c: the helper's float form, for --real float
RUNTIME  := $(sort $(wildcard runtime/*.c)) $(sort $(wildcard runtime/float/*.c))
TEST_SRCS := $(wildcard tests/test_*.c)
TEST_BINS := $(TEST_SRCS:tests/%.c=$(B)/tests/%)

.PHONY: all check samples demo soak fuzz bench perf clean install uninstall
# The copy ./dervish is made only by the default build directory.
all: $(B)/dervish $(if $(filter build,$(B)),dervish)

dervish: $(B)/dervish
	cp $< $@

$(B)/dervish: $(B)/main.o $(B)/libdervish.a
	$(CC) $(ALL_LDFLAGS) -o $@ $^ $(LDLIBS)

$(B)/libdervish.a: $(LIB_OBJS)
	rm -f $@
	ar rcs $@ $^

$(B)/%.o: compiler/%.c Makefile | $(B)/parser.h
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) -MMD -MP -c -o $@ $<

# lemon writes parser.c and parser.h together; one pattern rule runs it once.
$(B)/%ser.c $(B)/%ser.h: grammar/%ser.y
	@mkdir -p $(B)
	lemon -q -l -d$(B) -T/usr/share/lemon/lempar.c $<
	touch $(B)/parser.h

$(B)/lexer.c: grammar/lexer.re
	@mkdir -p $(B)
	re2c -W -Werror --no-generation-date --no-version -o $@ $<

$(B)/lexer.o: $(B)/lexer.c $(B)/parser.h Makefile
	$(CC) $(ALL_CFLAGS) -MMD -MP -c -o $@ $<

$(B)/parser.o: $(B)/parser.c Makefile
	$(CC) $(ALL_CFLAGS) -MMD -MP -c -o $@ $<

# The runtime helpers are embedded in the compiler as text, to be copied
# into emitted code; tests/test_runtime.c also compiles them directly.
$(B)/runtime_text.c: $(RUNTIME) scripts/embed_runtime.sh Makefile
	@mkdir -p $(B)
	sh scripts/embed_runtime.sh $(RUNTIME) > $@

$(B)/runtime_text.o: $(B)/runtime_text.c
	$(CC) $(ALL_CFLAGS) -c -o $@ $<

# ---------------------------------------------------------------- tests
$(B)/tests/%: tests/%.c $(wildcard tests/*.h tests/e2e/*.h) $(B)/libdervish.a Makefile
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) -D_XOPEN_SOURCE=700 $(CHECK_CFLAGS) -Itests -o $@ $< \
	    $(B)/libdervish.a $(ALL_LDFLAGS) $(CHECK_LIBS) $(LDLIBS)

check: $(B)/dervish $(TEST_BINS)
	@sh samples/run_samples.sh $(B)/dervish
	@sh tests/run_all.sh $(B)

# Time per row and scratch of row-by-row gradients (bench/README.md)
bench: $(B)/dervish
	@sh bench/run.sh $(B)/dervish

# Gradient cost against value, hand-written code and differences, and the
# compiler's scaling (bench/PERF.md); PERF_SIZES="1000 10000" skips 10^5
perf: $(B)/dervish
	PERF_OUT=$(B)/perf sh bench/perf.sh $(B)/dervish

# A long run of the randomized-model test: make soak SOAK_COUNT=10000
# (SOAK_OPTIONS: extra options for every dervish build)
SOAK_COUNT ?= 10000
SOAK_SEED  ?= 1
SOAK_OPTIONS ?=
soak: $(B)/dervish $(B)/tests/soak
	DERVISH=$(B)/dervish $(B)/tests/soak $(SOAK_COUNT) $(SOAK_SEED) "$(SOAK_OPTIONS)"

$(B)/tests/soak: tests/soak.c tests/testutil.h $(wildcard tests/*.h tests/e2e/*.h) $(B)/libdervish.a Makefile
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) -D_XOPEN_SOURCE=700 $(CHECK_CFLAGS) -Itests -o $@ $< \
	    $(B)/libdervish.a $(ALL_LDFLAGS) $(CHECK_LIBS) $(LDLIBS)

samples: $(B)/dervish
	@sh samples/run_samples.sh $(B)/dervish

# libFuzzer over the whole pipeline (clang): make fuzz FUZZ_SECONDS=60
FUZZ_SECONDS ?= 60
FUZZ_CC      ?= clang
FUZZ_FLAGS   := -std=c99 -g -O1 -fsanitize=fuzzer-no-link,address,undefined \
                -fno-sanitize-recover=all -D_POSIX_C_SOURCE=200809L \
                -DDERVISH_VERSION='"$(VERSION)"' -Icompiler -Iruntime -Ibuild-fuzz
FUZZ_SRCS    := $(LIB_SRCS) build-fuzz/lexer.c build-fuzz/parser.c \
                build-fuzz/runtime_text.c fuzz/fuzz_compile.c
fuzz: build-fuzz/fuzz_compile
	@mkdir -p build-fuzz/corpus
	sh fuzz/run.sh build-fuzz/fuzz_compile $(FUZZ_SECONDS)

build-fuzz/fuzz_compile: $(LIB_SRCS) $(wildcard compiler/*.h) fuzz/fuzz_compile.c \
                         build-fuzz/lexer.c build-fuzz/parser.c build-fuzz/runtime_text.c
	$(FUZZ_CC) $(FUZZ_FLAGS) -fsanitize=fuzzer -o $@ $(FUZZ_SRCS) -lm -pthread

build-fuzz/parser.c build-fuzz/parser.h: grammar/parser.y
	@mkdir -p build-fuzz
	lemon -q -l -dbuild-fuzz -T/usr/share/lemon/lempar.c $<
	touch build-fuzz/parser.h

build-fuzz/lexer.c: grammar/lexer.re build-fuzz/parser.h
	re2c -W -Werror --no-generation-date --no-version -o $@ $<

build-fuzz/runtime_text.c: $(RUNTIME) scripts/embed_runtime.sh
	@mkdir -p build-fuzz
	sh scripts/embed_runtime.sh $(RUNTIME) > $@

demo: $(B)/dervish
	@sh samples/run_samples.sh $(B)/dervish $(DEMO)

clean:
	rm -rf build build-san dervish

install: $(B)/dervish
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(MANDIR)/man1
	install -m 755 $(B)/dervish $(DESTDIR)$(PREFIX)/bin/dervish
	install -m 644 docs/dervish.1 $(DESTDIR)$(MANDIR)/man1/dervish.1

uninstall:
	rm -f $(DESTDIR)$(PREFIX)/bin/dervish $(DESTDIR)$(MANDIR)/man1/dervish.1

-include $(wildcard $(B)/*.d)
