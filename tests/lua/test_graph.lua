-- Graph notation and graph queries at the Lua level.  Expected values are
-- worked out by hand from the notation in DESIGN.md and the definitions of
-- parent, ancestor and topological order.

local orchard = graph [[
  # an orchard: rain and soil feed the yield; pests are never measured
  rain -> soil -> yield
  rain -> yield
  hidden pests
  pests -> yield; pests -> soil
  irrigation <-> rain
  "frost days" -> yield
  compost
]]

test("nodes sorted, hidden listed", function()
  same_list(orchard:nodes(), {"compost", "frost days", "irrigation", "pests",
                              "rain", "soil", "yield"})
  same_list(orchard:hidden(), {"pests"})
  eq(#orchard, 7, "#g")
end)

test("edges: directed first, then <->", function()
  local e = orchard:edges()
  eq(#e, 7, "edge count")
  eq(e[1].from, "frost days"); eq(e[1].to, "yield"); eq(e[1].kind, "->")
  eq(e[7].from, "irrigation"); eq(e[7].to, "rain"); eq(e[7].kind, "<->")
  eq(tostring(e[1]), '"frost days" -> yield', "edge text")
end)

test("parents, children of a node and of a set", function()
  same_list(orchard:parents "yield", {"frost days", "pests", "rain", "soil"})
  same_list(orchard:children "rain", {"soil", "yield"})
  same_list(orchard:parents {"soil", "rain"}, {"pests", "rain"})
  same_list(orchard:children "compost", {})
end)

test("ancestors and descendants are proper", function()
  same_list(orchard:ancestors "yield", {"frost days", "pests", "rain", "soil"})
  same_list(orchard:ancestors "rain", {})          -- <-> is not a directed path
  same_list(orchard:descendants "rain", {"soil", "yield"})
  same_list(orchard:descendants {"rain", "soil"}, {"soil", "yield"})
end)

test("topological order is the alphabetically first one", function()
  -- by hand: roots compost, frost days, irrigation, pests, rain; then soil, yield
  same_list(orchard:order(), {"compost", "frost days", "irrigation", "pests", "rain",
                              "soil", "yield"})
  local g = graph "b -> a; c -> b"
  same_list(g:order(), {"c", "b", "a"})
end)

test("canonical text parses back to an equal graph", function()
  local text = tostring(orchard)
  eq(text, 'hidden pests\n"frost days" -> yield\npests -> soil, yield\n' ..
           'rain -> soil, yield\nsoil -> yield\nirrigation <-> rain\ncompost',
     "canonical text")
  local back = graph(text)
  eq(back == orchard, true, "round trip")
  eq(tostring(back), text, "written twice")
end)

test("with and without return new graphs", function()
  local g2 = orchard:with "frost -> yield; hidden frost"
  eq(#g2, 8); eq(#orchard, 7, "original unchanged")
  same_list(g2:hidden(), {"frost", "pests"})
  local g3 = orchard:without "rain -> yield; compost"
  same_list(g3:parents "yield", {"frost days", "pests", "soil"})
  eq(#g3, 6)
  local g4 = orchard:without "irrigation <-> rain"
  eq(#g4:edges(), 6)
  raises(function() return orchard:with "yield -> rain" end,
         "directed cycle: rain -> yield -> rain")
  raises(function() return orchard:without "soil -> rain" end, "no edge soil -> rain")
  raises(function() return orchard:without "soill" end, "did you mean 'soil'?")
end)

test("notation errors give line, column and a caret", function()
  local msg = raises(function() return graph "rain -> soil\nsoil -> " end,
                     "line 2, column 9", "expected a node name after '->'")
  eq(msg:match("\n  soil %-> \n  (%s*)%^$"), "        ", "caret under column 9")
  msg = raises(function() return graph "größe -> , b" end, "line 1, column 10")
  eq(msg:match("\n  größe %-> , b\n  (%s*)%^$"), "         ", "caret counts characters")
  raises(function() return graph 'a -> "b' end, "unterminated quoted name")
  raises(function() return graph "hiden u" end, "did you mean 'hidden'?")
  raises(function() return graph "a -> a" end, "self-loop")
  raises(function() return graph "a -> b -> c -> a" end, "directed cycle: a -> b -> c -> a")
  raises(function() return graph "a => b" end, "unknown arrow")
  raises(function() return graph(42) end, "bad argument #1 to 'graph' (string expected, got number)")
end)

test("argument errors name the position and suggest names", function()
  raises(function() return orchard:parents "soill" end,
         "bad argument #1 to 'g:parents'", "no node 'soill' in the graph; did you mean 'soil'?")
  raises(function() return orchard:ancestors {"rain", 3} end, "bad argument #1 to 'g:ancestors'",
         "node names are strings")
  raises(function() return orchard.parents(nil, "x") end, "g:parents: call it on a graph")
end)

test("read_graph names the file on an error", function()
  local path = os.tmpname()
  local f = assert(io.open(path, "w"))
  f:write("rain -> soil\nsoil ->\n")
  f:close()
  raises(function() return read_graph(path) end, path .. ":2:8:", "expected a node name")
  f = assert(io.open(path, "w"))
  f:write("rain -> soil\n")
  f:close()
  eq(#read_graph(path), 2, "read back")
  os.remove(path)
  raises(function() return read_graph "/nonexistent/plan.graph" end,
         "cannot open '/nonexistent/plan.graph'")
end)

test("dot marks hidden nodes and <-> edges", function()
  local d = orchard:dot()
  eq(d:find('"pests" [style=dashed', 1, true) ~= nil, true, "hidden node dashed")
  eq(d:find('"irrigation" -> "rain" [dir=both, style=dashed', 1, true) ~= nil, true,
     "<-> edge")
  eq(d:find('"rain" -> "soil";', 1, true) ~= nil, true, "plain edge")
end)

test("draw writes SVG, PNG and PDF", function()
  local dir = os.tmpname()
  os.remove(dir)
  os.execute("mkdir -p " .. dir)
  for ext, magic in pairs{svg = "<svg", png = "\137PNG", pdf = "%PDF"} do
    local path = dir .. "/orchard." .. ext
    eq(orchard:draw(path), path)
    local data = assert(io.open(path, "rb")):read("a")
    eq(data:find(magic, 1, true) ~= nil, true, ext .. " magic")
  end
  raises(function() return orchard:draw(dir .. "/orchard.gif") end, ".svg, .png or .pdf")
  os.execute("rm -rf " .. dir)
end)

test("show lists every node in causal order", function()
  local s = orchard:show()
  eq(s:find("7 nodes (1 hidden), 6 arrows, 1 hidden common cause", 1, true) ~= nil, true)
  eq(s:find("   2  yield%s+<%- \"frost days\", pests, rain, soil") ~= nil, true, "yield line")
  eq(s:find("(pests)", 1, true) ~= nil, true, "hidden marked")
end)

-- Invisible characters (issue 9): a zero-width space or a no-break space in
-- a bare name made a second node that printed like the first.  The code
-- points and their names are from the Unicode code charts (from memory).
test("invisible characters: refused bare, escaped when quoted", function()
  local msg = raises(function() return graph "pest\u{200B}s -> yield" end,
                     "line 1, column 5", "invisible character U+200B (zero-width space)",
                     "quote the name if you mean it")
  eq(msg:find("pest?s -> yield\n      ^", 1, true) ~= nil, true, "caret under the character")
  raises(function() return graph "rain\u{00A0} -> soil" end, "U+00A0 (no-break space)")
  raises(function() return graph "a -> b\n\u{FEFF}c -> d" end, "line 2, column 1", "U+FEFF")
  raises(function() return orchard:with "rain\u{200D} -> compost" end, "U+200D (zero-width joiner)")
  local g = graph '"pest\u{200B}s" -> yield; pests -> yield'
  eq(#g, 3, "two distinct pests nodes")
  -- bytewise name order: "pests" before "pest" .. U+200B (bytes E2 80 8B)
  eq(tostring(g), 'pests -> yield\n"pest\\u{200B}s" -> yield', "escaped in the notation")
  eq(graph(tostring(g)) == g, true, "the text parses back to the same graph")
  eq(tostring(g:nodes()), 'pests, "pest\\u{200B}s", yield', "lists show the escape")
  eq(g:show():find('"pest\\u{200B}s"', 1, true) ~= nil, true, "the terminal view too")
  eq(tostring(graph '"a\\u{e9}" -> b'), "a\u{e9} -> b", "an escape of a visible letter")
end)

test("draw errors name g:draw and the path", function()
  local msg = raises(function() return orchard:draw("/nonexistent-dir/o.svg") end,
                     "g:draw: cannot write '/nonexistent-dir/o.svg'")
  eq(msg:find("session.lua", 1, true), nil, "no internal file in the message")
  raises(function() return orchard:draw("orchard.gif") end, "g:draw: cannot tell the picture format of 'orchard.gif'")
  raises(function() return orchard:draw(42) end, "g:draw: path = must be a file name")
end)
