-- The session layer: show(), the log's entries as the prompt records them,
-- parsing a log, report() in Markdown and HTML, exercise{} and base64.
local S = require "sluice.session"
local hooks = debug.getregistry()["sluice.hooks"]

local function tmpdir()
  local p = os.tmpname()
  os.remove(p)
  assert(hooks.mkdir(p))
  return p
end

local function slurp(path)
  local f = assert(io.open(path, "rb"))
  local s = f:read("a")
  f:close()
  return s
end

-- Drive one input through the hooks, as the prompt does.
local function input(n, typed, expr, fn)
  hooks.session_begin(n, typed, expr)
  local ok, err = pcall(fn)
  hooks.session_end(not ok and err or nil, ok and (expr and 1 or 0) or -1)
  return S.entries[#S.entries]
end

test("base64 matches the RFC 4648 test vectors", function()
  -- RFC 4648 section 10
  eq(S.base64(""), "")
  eq(S.base64("f"), "Zg==")
  eq(S.base64("fo"), "Zm8=")
  eq(S.base64("foo"), "Zm9v")
  eq(S.base64("foobar"), "Zm9vYmFy")
end)

test("an input's output is captured, and written as a log entry", function()
  hooks.session_start()
  local e = input(101, 'print("rows", 6 * 7)', false, function() print("rows", 6 * 7) end)
  same_list(e.out, {"rows\t42"}, "captured print")
  e = input(102, "io.write('a', 1.5, 2)", false, function() io.write("a", 1.5, 2, "\n") end)
  same_list(e.out, {"a1.52"}, "captured io.write")
  e = input(103, "nil + 1", true, function() error("attempt to add", 0) end)
  same_list(e.out, {"error: attempt to add"}, "an error is recorded")
  eq(e.code, "show(nil + 1)", "an expression is written inside show()")
  e = input(104, "x -- a note", true, function() S.show(7) end)
  eq(e.code, "show(x -- a note\n)", "a comment at the end stays a comment")
  same_list(e.out, {"7"}, "show prints like the prompt")
end)

test("parse reads entries, outputs, data and skipped inputs", function()
  local log = table.concat({
    "--@ sluice 0.1.0 session log", "--@ started 2026-01-01T00:00:00Z", "--@ lua 5.4",
    "--@ in 1", "trees = read_csv 'orchard.csv'",
    "--@ data orchard.csv 177 " .. string.rep("ab", 32),
    "--@ in 2 show", "show(#trees)", "--| 8",
    "--@ in 3 skipped: does not compile", "--> x = = 1", "--| error: unexpected symbol",
  }, "\n") .. "\n"
  local p = assert(S.parse(log, "t.lua"))
  eq(p.version, "0.1.0")
  eq(#p.entries, 3, "entries")
  eq(p.entries[1].data[1].bytes, 177)
  eq(p.entries[2].typed, "#trees")
  same_list(p.entries[2].out, {"8"})
  eq(p.entries[3].skip, "does not compile")
  eq(p.entries[3].typed, "x = = 1")
  eq(p.truncated, false)
  local bad, msg = S.parse("print(1)\n", "plain.lua")
  eq(bad, nil)
  eq(msg:find("plain.lua:1: not a sluice session log", 1, true), 1)
end)

test("report writes Markdown with commands, outputs, pictures and the caution", function()
  local dir = tmpdir()
  local g = graph "rain -> soil -> yield; rain -> yield"
  input(105, "g:draw(...)", true, function() S.show(g:draw(dir .. "/orchard.svg")) end)
  local path = report(dir .. "/report.md")
  eq(path, dir .. "/report.md")
  local md = slurp(path)
  eq(md:find("# sluice session report", 1, true), 1, "title")
  eq(md:find("```lua\nprint(\"rows\", 6 * 7)\n```\n\n```\nrows\t42\n```", 1, true) ~= nil, true,
     "a command and its output")
  eq(md:find("(<" .. dir .. "/orchard.svg>)", 1, true) ~= nil, true, "the picture")
  eq(md:find(require("sluice.help").caution, 1, true) ~= nil, true, "the caution")
end)

test("report with .html renders through libcmark and inlines pictures", function()
  local dir = tmpdir()
  local html = slurp(report(dir .. "/report.html"))
  eq(html:find("<!DOCTYPE html>", 1, true), 1)
  eq(html:find("<h1>sluice session report</h1>", 1, true) ~= nil, true, "a heading from cmark")
  eq(html:find('<code class="language-lua">print(&quot;rows&quot;, 6 * 7)', 1, true) ~= nil, true,
     "code is escaped by cmark")
  eq(html:find('src="data:image/svg+xml;base64,', 1, true) ~= nil, true, "the SVG is inlined")
  eq(html:find("sluice-picture-", 1, true), nil, "no placeholder is left")
end)

test("exercise writes data, graph, handout and key, reproducibly from the seed", function()
  local g = graph "slope -> mulch -> harvest; slope -> harvest; shade -> harvest"
  local m = sem(g, {["slope -> mulch"] = 0.5, ["mulch -> harvest"] = 2, ["slope -> harvest"] = 1},
                {default = 0.4})
  local a, b = tmpdir(), tmpdir()
  local files = exercise{graph = g, model = m, treatment = "mulch", outcome = "harvest",
                         n = 120, seed = 4, dir = a, scenario = "An orchard tries mulch."}
  exercise{graph = g, model = m, treatment = "mulch", outcome = "harvest", n = 120, seed = 4, dir = b}
  eq(files.key, a .. "/key.md")
  eq(slurp(a .. "/data.csv"), slurp(b .. "/data.csv"), "same seed, same data")
  eq(slurp(a .. "/key.md"), slurp(b .. "/key.md"), "same seed, same key")
  eq(#read_csv(a .. "/data.csv"), 120, "n rows")
  local key, handout = slurp(a .. "/key.md"), slurp(a .. "/handout.md")
  -- the truth is the path coefficient mulch -> harvest (a linear SEM)
  eq(key:find("true total effect (m:effect): 2.0000", 1, true) ~= nil, true, "truth")
  eq(key:find("minimal valid sets (g:adjust): {slope}", 1, true) ~= nil, true, "minimal set")
  eq(key:find("optimal set (g:optimal): {shade, slope}", 1, true) ~= nil, true, "optimal set")
  eq(key:find("- {}: not valid", 1, true) ~= nil, true, "the empty set is invalid")
  eq(handout:find("An orchard tries mulch.", 1, true) ~= nil, true, "scenario")
  eq(handout:find("valid", 1, true) ~= nil, true, "a question on validity")
  eq(handout:find("optimal", 1, true), nil, "the handout gives no answers")
  eq(slurp(a .. "/graph.svg"):find("<svg", 1, true) ~= nil, true, "the drawing")
  raises(function() exercise{graph = g, dir = a} end, "model = a model")
  raises(function() exercise "x" end, "bad argument #1 to 'exercise'")
end)

test("exercise refuses an unknown argument and suggests the nearest", function()
  local g = graph "a -> b"
  local m = sem(g, {["a -> b"] = 1})
  raises(function() exercise{graph = g, model = m, dir = tmpdir(), seeds = 3} end,
         "exercise: unknown argument 'seeds'; did you mean 'seed'?")
  raises(function() exercise{graph = g, model = m, dir = tmpdir(), zzzzzzzz = 1} end,
         "exercise: unknown argument 'zzzzzzzz' (arguments: dir, graph")
end)

test("log() rejects what is not a path or false", function()
  raises(function() log(42) end, "bad argument #1 to 'log'")
  eq(log(), nil, "no log in a script")
end)

test("errors of the wrapped writers point at the caller's line, not at sluice", function()
  local d = read_csv("tests/data/orchard.csv")
  local function at(fn)
    local ok, e = pcall(fn)
    eq(ok, false, "it fails")
    return tostring(e)
  end
  local e = at(function() return d["nope"] end)
  eq(e:find("^tests/lua/test_session.lua:%d+: no column 'nope'") ~= nil, true, e)
  e = at(function() return d:write_csv("/nonexistent-folder/x.csv") end)
  eq(e:find("^tests/lua/test_session.lua:%d+: f:write_csv: cannot write") ~= nil, true, e)
  e = at(function() return d:write_csv() end)
  eq(e:find("^tests/lua/test_session.lua:%d+: f:write_csv: a file name expected") ~= nil, true, e)
  e = at(function() return graph("a -> b"):draw("/nonexistent-folder/x.svg") end)
  eq(e:find("lua/sluice/session.lua", 1, true), nil, e)
end)
