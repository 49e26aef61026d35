/*
** fuzz_logparse.c: libFuzzer target for the session log parser
** (lua/sluice/logtext.lua, taken from the Lua sources embedded in the
** module by tools/embed.lua).
**
** Every input is parsed.  parse must return a log, or nil and a one-line
** message "fuzz.lua:LINE: ..."; any Lua error is a crash.  A log that
** parses is written again entry by entry (entry_text) and must parse back
** to the same entries, with every output line already in escaped form.
** Any broken promise calls abort(), which libFuzzer reports as a crash.
** The Lua code is not compiled with coverage, so a line hook counts pairs
** of executed Lua lines into libFuzzer's extra counters to guide it.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <lua.h>
#include <lauxlib.h>
#include <lualib.h>
#include "embedded.h"

/* The checks, in Lua: called with the input, returns nil or what broke. */
static const char CHECK[] =
  "local T = ...\n"
  "local function list(t) return #t .. ':' .. table.concat(t, '\\n') end\n"
  "return function(text)\n"
  "  local p, msg = T.parse(text, 'fuzz.lua')\n"
  "  if not p then\n"
  "    if type(msg) ~= 'string' or not msg:find('^fuzz%.lua:%d+: %S')\n"
  "       or msg:find('\\n', 1, true) then\n"
  "      return 'a refusal without a NAME:LINE: message: ' .. tostring(msg)\n"
  "    end\n"
  "    return nil\n"
  "  end\n"
  "  if type(p.version) ~= 'string' or type(p.head) ~= 'table'\n"
  "     or type(p.truncated) ~= 'boolean' then return 'a log without its fields' end\n"
  "  local out = {'--@ sluice 0.1.0 session log\\n'}\n"
  "  for i, e in ipairs(p.entries) do\n"
  "    if math.type(e.n) ~= 'integer' or math.type(e.line) ~= 'integer'\n"
  "       or type(e.code) ~= 'string' or type(e.typed) ~= 'string'\n"
  "       or type(e.expr) ~= 'boolean' then return 'entry ' .. i .. ': bad fields' end\n"
  "    for _, l in ipairs(e.out) do\n"
  "      if T.escape(l) ~= l then return 'entry ' .. i .. ': an output not escaped' end\n"
  "    end\n"
  "    out[#out + 1] = T.entry_text(e)\n"
  "  end\n"
  "  local q, qmsg = T.parse(table.concat(out), 'again.lua')\n"
  "  if not q then return 'the log written again is refused: ' .. qmsg end\n"
  "  if #q.entries ~= #p.entries then return 'written again: another number of entries' end\n"
  "  for i, e in ipairs(p.entries) do\n"
  "    local f, what = q.entries[i], 'entry ' .. i .. ' written again: '\n"
  "    if f.n ~= e.n or f.expr ~= e.expr or f.skip ~= e.skip or f.typed ~= e.typed\n"
  "       or (not e.skip and f.code ~= e.code) then return what .. 'its input differs' end\n"
  "    if list(f.out) ~= list(e.out) then return what .. 'its output differs' end\n"
  "    if list(f.pictures) ~= list(e.pictures) or #f.data ~= #e.data then\n"
  "      return what .. 'its metadata differs'\n"
  "    end\n"
  "    for k, d in ipairs(e.data) do\n"
  "      local g = f.data[k]\n"
  "      if g.path ~= d.path or g.bytes ~= d.bytes or g.sha256 ~= d.sha256 then\n"
  "        return what .. 'a data line differs'\n"
  "      end\n"
  "    end\n"
  "  end\n"
  "end\n";

static lua_State *L;
static int check_ref;

/* Pairs of consecutive Lua lines, as libFuzzer's extra coverage. */
__attribute__((section("__libfuzzer_extra_counters")))
static uint8_t lua_pairs[1 << 13];
static int prev_line;

/* Why: the interpreter is not instrumented; its line events stand in. */
static void line_hook(lua_State *l, lua_Debug *ar) {
  (void)l;
  unsigned k = ((unsigned)prev_line * 7919u + (unsigned)ar->currentline) & (sizeof lua_pairs - 1);
  if (lua_pairs[k] < 255) lua_pairs[k]++;
  prev_line = ar->currentline;
}

static void die(const char *what, const char *detail) {
  fprintf(stderr, "fuzz_logparse: %s%s%s\n", what, detail ? ": " : "", detail ? detail : "");
  abort();
}

/* Push the module compiled into the program under name. */
static void require_embedded(const char *name) {
  for (int i = 0; sl_embedded_lua[i].module; i++) {
    const sl_embedded *m = &sl_embedded_lua[i];
    if (strcmp(m->module, name) != 0) continue;
    if (luaL_loadbuffer(L, m->source, m->len, m->chunkname) != LUA_OK ||
        lua_pcall(L, 0, 1, 0) != LUA_OK)
      die("cannot load the module", lua_tostring(L, -1));
    return;
  }
  die("not embedded", name);
}

int LLVMFuzzerInitialize(int *argc, char ***argv) {
  (void)argc; (void)argv;
  L = luaL_newstate();
  if (!L) die("no Lua state", NULL);
  luaL_openlibs(L);
  if (luaL_loadbuffer(L, CHECK, sizeof CHECK - 1, "=check") != LUA_OK)
    die("the checks do not compile", lua_tostring(L, -1));
  require_embedded("sluice.logtext");
  if (lua_pcall(L, 1, 1, 0) != LUA_OK) die("the checks fail to start", lua_tostring(L, -1));
  check_ref = luaL_ref(L, LUA_REGISTRYINDEX);
  lua_sethook(L, line_hook, LUA_MASKLINE, 0);
  return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  lua_rawgeti(L, LUA_REGISTRYINDEX, check_ref);
  lua_pushlstring(L, (const char *)data, size);
  prev_line = 0;
  if (lua_pcall(L, 1, 1, 0) != LUA_OK) die("a Lua error", lua_tostring(L, -1));
  if (!lua_isnil(L, -1)) die("a broken promise", lua_tostring(L, -1));
  lua_pop(L, 1);
  return 0;
}
