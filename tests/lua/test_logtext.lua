-- The text of the session log (sluice.logtext): escaping, writing an entry,
-- and the parser (counted entries, logs of the older format, CRLF, truncated
-- and hostile logs, linear time).  Lua's lexical rules (which bytes end a
-- comment) are from the Lua 5.4 reference manual, section 3.1; UTF-8 from
-- RFC 3629.
local T = require "sluice.logtext"

local HEAD = "--@ sluice 0.1.0 session log\n--@ started 2026-01-01T00:00:00Z\n--@ lua 5.4\n"

-- A log of the given entries, written as the session writes it.
local function log_of(entries)
  local t = {HEAD}
  for _, e in ipairs(entries) do
    e.out, e.data, e.pictures = e.out or {}, e.data or {}, e.pictures or {}
    if not e.skip then e.code = e.code or (e.expr and T.show_code(e.typed) or e.typed) end
    t[#t + 1] = T.entry_text(e)
  end
  return table.concat(t)
end

-- The fields of two parsed entries that a rewrite must keep.
local function same_entry(a, b, what)
  eq(a.n, b.n, what .. ": n")
  eq(a.expr, b.expr, what .. ": expr")
  eq(a.skip, b.skip, what .. ": skip")
  if not a.skip then eq(a.code, b.code, what .. ": code") end
  eq(a.typed, b.typed, what .. ": typed")
  same_list(a.out, b.out, what .. ": out")
  eq(#a.data, #b.data, what .. ": data")
  for i, d in ipairs(a.data) do
    eq(d.path, b.data[i].path, what .. ": data path")
    eq(d.bytes, b.data[i].bytes, what .. ": data bytes")
    eq(d.sha256, b.data[i].sha256, what .. ": data sha256")
  end
  same_list(a.pictures, b.pictures, what .. ": pictures")
  eq(a.at and a.at.chunk, b.at and b.at.chunk, what .. ": at chunk")
  eq(a.at and a.at.line, b.at and b.at.line, what .. ": at line")
end

-- parse, write every entry again, parse again: the same entries.
local function round_trip(text, what)
  local p = assert(T.parse(text, "rt.lua"))
  local t = {HEAD}
  for _, e in ipairs(p.entries) do t[#t + 1] = T.entry_text(e) end
  local q = assert(T.parse(table.concat(t), "rt2.lua"))
  eq(#q.entries, #p.entries, what .. ": entries")
  for i, e in ipairs(p.entries) do same_entry(q.entries[i], e, what .. " entry " .. i) end
  return p
end

test("escape writes control bytes visibly and keeps TAB and UTF-8 text", function()
  eq(T.escape("a\tb"), "a\tb", "TAB is kept")
  eq(T.escape("plain text, 42"), "plain text, 42")
  eq(T.escape("\0\a\b\n\v\f\r\27"), "\\0\\a\\b\\n\\v\\f\\r\\e", "named controls")
  eq(T.escape("\1\31\127"), "\\x01\\x1f\\x7f", "other controls and DEL")
  eq(T.escape("progress 10%\rprogress 20%"), "progress 10%\\rprogress 20%")
  eq(T.escape("\27[31mred\27[0m"), "\\e[31mred\\e[0m", "an escape sequence")
  -- RFC 3629: é is C3 A9, ≥ is E2 89 A5, 😀 is F0 9F 98 80
  eq(T.escape("caf\195\169 \226\137\165 \240\159\152\128"), "caf\195\169 \226\137\165 \240\159\152\128",
     "valid UTF-8 is kept")
  eq(T.escape("a\255b\128"), "a\\xffb\\x80", "bytes that are not UTF-8")
  eq(T.escape("\195"), "\\xc3", "a sequence cut short")
  eq(T.escape("\192\175"), "\\xc0\\xaf", "an overlong form (RFC 3629 section 10)")
  eq(T.escape("\237\160\128"), "\\xed\\xa0\\x80", "a surrogate (RFC 3629 section 3)")
  eq(T.escape("\194\133"), "\\u{85}", "the C1 control NEL")
  eq(T.escape("\194\155" .. "31m"), "\\u{9b}31m", "the C1 control CSI")
  eq(T.escape("a\226\128\174b"), "a\\u{202e}b", "RIGHT-TO-LEFT OVERRIDE")
  eq(T.escape("\226\128\168\226\128\169"), "\\u{2028}\\u{2029}", "line and paragraph separators")
  eq(T.escape("\226\129\166x\226\129\169"), "\\u{2066}x\\u{2069}", "direction isolates")
  eq(T.escape("\226\128\139"), "\226\128\139", "ZERO WIDTH SPACE is not a control: kept")
  for _, s in ipairs({"\0\r\n", "\27[1m\255", "\194\133\226\128\174", "a\\rb"}) do
    eq(T.escape(T.escape(s)), T.escape(s), "escape is idempotent")
  end
end)

test("a comment of escaped bytes stays a comment, for any bytes", function()
  -- Lua 5.4 manual 3.1: a short comment runs until the end of the line;
  -- CR and LF both end a line.  The chunk must load and do nothing.
  math.randomseed(20260101)
  local bytes = {}
  for round = 1, 3000 do
    local n = math.random(0, 40)
    for i = 1, n do
      -- favour the dangerous bytes: controls, DEL and the top half
      local r = math.random()
      bytes[i] = r < 0.3 and math.random(0, 31) or r < 0.4 and 127
                 or r < 0.7 and math.random(128, 255) or math.random(32, 126)
    end
    local s = string.char(table.unpack(bytes, 1, n))
    local e = T.escape(s)
    eq(e:find("[\0-\8\10-\31\127]"), nil, "no control byte is left")
    eq(utf8.len(e) ~= nil, true, "the result is valid UTF-8")
    eq(T.escape(e), e, "idempotent")
    local env = setmetatable({}, {__index = function(_, k) error("reads " .. k) end,
                                  __newindex = function(_, k) error("writes " .. k) end})
    local fn, err = load("--| " .. e .. "\n", "=comment", "t", env)
    if not fn then error("round " .. round .. ": " .. err) end
    eq(select("#", fn()), 0, "the comment does nothing")
  end
  -- what is at stake: unescaped, a CR ends the comment and the rest runs
  local env = {}
  assert(load("--| cell\rx = 1\n", "=raw", "t", env))()
  eq(env.x, 1, "the text after a CR ran")
  assert(load("--| " .. T.escape("cell\rx = 1") .. "\n", "=escaped", "t", env))
  env.x = nil
  assert(load("--| " .. T.escape("cell\rx = 1") .. "\n", "=escaped", "t", env))()
  eq(env.x, nil, "escaped, nothing runs")
end)

test("typed text cannot forge an entry boundary", function()
  -- the regression: today's writer put this input in the log as-is, and
  -- the log read back as two entries, the second one numbered 99
  local typed = 's = [[\n--@ in 99\n--| forged\n--> comment\n--@ sluice 0.1.0 session log\n'
                .. '--@ data /etc/passwd 1 ab\n]]'
  local text = log_of({{n = 6, typed = typed}, {n = 7, typed = "#s", expr = true, out = {"85"}}})
  local p = assert(T.parse(text, "forge.lua"))
  eq(#p.entries, 2, "two entries")
  eq(p.entries[1].n, 6)
  eq(p.entries[1].code, typed, "the typed text is the code, whole")
  eq(p.entries[1].typed, typed)
  eq(#p.entries[1].out, 0, "no forged output")
  eq(#p.entries[1].data, 0, "no forged data")
  eq(p.entries[2].n, 7)
  eq(p.entries[2].new_session, nil, "no forged session")
  same_list(p.entries[2].out, {"85"})
  -- the log is still a Lua script that runs the typed code
  local env = {show = function(v) return v end}
  assert(load(text, "=log", "t", env))()
  eq(env.s, typed:match("^s = %[%[\n(.*)%]%]$"), "running the log assigns the string")
end)

test("entries round-trip: outputs with control bytes, odd paths, skipped inputs", function()
  local entries = {
    {n = 1, typed = "x = 1"},
    {n = 2, typed = "x + 1", expr = true, out = {"2"}},
    {n = 3, typed = "print(cells)", out = {"a\rb", "nul\0byte", "\27[2Jcleared", "page\fbreak",
                                           "", "  indented", "caf\195\169"}},
    {n = 4, typed = "d = read_csv(p)", data = {{path = "my data/orchard 2024.csv", bytes = 177,
                                                sha256 = string.rep("ab", 32)},
                                               {path = "odd\nname.csv", bytes = 0, sha256 = "00"}}},
    {n = 5, typed = "g:draw(p)", expr = true, out = {"pic\r.svg"}, pictures = {"pic\r.svg"}},
    {n = 6, typed = "x = = 1\n--@ in 9\r--| y", skip = "does not compile",
     out = {"error: unexpected symbol near '='"}},
    {n = 7, typed = "long()", skip = "interrupted\n--@ in 8", out = {"error: interrupted"}},
    {n = 8, typed = "f(1) -- note", expr = true, out = {"1"}},
    {n = 9, typed = "t = {\n  1,\n}\n"},
  }
  local text = log_of(entries)
  eq(text:find("\r", 1, true), nil, "no CR is written outside the code")
  local p = round_trip(text, "tricky")
  eq(#p.entries, 9)
  eq(p.truncated, false)
  local e = p.entries
  same_list(e[3].out, {"a\\rb", "nul\\0byte", "\\e[2Jcleared", "page\\fbreak", "", "  indented",
                       "caf\195\169"}, "outputs are recorded escaped")
  eq(e[4].data[1].path, "my data/orchard 2024.csv", "a path with spaces")
  eq(e[4].data[1].bytes, 177)
  eq(e[4].data[2].path, "odd\\nname.csv", "a newline in a path is escaped")
  same_list(e[5].pictures, {"pic\\r.svg"})
  eq(e[6].skip, "does not compile")
  eq(e[6].typed, "x = = 1\n--@ in 9\\r--| y", "the typed lines of a skipped input")
  eq(e[6].code, "--> x = = 1\n--> --@ in 9\\r--| y")
  eq(e[7].skip, "interrupted\\n--@ in 8", "the reason is escaped")
  eq(e[8].code, "show(f(1) -- note\n)")
  eq(e[8].typed, "f(1) -- note")
  eq(e[9].code, "t = {\n  1,\n}\n", "a trailing newline is kept")
  for i, x in ipairs(e) do eq(x.line ~= nil, true, "entry " .. i .. " has a line") end
  eq(e[1].line, 4, "the first marker follows the header")
  -- the whole log runs as Lua: only the code runs
  local shown = {}
  local env = setmetatable({show = function(v) shown[#shown + 1] = v end,
                            print = function() end, read_csv = function() return {} end,
                            f = function(v) return v end, p = "p",
                            g = {draw = function() return "pic" end}}, {__index = _G})
  assert(load(text, "=log", "t", env))()
  eq(env.x, 1)
  eq(#env.t, 1)
  same_list(shown, {2, "pic", 1}, "show() ran for each expression")
end)

test("the marker counts the lines of code", function()
  local text = log_of({{n = 1, typed = "a = 1\nb = 2", out = {"x"}},
                       {n = 2, typed = "a", expr = true},
                       {n = 3, typed = "x =", skip = "does not compile"}})
  eq(text:find("--@ in 1 (2 lines)\na = 1\nb = 2\n--| x\n", 1, true) ~= nil, true, "statement")
  eq(text:find("--@ in 2 show (1 line)\nshow(a)\n", 1, true) ~= nil, true, "expression")
  eq(text:find("--@ in 3 skipped (1 line): does not compile\n--> x =\n", 1, true) ~= nil, true,
     "skipped")
end)

-- A log written by sluice 0.1.0 before the line count (two sessions
-- appended to one file), as the prompt wrote it from tests of the shell.
local OLD = table.concat({
  "--@ sluice 0.1.0 session log", "--@ started 2026-12-02T13:27:16Z", "--@ lua 5.4",
  "--@ in 1", "x = 41",
  "--@ in 2 show", "show(x + 1)", "--| 42",
  "--@ in 3", 't = read_csv "orchard.csv"',
  "--@ data orchard.csv 177 4185850cb103de325fba433e306d3e5713a4acc8aa936a40d8848098c4fe8fa4",
  "--@ in 4 show", "show(#t)", "--| 8",
  "--@ in 5", 'print("a\\tb")', "--| a\tb",
  "--@ in 6", "s = [[", "--@ in 99", "--| forged", "]]",
  "--@ in 7 skipped: does not compile", "--> x = = 1", "--| error: unexpected symbol near '='",
  "--@ in 8 show", 'show(error("boom\\nsecond line"))', "--| error: boom", "--| second line",
  "--@ in 9", 'g = graph "a -> b; b -> c"',
  "--@ in 10 show", 'show(g:draw("pic.svg"))', "--| pic.svg", "--@ picture pic.svg",
  "--@ in 11", "f = function(a)", "  return a * 2", "end",
  "--@ in 12 show", "show(f(21) -- double", ")", "--| 42",
  "--@ sluice 0.1.0 session log", "--@ started 2026-12-02T13:27:46Z", "--@ lua 5.4",
  "--@ in 1", "y = 2",
  "--@ in 2 show", "show(y * 3)", "--| 6",
  "--@ in 3", 'print("\\27[1mbold\\27[0m")', "--| \27[1mbold\27[0m",
}, "\n") .. "\n"

test("a log of the older format reads as it did before the line count", function()
  -- expected: what S.parse (sluice.session at commit a63db0b) returned for
  -- this log, field by field; one difference on purpose: the ESC bytes of
  -- the last output are now read escaped.
  local p = assert(T.parse(OLD, "old.lua"))
  eq(p.version, "0.1.0")
  eq(p.truncated, false)
  same_list(p.head, {"--@ sluice 0.1.0 session log", "--@ started 2026-12-02T13:27:16Z", "--@ lua 5.4"})
  local want = {
    {n = 1, line = 4, expr = false, code = "x = 41", typed = "x = 41", out = {}},
    {n = 2, line = 6, expr = true, code = "show(x + 1)", typed = "x + 1", out = {"42"}},
    {n = 3, line = 9, expr = false, code = 't = read_csv "orchard.csv"', typed = 't = read_csv "orchard.csv"', out = {}},
    {n = 4, line = 12, expr = true, code = "show(#t)", typed = "#t", out = {"8"}},
    {n = 5, line = 15, expr = false, code = 'print("a\\tb")', typed = 'print("a\\tb")', out = {"a\tb"}},
    {n = 6, line = 18, expr = false, code = "s = [[", typed = "s = [[", out = {}},
    {n = 99, line = 20, expr = false, code = "--| forged\n]]", typed = "--| forged\n]]", out = {}},
    {n = 7, line = 23, expr = false, skip = "does not compile", code = "--> x = = 1", typed = "x = = 1",
     out = {"error: unexpected symbol near '='"}},
    {n = 8, line = 26, expr = true, code = 'show(error("boom\\nsecond line"))',
     typed = 'error("boom\\nsecond line")', out = {"error: boom", "second line"}},
    {n = 9, line = 30, expr = false, code = 'g = graph "a -> b; b -> c"', typed = 'g = graph "a -> b; b -> c"', out = {}},
    {n = 10, line = 32, expr = true, code = 'show(g:draw("pic.svg"))', typed = 'g:draw("pic.svg")',
     out = {"pic.svg"}, pictures = {"pic.svg"}},
    {n = 11, line = 36, expr = false, code = "f = function(a)\n  return a * 2\nend",
     typed = "f = function(a)\n  return a * 2\nend", out = {}},
    {n = 12, line = 40, expr = true, code = "show(f(21) -- double\n)", typed = "f(21) -- double", out = {"42"}},
    {n = 1, line = 47, new_session = true, expr = false, code = "y = 2", typed = "y = 2", out = {}},
    {n = 2, line = 49, expr = true, code = "show(y * 3)", typed = "y * 3", out = {"6"}},
    {n = 3, line = 52, expr = false, code = 'print("\\27[1mbold\\27[0m")', typed = 'print("\\27[1mbold\\27[0m")',
     out = {"\\e[1mbold\\e[0m"}},
  }
  eq(#p.entries, #want, "entries")
  for i, w in ipairs(want) do
    local e, what = p.entries[i], "entry " .. i
    eq(e.n, w.n, what .. ": n")
    eq(e.line, w.line, what .. ": line")
    eq(e.new_session, w.new_session, what .. ": new_session")
    eq(e.expr, w.expr, what .. ": expr")
    eq(e.skip, w.skip, what .. ": skip")
    eq(e.code, w.code, what .. ": code")
    eq(e.typed, w.typed, what .. ": typed")
    same_list(e.out, w.out, what .. ": out")
    same_list(e.pictures, w.pictures or {}, what .. ": pictures")
  end
  eq(p.entries[3].data[1].path, "orchard.csv")
  eq(p.entries[3].data[1].bytes, 177)
  eq(p.entries[3].data[1].sha256, "4185850cb103de325fba433e306d3e5713a4acc8aa936a40d8848098c4fe8fa4")
  -- written again in the counted form, the same entries come back
  round_trip(OLD, "old format")
end)

test("a log appended to by a later session, in the counted form", function()
  local second = log_of({{n = 1, typed = "y = 2"}}):gsub("^--@ sluice 0.1.0", "--@ sluice 0.2.0")
  local text = log_of({{n = 1, typed = "x = 1"}, {n = 2, typed = "x", expr = true, out = {"1"}}})
               .. second
  local p = assert(T.parse(text, "two.lua"))
  eq(#p.entries, 3)
  eq(p.entries[2].new_session, nil)
  eq(p.entries[3].new_session, true, "the later session starts afresh")
  eq(p.entries[3].line, 12, "the marker's line in the file")
  eq(p.version, "0.2.0", "the newest version that wrote to the log")
  eq(#p.head, 3, "the header of the first session")
  -- older and counted entries in one file
  local mixed = OLD .. second
  p = assert(T.parse(mixed, "mixed.lua"))
  eq(#p.entries, 17)
  eq(p.entries[17].new_session, true)
  eq(p.entries[17].code, "y = 2")
  same_list(p.entries[16].out, {"\\e[1mbold\\e[0m"}, "the older entry keeps its output")
end)

test("a log saved with CRLF line ends reads like the original", function()
  local lf = log_of({{n = 1, typed = "x = 1\ny = 2", out = {"a", ""}},
                     {n = 2, typed = "x", expr = true, out = {"1"}},
                     {n = 3, typed = "x = =", skip = "does not compile"}})
  local crlf = lf:gsub("\n", "\r\n")
  local a, b = assert(T.parse(lf, "lf.lua")), assert(T.parse(crlf, "crlf.lua"))
  eq(a.crlf, false)
  eq(b.crlf, true)
  eq(#b.entries, 3)
  for i, e in ipairs(a.entries) do same_entry(b.entries[i], e, "crlf entry " .. i) end
  -- a CR that was in the code before the conversion survives it
  local cr = log_of({{n = 1, typed = "x = 1\r"}})
  eq(assert(T.parse(cr, "cr.lua")).entries[1].code, "x = 1\r", "a CR in code (LF log)")
  eq(assert(T.parse(cr:gsub("\n", "\r\n"), "cr2.lua")).entries[1].code, "x = 1\r",
     "a CR in code (CRLF log)")
  -- a byte order mark at the start, as some editors write it
  eq(#assert(T.parse("\239\187\191" .. lf, "bom.lua")).entries, 3, "a BOM is skipped")
end)

test("a truncated log: the last line or the last entry's code cut short", function()
  local text = log_of({{n = 1, typed = "x = 1"}, {n = 2, typed = "x", expr = true, out = {"12345"}}})
  local p = assert(T.parse(text:sub(1, -3), "cut.lua"))
  eq(p.truncated, true)
  same_list(p.entries[2].out, {"1234"}, "the partial line is kept")
  p = assert(T.parse(HEAD .. "--@ in 1 (3 lines)\nf = function()\n", "cut2.lua"))
  eq(p.truncated, true, "fewer lines than the marker says")
  eq(p.entries[1].code, "f = function()")
  p = assert(T.parse(HEAD .. "--@ in 1\nx = 1\n--| " .. string.rep("a", 40000), "long.lua"))
  eq(p.truncated, true)
  eq(#p.entries[1].out[1], 40000, "a 40 KB last line without a newline")
end)

test("what is not a log, or would run unchecked code, is refused with its line", function()
  local function refused(text, where, what)
    local p, msg = T.parse(text, "bad.lua")
    eq(p, nil, what)
    eq(msg:find(where, 1, true), 1, what .. ": " .. tostring(msg))
    return msg
  end
  refused("print(1)\n", "bad.lua:1: not a sluice session log", "a script")
  refused("", "bad.lua:1: not a sluice session log", "empty")
  refused("\0\1\2\255", "bad.lua:1: not a sluice session log", "binary")
  refused("--@ sluice 0.1.0 session log\r", "bad.lua:1: not a sluice session log", "a lone CR")
  refused(HEAD .. 'os.execute("x")\n--@ in 1 (1 line)\nx = 1\n', "bad.lua:4: a line outside every entry",
          "code in the header")
  refused(HEAD .. "--[[\n--@ in 1 (1 line)\nx = 1\n", "bad.lua:4: a long comment", "a long comment")
  refused(HEAD .. "--@ in 1 (1 line)\nx = 1\ny = 2\n", "bad.lua:6: a line outside every entry",
          "a line past the count")
  refused(HEAD .. "--@ in 1 (1 line)\nx = 1\n--| 1\ros.exit()\n", "bad.lua:6: a carriage return",
          "a CR in an output line")
  refused(HEAD .. "--@ in 1\nx = 1\n--| 1\ros.exit()\n", "bad.lua:6: a carriage return",
          "a CR in an output line, older format")
  refused(HEAD .. "--@ in 1 skipped (2 lines): does not compile\n--> x\nos.exit()\n",
          "bad.lua:6: line 2 of skipped entry 1 is not a '--> ' comment", "code in a skipped entry")
  refused(HEAD .. "--@ in 1 skipped: does not compile\n--> x\nos.exit()\n--| e\n",
          "bad.lua:6: line 2 of skipped entry 1", "code in a skipped entry, older format")
  refused(HEAD .. "--@ in 1 skipped (1 line): x\n--> a\rb\n", "bad.lua:5: a carriage return",
          "a CR in a skipped line")
  refused(HEAD .. "--@ in 1\ros.exit()\nx = 1\n", "bad.lua:4: a carriage return", "a CR in a marker")
  refused(HEAD .. "--@ in 1 skipped (1 line): r\rx()\n--> a\n", "bad.lua:4: a carriage return",
          "a CR in a skip reason")
  refused(HEAD .. "--@ in 1 (1 line)\nx = 1\n--@ started now\ros.exit()\n--@ in 2 (1 line)\ny\n",
          "bad.lua:6: a carriage return", "a CR in a later session's header")
  refused(HEAD .. "--@ in 1\nx = 1\n--@ lua 5.4\ros.exit()\n", "bad.lua:6: a carriage return",
          "a CR in a later session's header, older format")
  refused(HEAD .. "--@ in 1234567890123456 (1 line)\nx\n", "bad.lua:4: an entry number", "a huge number")
  refused(HEAD .. "--@ in 1 (1234567890123456 lines)\nx\n", "bad.lua:4: a line count", "a huge count")
  refused(HEAD .. "--@ in 1 (1 line)\nx\n--@ data p 1234567890123456 ab\n", "bad.lua:6: the size",
          "a huge size")
  refused(HEAD .. "--@ in 1 (1 line)\nx\n--@ sluice 0.1.0 session log\n--| 1\n",
          "bad.lua:7: an output or metadata line after a session header", "output after a header")
  raises(function() T.parse(nil, "x.lua") end, "parse: text = a string expected, got nil")
  -- inert lines between entries are allowed: blank lines and short comments
  local p = assert(T.parse(HEAD .. "\n-- a note\n--@ in 1 (1 line)\nx = 1\n--| 1\n\n  \n-- more\n"
                           .. "--@ future metadata\n--@ in 2 (1 line)\ny = 2\n", "ok.lua"))
  eq(#p.entries, 2)
  same_list(p.entries[1].out, {"1"})
  same_list(p.head, {"--@ sluice 0.1.0 session log", "--@ started 2026-01-01T00:00:00Z",
                     "--@ lua 5.4", "", "-- a note"})
end)

test("the parser is linear: long logs and long lines finish", function()
  -- a quadratic parser needs hours here (a 40 KB last line took seconds)
  local t = {HEAD}
  for i = 1, 50000 do
    t[#t + 1] = string.format("--@ in %d show (1 line)\nshow(%d)\n--| %d\n--@ in %d\n", i, i, i, i)
  end
  local p = assert(T.parse(table.concat(t), "big.lua"))
  eq(#p.entries, 100000, "200 000 lines, 100 000 entries")
  eq(p.entries[100000].code, "", "an older entry with no code")
  eq(p.entries[99999].typed, "50000")
  local long = string.rep("x", 1000000)
  p = assert(T.parse(HEAD .. "--@ in 1 (1 line)\n" .. long, "tail.lua"))
  eq(#p.entries[1].code, 1000000, "a 1 MB last line without a newline")
  -- metadata lines that make backtracking patterns work hard
  local pathological = "--@ data " .. string.rep(" 1", 200000) .. " x"
  p = assert(T.parse(HEAD .. "--@ in 1 (1 line)\nx\n" .. pathological .. "\n", "data.lua"))
  eq(#p.entries[1].data, 0, "not a data line")
  p = assert(T.parse(HEAD .. "--@ in 1 (1 line)\nx\n--@ data " .. string.rep("1 ", 200000) .. "ff\n", "d2.lua"))
  eq(p.entries[1].data[1].bytes, 1)
  eq(#p.entries[1].data[1].path, 399997)
  local none, msg = T.parse("--@ sluice " .. string.rep("9 ", 500000) .. "session lo", "v.lua")
  eq(none, nil, "a long first line that is not a header")
  eq(msg:find("v.lua:1: not a sluice session log", 1, true), 1)
end)

test("mutated logs never raise, and what parses writes back to the same entries", function()
  local base = log_of({{n = 1, typed = "x = [[\n--@ in 2\n]]", out = {"a"}},
                       {n = 2, typed = "x", expr = true, out = {"1", "\0"}},
                       {n = 3, typed = "x =", skip = "does not compile"},
                       {n = 4, typed = "d = read_csv(p)", data = {{path = "a b", bytes = 3, sha256 = "ab"}},
                        pictures = {"p.svg"}}}) .. OLD
  local pieces = {"\n", "\r\n", "\r", "--@ in 5 (2 lines)", "--@ in 7", "--| ", "--> ",
                  "--@ sluice 0.1.0 session log", "--@ data x 1 ab", "--[[", "]]", " skipped: ", "\0"}
  math.randomseed(4242)
  for round = 1, 1500 do
    local s = base
    for _ = 1, math.random(1, 4) do
      local at = math.random(1, #s + 1)
      local r = math.random()
      if r < 0.4 then s = s:sub(1, at - 1) .. pieces[math.random(#pieces)] .. s:sub(at)
      elseif r < 0.7 then s = s:sub(1, at - 1) .. s:sub(at + math.random(1, 30))
      else s = s:sub(1, at - 1) .. string.char(math.random(0, 255)) .. s:sub(at + 1) end
    end
    local ok, p, msg = pcall(T.parse, s, "m.lua")
    if not ok then error("round " .. round .. ": parse raised " .. tostring(p)) end
    if p then
      round_trip(s, "round " .. round)
    else
      eq(type(msg), "string", "a message")
      eq(msg:find("^m%.lua:%d+: ") ~= nil, true, "NAME:LINE: " .. msg)
    end
  end
end)

test("header lines and show_code as the session writes them", function()
  same_list(T.header_lines("0.1.0", "2026-01-01T00:00:00Z"),
            {"--@ sluice 0.1.0 session log", "--@ started 2026-01-01T00:00:00Z", "--@ lua 5.4"})
  eq(T.show_code("1 + 1"), "show(1 + 1)")
  eq(T.show_code("x -- note"), "show(x -- note\n)", "a comment would swallow the parenthesis")
  eq(T.show_code("f(\n1)"), "show(f(\n1)\n)")
  local p = assert(T.parse(table.concat(T.header_lines("0.1.0", "now"), "\n") .. "\n", "h.lua"))
  eq(p.version, "0.1.0")
  eq(#p.entries, 0)
end)

test("an entry that opens with '(' does not continue the one before it when the log runs as a script", function()
  local head = table.concat(T.header_lines("0.1.0", "2026-01-01T00:00:00Z"), "\n") .. "\n"
  local a = T.entry_text{n = 1, code = "x = tostring", typed = "x = tostring", out = {}}
  local b = T.entry_text{n = 2, code = "(print)('hi')", typed = "(print)('hi')", out = {"hi"}}
  eq(b:find("\n;(print)('hi')\n", 1, true) ~= nil, true, "a ';' opens the statement")
  local printed = {}
  local env = {tostring = tostring, print = function(s) printed[#printed + 1] = s end}
  local chunk = assert(load(head .. a .. b, "=log", "t", env))
  chunk()   -- without the ';' this is x = tostring(print)('hi'): a call of a string
  eq(env.x, tostring, "entry 1 ran alone")
  eq(printed[1], "hi", "entry 2 ran alone")
  local p = assert(T.parse(head .. a .. b, "log"))
  eq(#p.entries, 2)
end)

test("volatile lines: the query of the log's path is marked, marks are read back and kept", function()
  eq(T.is_log_query("show(log())"), true)
  eq(T.is_log_query("show(log()\n)"), true, "show_code's form after a comment")
  eq(T.is_log_query("print( log ( ) );"), true)
  eq(T.is_log_query("log()"), true)
  eq(T.is_log_query("show(log(\"x.lua\"))"), false, "log(path) prints the path given: not volatile")
  eq(T.is_log_query("show(log() .. x)"), false)
  eq(T.is_log_query("log = nil show(log())"), false)
  eq(T.is_log_query("show(catalog())"), false)
  local q = T.entry_text{n = 2, expr = true, typed = "log()", code = "show(log())",
                         out = {"sluice-logs/session-20260101-000000.lua"}}
  eq(q:find("\n%-%-@ volatile 1\n$") ~= nil, true, "the one line of show(log()) is marked")
  local two = T.entry_text{n = 3, code = "show(log())", typed = "show(log())", out = {"a", "b"}}
  eq(two:find("volatile", 1, true), nil, "a query that printed two lines is not marked")
  local m = T.entry_text{n = 4, code = "print(p) print(1)", typed = "print(p) print(1)",
                         out = {"a.lua", "1"}, volatile = {[1] = true, [7] = true}}
  eq(select(2, m:gsub("%-%-@ volatile", "")), 1, "a mark past the output is not written")
  local p = round_trip(HEAD .. q .. m, "volatile")
  eq(p.entries[1].volatile[1], true)
  eq(p.entries[2].volatile[1], true)
  eq(p.entries[2].volatile[2], nil)
  same_list(T.volatile_lines(p.entries[2]), {1})
  -- an older-format entry carries its marks in the metadata at its end
  local old = assert(T.parse(HEAD .. "--@ in 1\nprint(x)\n--| 1\n--@ volatile 1\n", "old.lua"))
  eq(old.entries[1].volatile[1], true)
  eq(old.entries[1].code, "print(x)")
  local nok, why = T.parse(HEAD .. "--@ in 1 (1 line)\nx = 1\n--@ volatile 1234567890123456\n", "v.lua")
  eq(nok, nil)
  eq(why, "v.lua:6: a volatile line number with more than 15 digits")
end)

test("a script's entry: '--@ at CHUNK LINE' is written last, read back, and refused when bad", function()
  local e = {n = 3, code = "local a = 41", typed = "local a = 41", out = {"x"},
             pictures = {"g.svg"}, at = {chunk = "@my orchard.lua", line = 12}}
  local text = T.entry_text(e)
  eq(text:match("[^\n]*\n$"), "--@ at @my orchard.lua 12\n", "the place is the entry's last line")
  eq(select(2, text:gsub("%-%-@ at ", "")), 1, "written once")
  local p = round_trip(HEAD .. text, "at")
  eq(p.entries[1].at.chunk, "@my orchard.lua", "a chunk name with a space")
  eq(p.entries[1].at.line, 12)
  same_list(p.entries[1].out, {"x"})
  -- control bytes in the chunk name stay inert (escaped as every meta line)
  local q = round_trip(HEAD .. T.entry_text{n = 1, code = "x = 1", typed = "x = 1",
                                             at = {chunk = "=a\nos.exit()\r", line = 1}}, "ctl")
  eq(q.entries[1].at.chunk, "=a\\nos.exit()\\r")
  eq(#q.entries, 1)
  -- no place for an entry that is not a script's
  eq(T.parse(HEAD .. "--@ in 1 (1 line)\nx = 1\n", "p.lua").entries[1].at, nil)
  -- the limits: a line from 1 to T.MAX_AT_LINE (the replay puts LINE - 1
  -- newlines before the code), a chunk name of at most T.MAX_CHUNK bytes
  eq(T.MAX_AT_LINE, 10000000)
  local at = assert(T.parse(HEAD .. "--@ in 1 (1 line)\nx = 1\n--@ at =x 10000000\n", "m.lua"))
  eq(at.entries[1].at.line, 10000000)
  local function bad(meta, msg, what)
    local r, why = T.parse(HEAD .. "--@ in 1 (1 line)\nx = 1\n" .. meta .. "\n", "b.lua")
    eq(r, nil, what)
    eq(why, "b.lua:6: " .. msg, what)
  end
  local line_msg = "the line of '--@ at' is not a whole number from 1 to 10000000"
  bad("--@ at =x 10000001", line_msg, "a line past the limit")
  bad("--@ at =x 0", line_msg, "line 0")
  bad("--@ at =x 1234567890123456789", line_msg, "a line of too many digits")
  bad("--@ at @" .. string.rep("a", 4096) .. " 1", "the chunk name of '--@ at' is longer than 4096 bytes",
      "a long chunk name")
  bad("--@ at x.lua 1", "a '--@ at' line that is not '--@ at CHUNKNAME LINE' (CHUNKNAME beginning "
      .. "with '@' or '=')", "a chunk name without @ or =")
  bad("--@ at =x -1", "a '--@ at' line that is not '--@ at CHUNKNAME LINE' (CHUNKNAME beginning "
      .. "with '@' or '=')", "a negative line")
  local two, why = T.parse(HEAD .. "--@ in 1 (1 line)\nx = 1\n--@ at =x 1\n--@ at =y 2\n", "b.lua")
  eq(two, nil)
  eq(why, "b.lua:7: a second '--@ at' line in one entry")
  -- 4096 bytes is still a chunk name
  local long = assert(T.parse(HEAD .. "--@ in 1 (1 line)\nx = 1\n--@ at @" .. string.rep("a", 4095)
                              .. " 1\n", "l.lua"))
  eq(#long.entries[1].at.chunk, 4096)
end)

-- Found by make fuzz (fuzz_logparse): an entry of the older format whose code
-- opens with "(" was written back with a ";" and so read back as other code.
test("an older entry opening with '(' reads as it is written back", function()
  local old = HEAD .. "--@ in 1\nx = 1\n--@ in 2\n(print)(x)\n--| 1\n"
  local p = assert(T.parse(old, "old.lua"))
  eq(p.entries[2].code, ";(print)(x)", "the ';' the writer puts in front")
  local again = assert(T.parse(HEAD .. T.entry_text(p.entries[1]) .. T.entry_text(p.entries[2]),
                               "again.lua"))
  eq(again.entries[2].code, p.entries[2].code, "the same code written back")
  eq(again.entries[2].typed, p.entries[2].typed, "the same typed text")
end)
