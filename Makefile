# sluice: a causal-analysis shell.  See README.md and DEVELOPERS.md.
VERSION  := 0.1.0
PREFIX   ?= /usr/local
DESTDIR  ?=
B        ?= build
CC       ?= cc
LUA      ?= lua5.4
PYTHON   ?= $(shell test -x /usr/bin/python3 && echo /usr/bin/python3 || echo python3)
PKGS     := lua5.4 gsl libgvc readline sqlite3 plplot libsodium libcmark
PKGCFLAGS = $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
LIBLIBS   = $(shell pkg-config --libs libgvc sqlite3 plplot libsodium 2>/dev/null) $(shell pkg-config --libs libcmark) -lcsv \
            -lgsl -lopenblas -lpthread -lm -lpq
PKGLIBS   = $(shell pkg-config --libs lua5.4 readline libseccomp 2>/dev/null) $(LIBLIBS)
SANITIZE ?=
OPT      ?= -O2
CFLAGS   ?= $(OPT) -g
WERROR   ?= -Werror
ALLCFLAGS = -std=c11 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -fPIC \
            -Wall -Wextra $(WERROR) $(SANITIZE) $(CFLAGS) \
            -Isrc/graph -Isrc/stats -Isrc/bind $(PKGCFLAGS) -I/usr/include/postgresql \
            -DSLUICE_VERSION='"$(VERSION)"'
LDFLAGS  += $(SANITIZE)

LUADIR   := $(PREFIX)/share/lua/5.4
CMODDIR  := $(PREFIX)/lib/x86_64-linux-gnu/lua/5.4
ifeq ($(wildcard /usr/lib/x86_64-linux-gnu),)
CMODDIR  := $(PREFIX)/lib/lua/5.4
endif
ifneq ($(PREFIX),/usr)
CMODDIR  := $(PREFIX)/lib/lua/5.4
endif
MANDIR   := $(PREFIX)/share/man/man1

LIB_SRC   := $(wildcard src/graph/*.c src/stats/*.c)
BIND_SRC  := $(wildcard src/bind/*.c)
SHELL_SRC := $(wildcard src/shell/*.c)
LUA_SRC   := $(wildcard lua/sluice/*.lua)
CTEST_SRC := $(wildcard tests/c/test_*.c)
obj = $(patsubst %.c,$(B)/obj/%.o,$(1))

LIB_OBJ   := $(call obj,$(LIB_SRC))
BIND_OBJ  := $(call obj,$(BIND_SRC)) $(B)/obj/gen/lua_embedded.o
SHELL_OBJ := $(call obj,$(SHELL_SRC))
CTESTS    := $(patsubst tests/c/%.c,$(B)/tests/%,$(CTEST_SRC))

.DEFAULT_GOAL := all
-include $(LIB_OBJ:.o=.d) $(BIND_OBJ:.o=.d) $(SHELL_OBJ:.o=.d)

.PHONY: all deps deps-check demo check test asan fuzz bench docs install \
        uninstall clean
all: $(B)/libsluice.a $(B)/sluice $(B)/sluice.so

deps:
	@sh tools/deps.sh build
deps-check:
	@sh tools/deps.sh check

$(B)/obj/%.o: %.c
	@mkdir -p $(dir $@)
	$(CC) $(ALLCFLAGS) -MMD -MP -c $< -o $@

$(B)/gen/lua_embedded.c: tools/embed.lua $(LUA_SRC)
	@mkdir -p $(dir $@)
	$(LUA) tools/embed.lua $@ $(LUA_SRC)
$(B)/obj/gen/lua_embedded.o: $(B)/gen/lua_embedded.c
	@mkdir -p $(dir $@)
	$(CC) $(ALLCFLAGS) -c $< -o $@

$(B)/libsluice.a: $(LIB_OBJ)
	@rm -f $@
	ar rcs $@ $^

$(B)/sluice.so: $(BIND_OBJ) $(B)/libsluice.a
	$(CC) -shared $(LDFLAGS) -o $@ $(BIND_OBJ) $(B)/libsluice.a $(LIBLIBS)

$(B)/sluice: $(SHELL_OBJ) $(BIND_OBJ) $(B)/libsluice.a
	$(CC) $(LDFLAGS) -Wl,-E -o $@ $(SHELL_OBJ) $(BIND_OBJ) $(B)/libsluice.a $(PKGLIBS)

$(B)/tests/%: tests/c/%.c $(wildcard tests/c/*.h) $(B)/libsluice.a
	@mkdir -p $(dir $@)
	$(CC) $(ALLCFLAGS) $(LDFLAGS) -o $@ $< $(B)/libsluice.a \
	  $(shell pkg-config --cflags --libs cmocka) $(LIBLIBS)

# the kernel layer of the replay sandbox, tested apart from the shell
$(B)/tests/test_confine: tests/c/test_confine.c src/shell/confine.h $(B)/obj/src/shell/confine.o
	@mkdir -p $(dir $@)
	$(CC) $(ALLCFLAGS) $(LDFLAGS) -o $@ $< $(B)/obj/src/shell/confine.o \
	  $(shell pkg-config --cflags --libs cmocka libseccomp) -lpthread

# ---- tests ----
check: deps-check
	@$(MAKE) --no-print-directory test

test: all $(CTESTS)
	@B=$(B) PYTHON=$(PYTHON) LUA=$(LUA) SLUICE_ASAN=$(SLUICE_ASAN) sh tests/run.sh

asan: deps-check
	@$(MAKE) --no-print-directory B=build/asan OPT=-O1 \
	  SANITIZE="-fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=undefined" \
	  SLUICE_ASAN=1 test

FUZZ_TIME ?= 60
fuzz: $(B)/gen/lua_embedded.c
	@sh tools/deps.sh fuzz
	@mkdir -p $(B)/fuzz
	clang -std=c11 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -g -O1 \
	  -fsanitize=fuzzer,address,undefined -Isrc/graph \
	  tests/fuzz/fuzz_notation.c $(wildcard src/graph/*.c) \
	  $(shell pkg-config --cflags --libs libgvc) -o $(B)/fuzz/fuzz_notation
	clang -std=c11 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -g -O1 \
	  -fsanitize=fuzzer,address,undefined -Isrc/graph -Isrc/stats \
	  tests/fuzz/fuzz_csv.c src/graph/error.c src/graph/invisible.c src/stats/frame.c src/stats/csv.c \
	  src/stats/sql.c src/stats/fingerprint.c \
	  $(shell pkg-config --cflags --libs sqlite3 libsodium) -lcsv -lm -o $(B)/fuzz/fuzz_csv
	clang -std=c11 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -g -O1 \
	  -fsanitize=fuzzer,address,undefined -Isrc/bind \
	  tests/fuzz/fuzz_logparse.c $(B)/gen/lua_embedded.c \
	  $(shell pkg-config --cflags --libs lua5.4) -o $(B)/fuzz/fuzz_logparse
	clang -std=c11 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -g -O1 \
	  -fsanitize=fuzzer,address,undefined -Isrc/shell \
	  tests/fuzz/fuzz_wire.c src/shell/wire.c -o $(B)/fuzz/fuzz_wire
	sh tests/fuzz/run.sh $(B)/fuzz/fuzz_notation $(FUZZ_TIME)
	sh tests/fuzz/run.sh $(B)/fuzz/fuzz_csv $(FUZZ_TIME) tests/fuzz/csv_corpus
	sh tests/fuzz/run.sh $(B)/fuzz/fuzz_logparse $(FUZZ_TIME) tests/fuzz/log_corpus
	sh tests/fuzz/run.sh $(B)/fuzz/fuzz_wire $(FUZZ_TIME) tests/fuzz/wire_corpus

bench: all
	@B=$(B) PYTHON=$(PYTHON) sh bench/run.sh

docs: all
	$(B)/sluice tools/gendocs.lua > docs/functions.md

demo: deps
	@$(MAKE) --no-print-directory all
	$(B)/sluice examples/orchard.lua
	$(B)/sluice examples/hedgerows.lua
	$(B)/sluice examples/extension.lua
	$(B)/sluice examples/woodland.lua

install: all
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(CMODDIR) \
	  $(DESTDIR)$(LUADIR)/sluice $(DESTDIR)$(MANDIR)
	install -m 755 $(B)/sluice $(DESTDIR)$(PREFIX)/bin/sluice
	install -m 644 $(B)/sluice.so $(DESTDIR)$(CMODDIR)/sluice.so
	install -m 644 $(LUA_SRC) $(DESTDIR)$(LUADIR)/sluice/
	install -m 644 docs/sluice.1 $(DESTDIR)$(MANDIR)/sluice.1

uninstall:
	rm -f $(DESTDIR)$(PREFIX)/bin/sluice $(DESTDIR)$(CMODDIR)/sluice.so \
	  $(DESTDIR)$(MANDIR)/sluice.1
	rm -rf $(DESTDIR)$(LUADIR)/sluice

clean:
	rm -rf build
