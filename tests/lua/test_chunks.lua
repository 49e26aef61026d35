-- The top level of an input (sluice.chunks) and the session's locals
-- (S.load_entry): which locals an input declares, how a script divides into
-- entries, and that entries run one by one give what Lua gives for the same
-- text run as one chunk (Lua 5.4 reference manual, 3.3.7 local
-- declarations and attributes, 3.5 visibility rules).
local K = require "sluice.chunks"
local S = require "sluice.session"

local function names(decls)
  local out = {}
  for i, d in ipairs(decls) do out[i] = d.name .. (d.attrib and ("<" .. d.attrib .. ">") or "") end
  return out
end

test("scan: top-level locals with attributes, local function, not nested ones", function()
  local code = "local a, b <const> = 1, 2\n"
            .. "local function f() local hidden = 1 end\n"
            .. "if a then local inner = 2 end\n"
            .. "for i = 1, 2 do local k = i end\n"
            .. "local c <close> = nil\n"
            .. "return a"
  local sc = K.scan(code)
  same_list(names(sc.locals), {"a", "b<const>", "f", "c<close>"})
  eq(sc.ret, code:find("return a", 1, true), "the top-level return")
  eq(sc.names.hidden, true, "every name the code mentions")
end)

test("scan: strings, long strings and comments hide what looks like code", function()
  local sc = K.scan('s = "local z = 1" -- local w\n--[==[ local q ]==] t = [[local r]] u = \'\\\'local v\'')
  same_list(names(sc.locals), {})
  eq(sc.ret, nil)
  sc = K.scan("repeat local x = 1 until x\nwhile false do return end")
  same_list(names(sc.locals), {}, "locals inside repeat and while are not top level")
  eq(sc.ret, nil, "a return inside a block is not the chunk's")
end)

test("split: one entry per top-level statement, comments with the statement below", function()
  local text = table.concat({
    "-- rows",                   -- 1
    "x = 1",                     -- 2
    "",                          -- 3
    "function f(a)",             -- 4
    "  return a",                -- 5
    "end",                       -- 6
    "y = f",                     -- 7
    "(x)",                       -- 8: Lua reads y = f(x)
    "t = {",                     -- 9
    "  a = 1,",                  -- 10
    "}",                         -- 11
    "-- trailing comment",       -- 12
  }, "\n")
  local e = K.split(text, function(c) return load(c) ~= nil end)
  eq(#e, 4)
  same_list({e[1].line, e[2].line, e[3].line, e[4].line}, {1, 4, 7, 9})
  eq(e[1].code, "-- rows\nx = 1")
  eq(e[3].code, "y = f\n(x)", "a line that opens with ( continues the statement")
end)

-- Run the pieces one by one through S.load_entry, and the same text as one
-- chunk through load: both print the same lines.
local function both(pieces)
  local got, want = {}, {}
  local function env(out)
    local function show(...)
      local t = table.pack(...)
      for i = 1, t.n do t[i] = tostring(t[i]) end
      out[#out + 1] = table.concat(t, " ", 1, t.n)
    end
    return setmetatable({print = show}, {__index = _G})
  end
  local e1, st = env(got), S.locals_new()
  for i, p in ipairs(pieces) do
    local fn, err = S.load_entry(p, "=[input " .. i .. "]", e1, st)
    if not fn then got[#got + 1] = "compile: " .. err
    else
      local ok, msg = pcall(fn)
      if not ok then got[#got + 1] = "error" end
    end
  end
  local whole = assert(load(table.concat(pieces, "\n"), "=whole", "t", env(want)))
  whole()
  return got, want
end

test("load_entry: locals across inputs mean what they mean in one chunk", function()
  local got, want = both({
    "local n = 0",
    "local function bump() n = n + 1 return n end",
    "bump()",
    "print(bump(), n)",               -- 2 2: the closure shares n
    "local n = n * 10",               -- a new n, from the old one
    "print(bump(), n)",               -- 3 20: bump keeps the old n
    "local k <const> = {v = 7}",
    "print(k.v)",
    "local a, b = 1",
    "print(a, b)",
    "do local hidden = 5 end",
    "print(hidden)",
  })
  same_list(got, want)
  same_list(want, {"2 2", "3 20", "7", "1 nil", "nil"}, "Lua's own answers")
end)

test("load_entry: a <const> stays constant, a <close> closes with its input", function()
  local st = S.locals_new()
  assert(S.load_entry("local k <const> = 1", "=[input 1]", nil, st))()
  local fn, err = S.load_entry("k = 2", "=[input 2]", nil, st)
  eq(fn, nil)
  eq(err:find("attempt to assign to const variable 'k'", 1, true) ~= nil, true, err)
  chunks_closed = false
  assert(S.load_entry("local c <close> = setmetatable({}, {__close = function() "
                      .. "chunks_closed = true end})", "=[input 3]", nil, st))()
  eq(chunks_closed, true, "closed when its input ended")
  chunks_closed = nil
  eq(st.kind.c, nil, "a <close> local is not kept")
end)

test("load_entry: an input that fails keeps none of its locals", function()
  local st = S.locals_new()
  local fn = assert(S.load_entry("local lost = 1 error('stop')", "=[input 1]", nil, st))
  eq(pcall(fn), false)
  eq(st.kind.lost, nil)
end)

test("load_entry: the hand-over takes only closures of the input itself", function()
  local st = S.locals_new()
  -- an input that calls the hand-over with a function from elsewhere
  local fn = assert(S.load_entry("local x = 1 __sluice_keep(print)", "=[input 1]", nil, st))
  fn()
  eq(st.kind.x, "cell", "its own closure still hands x over")
  eq(assert(S.load_entry("return x", "=[input 2]", nil, st))(), 1)
end)
