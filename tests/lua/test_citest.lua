-- g:test: the graph's implications tested on data.  Checks against outside
-- facts: the size of a test (data from the graph itself are contradicted at
-- about alpha: binomial bounds from scipy.stats.binom.ppf), the power of
-- the test against a missing edge, the edges suggested, and every refusal.
-- The numbers of each test are checked against scipy and statsmodels in
-- tests/oracle/citest_scipy.py and tests/c/test_citest.c.

local G = graph "a -> b -> c -> d; a -> e -> d; f -> c; f -> g"
-- the 14 implications of G (pairs with a minimal separating set, as
-- g:implications lists them; checked by hand against d-separation)
local function imp(a, b, given) return {a = a, b = b, given = given or {}} end
local IMPS = {imp("b", "e", {"a"}), imp("a", "f"), imp("b", "f"), imp("e", "f"),
              imp("a", "c", {"b"}), imp("e", "c", {"b"}), imp("a", "d", {"c", "e"}),
              imp("b", "d", {"c", "e"}), imp("f", "d", {"c", "e"}), imp("a", "g"),
              imp("b", "g"), imp("e", "g"), imp("c", "g", {"f"}), imp("d", "g", {"f"})}
local COEF = {["a -> b"] = 0.6, ["b -> c"] = 0.5, ["c -> d"] = 0.4, ["a -> e"] = -0.5,
              ["e -> d"] = 0.7, ["f -> c"] = 0.8, ["f -> g"] = 0.3}

-- Under the graph, each unadjusted test rejects with probability alpha:
-- 20 seeds x 14 implications = 280 tests at alpha = 0.05; the central
-- 99.9% of Binomial(280, 0.05) is 3 to 27 (scipy.stats.binom.ppf(0.0005,
-- 280, 0.05) and ppf(0.9995, ...)).  Fixed seeds: the count is fixed too.
test("size: data from the graph are contradicted at about alpha", function()
  local m = sem(G, COEF)
  local hits, total = 0, 0
  for seed = 1, 20 do
    local t = G:test(m:simulate(400, {seed = seed}), {adjust = "none", implications = IMPS})
    for _, r in ipairs(t) do
      total = total + 1
      if r.verdict == "contradicted" then hits = hits + 1 end
      eq(r.test, "partial r", "continuous columns")
    end
  end
  eq(total, 280)
  eq(hits >= 3 and hits <= 27, true, "contradicted " .. hits .. " of 280")
end)

-- The same size for the rank test of residuals and the LR test.
test("size: the rank test and the LR test", function()
  local m = sem(G, COEF)
  for _, method in ipairs({"residual", "lr"}) do
    local hits = 0
    for seed = 101, 120 do
      local t = G:test(m:simulate(300, {seed = seed}), {adjust = "none", method = method,
                                                         implications = IMPS})
      for _, r in ipairs(t) do if r.p < 0.05 then hits = hits + 1 end end
    end
    eq(hits >= 3 and hits <= 27, true, method .. ": contradicted " .. hits .. " of 280")
  end
end)

-- Data from G plus b -> d: the implication b _||_ d | c, e breaks; with
-- n large the test flags it, the others stand, and b -> d is suggested.
test("power: the missing edge is found and suggested", function()
  local coef = {}
  for k, v in pairs(COEF) do coef[k] = v end
  coef["b -> d"] = 0.15
  local d = sem(G:with("b -> d"), coef):simulate(20000, {seed = 11})
  local t = G:test(d, {implications = IMPS})
  local flagged = {}
  for _, r in ipairs(t) do
    if r.verdict == "contradicted" then flagged[#flagged + 1] = r.a .. "," .. r.b end
  end
  -- a _||_ d | c, e breaks too (a -> b -> d is open), and so does
  -- f _||_ d | c, e (f -> c <- b -> d: c is a collider in the set)
  same_list(flagged, {"a,d", "b,d", "f,d"}, "contradicted")
  local r = t[8]
  eq(r.a .. r.b, "bd")
  -- d -> b would close the cycle b -> c -> d -> b: left out
  same_list(r.add, {"b -> d", "b <-> d"}, "suggested edges")
  eq(r.p_adj < 1e-10, true, "p adjusted " .. r.p_adj)
  eq(r.lo > 0 and r.effect > r.lo and r.hi > r.effect, true, "interval")
  -- every direction is suggested when none makes a cycle
  local g2 = graph "a -> b; c -> b"
  local d2 = sem(graph "a -> b; c -> b; a -> c", {["a -> b"] = 0.8, ["c -> b"] = 0.5,
                 ["a -> c"] = 0.5}):simulate(5000, {seed = 2})
  local t2 = g2:test(d2, {implications = {imp("a", "c")}})
  eq(t2[1].verdict, "contradicted")
  same_list(t2[1].add, {"a -> c", "c -> a", "a <-> c"})
  local g3 = graph "a -> b -> c; c -> d"
  local t3 = g3:test(d2:binarize("b", 0.5, "d"), {implications = {imp("a", "d", {"c"})}})
  eq(t3[1].verdict, "contradicted")
  -- d -> a closes the cycle a -> b -> c -> d -> a: left out
  same_list(t3[1].add, {"a -> d", "a <-> d"}, "acyclic additions")
end)

-- By default the list is g:implications(), with its untestable count.
test("the implications of the graph itself, and the untestable pairs", function()
  local d = sem(G, COEF):simulate(500, {seed = 5})
  local t = G:test(d)
  eq(#t, #G:implications())
  eq(t.alpha, 0.05); eq(t.adjust, "holm"); eq(t.untestable, 0)
  local h = graph "x -> y; z -> y; hidden u; u -> w; u -> z; w -> x"
  local dh = sem(h, {["x -> y"] = 0.5, ["z -> y"] = 0.5, ["u -> w"] = 0.8, ["u -> z"] = 0.8,
                     ["w -> x"] = 0.5}):simulate(500, {seed = 6})
  local th = h:test(dh)
  eq(th.untestable, h:implications().untestable)
  eq(th.untestable > 0, true)
  local text = tostring(th)
  eq(text:find("no observed set separates", 1, true) ~= nil, true, text)
end)

-- Binary and text columns: the LR tests and the G-test by column types.
test("the test follows the column types", function()
  local d = sem(G, COEF):simulate(3000, {seed = 8}):binarize("b", 0, "bb")
  d = d:binarize("e", 0, "eb"):binarize("a", 0, "ab")
  local t = G:test(d, {implications = {imp("bb", "eb", {"ab"}), imp("bb", "e", {"a"}),
                                       imp("e", "bb", {"a"}), imp("a", "c", {"b"})}})
  eq(t[1].test, "G-test"); eq(t[1].df, 2.0)
  eq(t[2].test, "LR logistic"); eq(t[2].response, "bb"); eq(t[2].df, 1.0)
  eq(t[3].response, "bb", "the binary column is the response")
  eq(t[2].lo, nil, "no interval for the logistic LR")
  eq(t[4].test, "partial r")
  local r = G:test(d, {method = "gtest", implications = {imp("bb", "e", {"a"})}})[1]
  eq(r.verdict, "not tested")
  eq(r.why:find("'e' is continuous", 1, true) ~= nil, true, r.why)
end)

test("missing values are dropped per implication and counted", function()
  local f = read_csv("tests/data/citest_missing.csv")
  local t = G:test(f, {implications = {imp("a", "b"), imp("a", "c", {"b"})}})
  eq(t[1].n, 9); eq(t[1].dropped, 1)
  eq(t[2].n, 8); eq(t[2].dropped, 2)
end)

test("bad input: a clear message, the rest goes on", function()
  local d = sem(G, COEF):simulate(200, {seed = 9})
  local t = G:test(d, {implications = {imp("a", "zz", {"bb"}), imp("a", "f")}})
  eq(t[1].verdict, "not tested")
  eq(t[1].why, "no column 'zz', 'bb' (did you mean 'b'?) in the data")
  eq(t[2].verdict == "consistent" or t[2].verdict == "contradicted", true)
  local text = tostring(t)
  eq(text:find("1 not tested", 1, true) ~= nil, true, text)
  -- a constant column
  local k = d:binarize("a", 1e9, "k")
  local r = G:test(k, {implications = {imp("k", "f")}})[1]
  eq(r.verdict, "not tested")
  eq(r.why, "'k' is constant over the 200 complete rows: nothing to test")
  -- too few rows for the conditioning set
  local small = d:head(5)
  r = G:test(small, {implications = {imp("a", "d", {"b", "c", "e"})}})[1]
  eq(r.why, "too few rows: 5 complete rows for 3 conditioning columns (the test needs at least 7)")
  raises(function() return G:test(d, {alpah = 0.1}) end, "g:test: unknown option 'alpah'; did you mean 'alpha'?")
  raises(function() return G:test(d, {alpha = 1.5}) end, "g:test: alpha = 1.5 must lie strictly between 0 and 1")
  raises(function() return G:test(d, {adjust = "bonf"}) end, 'adjust = "bonf" is not one of holm, bh, none')
  raises(function() return G:test(d, {method = "residul"}) end, "did you mean 'residual'?")
  raises(function() return G:test(d, {boot = -1}) end, "boot = -1 must be a whole number")
  raises(function() return G:test("d") end, "g:test: the data must be a data frame")
  raises(function() return G.test(d) end, "g:test: call it on a graph")
  raises(function() return G:test(d, {implications = {{a = "a"}}}) end, "implications = entry 1 must be")
  raises(function() return G:test(d, {plot = 3}) end, "plot = must be a file name")
end)

test("adjustment: Holm by default, BH, none", function()
  local d = sem(G:with("b -> d"), {["a -> b"] = 0.6, ["b -> c"] = 0.5, ["c -> d"] = 0.4,
                ["a -> e"] = -0.5, ["e -> d"] = 0.7, ["f -> c"] = 0.8, ["f -> g"] = 0.3,
                ["b -> d"] = 0.1}):simulate(2000, {seed = 4})
  local ps, m = {}, #IMPS
  local none = G:test(d, {adjust = "none", implications = IMPS})
  for i, r in ipairs(none) do ps[i] = r.p; eq(r.p_adj, r.p) end
  -- Holm (1979): the i-th smallest p times m - i + 1, made monotone
  local order = {}
  for i = 1, m do order[i] = i end
  table.sort(order, function(x, y) return ps[x] < ps[y] end)
  local holm, run = {}, 0
  for k, i in ipairs(order) do
    run = math.max(run, math.min(1, (m - k + 1) * ps[i])); holm[i] = run
  end
  local t = G:test(d, {implications = IMPS})
  for i, r in ipairs(t) do eq(math.abs(r.p_adj - holm[i]) < 1e-15, true, "holm " .. i) end
  local bh = G:test(d, {adjust = "bh", implications = IMPS})
  for i, r in ipairs(bh) do eq(r.p_adj <= t[i].p_adj + 1e-15, true, "BH is no larger than Holm") end
end)

test("printing, the text picture and the picture file", function()
  local coef = {["b -> g"] = 0.5}
  for k, v in pairs(COEF) do coef[k] = v end
  local d = sem(G:with("b -> g"), coef):simulate(1000, {seed = 12})
  local t = G:test(d, {implications = IMPS, plot = os.tmpname() .. ".svg"})
  eq(t[11].verdict, "contradicted", "b _||_ g")
  local text = tostring(t)
  for _, s in ipairs({"implication", "effect [interval]", "p adj", "verdict", "b ⊥ e | a",
                      "tested implications contradicted by the data at alpha = 0.05 (Holm adjustment)",
                      "| is zero", "Passing these tests does not prove the graph",
                      "hidden confounders", "direction of the edges"}) do
    eq(text:find(s, 1, true) ~= nil, true, "printout lacks " .. s)
  end
  local f = io.open(t.plot, "rb")
  eq(f ~= nil, true, "picture written")
  local svg = f:read("a"); f:close(); os.remove(t.plot)
  eq(svg:find("<svg", 1, true) ~= nil, true)
  -- PLplot writes text as character references
  svg = svg:gsub("&#x(%x+);", function(h) return utf8.char(tonumber(h, 16)) end)
  eq(svg:find("independence", 1, true) ~= nil, true, "the zero line is labelled")
  eq(svg:find("b ⊥ g  (contradicted)", 1, true) ~= nil, true, "the contradicted one is marked")
  eq(svg:find("a ⊥ f", 1, true) ~= nil, true, "a label")
  raises(function() return G:test(d, {implications = IMPS, plot = "x.gif"}) end,
         "g:test: cannot tell the picture format of 'x.gif'")
end)
