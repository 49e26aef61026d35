-- Linear structural models: the true effect, the implied covariance, the
-- least-squares limit and simulation, checked against outside facts:
-- Wright's path-tracing rule, sample moments of large simulations, and a
-- published simulation design.

-- Luque-Fernandez et al. 2018, Int J Epidemiol 47 (the design as recalled
-- from memory, neutral names): w ~ N(65, 5^2); t* = w/18 + N(0, 1),
-- t = 1 if t* > 3.5; y = 1.05 t + 2 w + N(0, 1).  Stated there: the true
-- effect is 1.05, no adjustment gives about 5.33, adjusting for w about 1.05.
test("a published design: 5.33 unadjusted, 1.05 adjusted", function()
  local g = graph "w -> t -> y; w -> y"
  local coefs = {["w -> t"] = 1 / 18, ["t -> y"] = 1.05, ["w -> y"] = 2}
  local m = sem(g, coefs, {intercept = {w = 65}, sd = {w = 5}})
  local before = tostring(m)
  local d = m:simulate(1000000, {seed = 2018, binarize = {t = 3.5}})
  local crude = estimate{data = d, treatment = "t", outcome = "y", set = {}}
  local adj = estimate{data = d, treatment = "t", outcome = "y", set = "w"}
  eq(math.abs(crude.estimate - 5.33) < 0.1, true, "unadjusted " .. crude.estimate)
  eq(math.abs(adj.estimate - 1.05) < 0.02, true, "adjusted " .. adj.estimate)
  -- issue 12: models are values; binarize = applies to that draw only
  eq(m:exact(), true, "simulate leaves the model as it was")
  eq(tostring(m), before, "the same equations")
  eq(math.abs(m:effect("t", "y") - 1.05) < 1e-12, true, "the closed form of the continuous model")
  -- the model of the binarized data is built with sem's binarize =
  local mb = sem(g, coefs, {intercept = {w = 65}, sd = {w = 5}, binarize = {t = 3.5}})
  eq(mb:exact(), false, "binarized: no closed form")
  eq(mb:simulate(50, {seed = 7}).y[50], m:simulate(50, {seed = 7, binarize = {t = 3.5}}).y[50],
     "the same draw either way")
  raises(function() return mb:effect("t", "y") end, "give {draws = 100000}")
  local v, se = mb:effect("t", "y", {draws = 20000})
  eq(math.abs(v - 1.05) < 1e-9, true, "Monte Carlo effect of a binarized treatment")
  eq(se >= 0, true)
end)

-- Wright's rule: the total effect is the sum over directed paths of the
-- products of the coefficients (Wright 1934, Ann Math Stat 5).
local function path_tracing(edges, x, y)
  local out = {}
  for _, e in ipairs(edges) do
    out[e[1]] = out[e[1]] or {}
    table.insert(out[e[1]], e)
  end
  local function walk(v)
    if v == y then return 1 end
    local s = 0
    for _, e in ipairs(out[v] or {}) do s = s + e[3] * walk(e[2]) end
    return s
  end
  return walk(x)
end

local seed = 12345
local function rnd()   -- a small LCG for test graphs (Numerical Recipes constants)
  seed = (seed * 1664525 + 1013904223) % 4294967296
  return seed / 4294967296
end

test("m:effect equals path tracing on random DAGs", function()
  for _ = 1, 60 do
    local n = 3 + math.floor(rnd() * 6)
    local edges, text, coefs = {}, {}, {}
    for i = 1, n do text[#text + 1] = "v" .. i end
    for i = 1, n do
      for j = i + 1, n do
        if rnd() < 0.45 then
          local c = math.floor(rnd() * 200 - 100) / 50
          edges[#edges + 1] = {"v" .. i, "v" .. j, c}
          text[#text + 1] = "v" .. i .. " -> v" .. j
          coefs["v" .. i .. " -> v" .. j] = c
        end
      end
    end
    local m = sem(graph(table.concat(text, "\n")), coefs)
    for _ = 1, 4 do
      local a, b = 1 + math.floor(rnd() * n), 1 + math.floor(rnd() * n)
      if a < b then
        local want = path_tracing(edges, "v" .. a, "v" .. b)
        local got = m:effect("v" .. a, "v" .. b)
        eq(math.abs(got - want) < 1e-12 * (1 + math.abs(want)), true,
           string.format("v%d -> v%d: %g vs %g", a, b, got, want))
      end
    end
  end
end)

-- The least-squares coefficient on 10^6 simulated rows lies within four
-- standard errors of m:limit, for valid sets (where the limit is the
-- effect) and invalid ones (collider, M-structure, mediator).
test("m:limit agrees with least squares on simulated data", function()
  local cases = {
    {"z -> x -> y; z -> y; x -> c; y -> c", {"z"}, true},     -- valid
    {"z -> x -> y; z -> y; x -> c; y -> c", {"z", "c"}, false},  -- collider
    {"a -> x; a -> m; b -> m; b -> y; x -> y", {"m"}, false}, -- M-structure
    {"x -> k -> y; x -> y", {"k"}, false},                    -- mediator
    {"hidden u; u -> x; u -> y; x -> y; w -> x", {"w"}, false}, -- hidden confounder
  }
  for i, c in ipairs(cases) do
    local g = graph(c[1])
    local m = sem(g, {}, {default = 0.7})
    local d = m:simulate(1000000, {seed = 100 + i})
    local x = {"x"}
    for _, v in ipairs(c[2]) do x[#x + 1] = v end
    local fit = ols{data = d, y = "y", x = x}
    local lim = m:limit("x", "y", c[2])
    eq(math.abs(fit.coef.x - lim) < 4 * fit.se.x, true,
       string.format("%s given {%s}: %g vs limit %g (se %g)", c[1], table.concat(c[2], ","),
                     fit.coef.x, lim, fit.se.x))
    if c[3] then eq(math.abs(lim - m:effect("x", "y")) < 1e-12, true, "valid set: limit = effect") end
    if not c[3] then eq(math.abs(lim - m:effect("x", "y")) > 0.01, true, "invalid set is biased") end
  end
end)

test("m:cov equals the sample covariance within sampling error", function()
  local g = graph "a -> b -> c; a -> c; b <-> d; d -> c"
  local m = sem(g, {["a -> b"] = 0.8, ["b -> c"] = -0.5, ["a -> c"] = 0.3, ["d -> c"] = 1.1},
                {sd = {a = 2, d = 0.5}, cov = {["b <-> d"] = 0.3}})
  local S = m:cov()
  same_list(S.names, {"a", "b", "c", "d"})
  local d = m:simulate(1000000, {seed = 7})
  local n = #d
  local cols = {}
  for _, v in ipairs(S.names) do cols[v] = d[v]:values() end
  for _, u in ipairs(S.names) do
    for _, v in ipairs(S.names) do
      local su, sv, suv = 0, 0, 0
      local cu, cv = cols[u], cols[v]
      for r = 1, n do su = su + cu[r]; sv = sv + cv[r]; suv = suv + cu[r] * cv[r] end
      local sample = (suv - su * sv / n) / (n - 1)
      -- the SE of a sample covariance of normal data: sqrt((s_uu s_vv + s_uv^2) / n)
      local se = math.sqrt((S[u][u] * S[v][v] + S[u][v] ^ 2) / n)
      eq(math.abs(sample - S[u][v]) < 5 * se, true,
         string.format("cov(%s, %s): sample %g, implied %g", u, v, sample, S[u][v]))
    end
  end
end)

test("simulation is reproducible by seed, whatever the threads", function()
  local m = sem(graph "a -> b -> c", {}, {default = 0.5})
  local d1 = m:simulate(200000, {seed = 3, threads = 1})
  local d2 = m:simulate(200000, {seed = 3, threads = 2})
  eq(d1.c:sum(), d2.c:sum(), "same draws")
  eq(d1.c[199999], d2.c[199999])
  local d3 = m:simulate(200000, {seed = 4})
  eq(d3.c:sum() ~= d1.c:sum(), true, "another seed")
end)

-- Issue 13: the rows are drawn in blocks, each block's generator seeded
-- from the seed and the block's index, so every cell is the same on 1, 2,
-- 3 or all threads; here over four blocks (the last one short), with a
-- logistic node (uniforms drawn between the normals), a binarized node and
-- a hidden one.
test("every cell is the same on any number of threads", function()
  local g = graph "hidden h; h -> a; a -> b -> c; a -> c; b -> s; c -> s"
  local m = sem(g, {}, {default = 0.4, binary = "s", binarize = {b = 0.1}})
  local rows = 3 * 65536 + 5
  local one = m:simulate(rows, {seed = 11, threads = 1})
  same_list(one:names(), {"a", "b", "c", "s"})
  for _, th in ipairs({2, 3, 0}) do
    local d = m:simulate(rows, {seed = 11, threads = th})
    for _, v in ipairs(one:names()) do
      local x, y = one[v]:values(), d[v]:values()
      local differ = 0
      for r = 1, rows do if x[r] ~= y[r] then differ = differ + 1 end end
      eq(differ, 0, string.format("column %s on %d threads", v, th))
    end
  end
  -- the binary columns hold 0 and 1, and both occur
  eq(one.s:min(), 0); eq(one.s:max(), 1); eq(one.b:min(), 0); eq(one.b:max(), 1)
end)

test("bad input names the problem", function()
  local g = graph "a -> b; b -> c; hidden u; u -> a; u -> c; a <-> c"
  raises(function() return sem(g, {["a -> c"] = 1}) end, "the graph has no edge a -> c")
  raises(function() return sem(g, {["a -> b"] = 1}) end, "no coefficient for the edge")
  raises(function() return sem(g, {}, {default = 1, sd = {b = -1}}) end,
         "the sd of 'b' must be positive")
  raises(function() return sem(g, {}, {default = 1, cov = {["a <-> c"] = 5}}) end,
         "a <-> c", "not positive definite")
  raises(function() return sem(g, {}, {default = 1}) end, "no covariance for a <-> c")
  local m = sem(g, {}, {default = 1, cov = {["a <-> c"] = 0.2}})
  raises(function() return m:simulate(0) end, "simulate: n = 0 must be a whole number of at least 1")
  raises(function() return m:simulate(10, {binarize = {bb = 0}}) end, "did you mean 'b'?")
  raises(function() return m:effect("u", "c") end, "a hidden node has no data")
  raises(function() return sem(g, {["a => b"] = 1}) end, "is not an edge")
  local d = m:simulate(500, {seed = 1})
  raises(function() return compare{data = d, graph = g, treatment = "a", outcome = "c",
                                   sets = {{"u"}}, boot = 0} end,
         "names the hidden node 'u'")
end)

test("compare lists the default candidates beside the truth", function()
  local g = graph "z -> x -> y; z -> y; x -> c; y -> c"
  local m = sem(g, {}, {default = 0.5})
  local d = m:simulate(5000, {seed = 9})
  local c = compare{data = d, truth = m, treatment = "x", outcome = "y", boot = 0}
  local byset = {}
  for _, r in ipairs(c) do byset[r.set_text] = r end
  eq(byset["{}"].valid, false)
  eq(byset["{z}"].valid, true)
  eq(byset["{c, z}"].valid, false, "all covariates include the collider")
  eq(byset["{z}"].label, "minimal, optimal")
  eq(c.truth, 0.5)
  eq(math.abs(byset["{z}"].limit - 0.5) < 1e-12, true, "limit of a valid set")
  eq(tostring(c):find("why the invalid sets fail", 1, true) ~= nil, true)
end)

-- Issue 12: the error column showed four decimals (-14.7390); a reader
-- uses one.
test("compare shows the error percentage with one decimal", function()
  local g = graph "z -> x -> y; z -> y"
  local m = sem(g, {}, {default = 0.5})
  local c = compare{data = m:simulate(400, {seed = 3}), truth = m, treatment = "x", outcome = "y",
                    boot = 0}
  local empty
  for _, r in ipairs(c) do if r.set_text == "{}" then empty = r end end
  -- the error % is 100 (estimate - truth) / truth, the definition in compare's help
  eq(math.abs(empty.error_pct - 100 * (empty.estimate - 0.5) / 0.5) < 1e-9, true)
  local line = tostring(c):match("\n(  {}[^\n]*)")
  -- the columns end with error % and limit
  eq(line:match("(%S+)%s+%S+$"), string.format("%.1f", empty.error_pct), "one decimal in the table")
end)

-- Issue 9: values that were taken silently (a NaN default made every
-- coefficient NaN, "x" made them 0, a NaN covariance or cut was dropped),
-- and messages that named stack positions ("calling 'simulate' on bad
-- self") instead of the option.
test("sem refuses NaN, inf and non-numbers, naming the option", function()
  local g = graph "a -> b -> c"
  raises(function() return sem(g, {}, {default = 0 / 0}) end, "sem: default = nan must be a finite number")
  raises(function() return sem(g, {}, {default = "x"}) end, 'sem: default = "x" must be a finite number')
  raises(function() return sem(g, {}, {default = 1 / 0}) end, "sem: default = inf")
  raises(function() return sem(g, {["a -> b"] = 0 / 0, ["b -> c"] = 1}) end,
         "sem: the coefficient of a -> b = nan must be a finite number")
  raises(function() return sem(g, {["a -> b"] = -1 / 0, ["b -> c"] = 1}) end,
         "the coefficient of a -> b = -inf")
  raises(function() return sem(g, {["a -> b"] = "0.5", ["b -> c"] = 1}) end,
         'the coefficient of a -> b = "0.5" must be a finite number')
  local g2 = graph "a -> b; a <-> b"
  raises(function() return sem(g2, {}, {default = 1, cov = {["a <-> b"] = 0 / 0}}) end,
         "sem: the covariance of a <-> b = nan must be a finite number")
  raises(function() return sem(g2, {}, {default = 1, cov = {["a <-> b"] = "x"}}) end,
         'the covariance of a <-> b = "x"')
  raises(function() return sem(g, {}, {default = 1, sd = {a = 0 / 0}}) end, "sem: sd of 'a' = nan")
  raises(function() return sem(g, {}, {default = 1, intercept = {a = 1 / 0}}) end,
         "sem: intercept of 'a' = inf")
  raises(function() return sem(g, {}, {default = 1, binarize = {a = 0 / 0}}) end,
         "sem: binarize of 'a' = nan")
  raises(function() return sem(g, {}, {defualt = 1}) end, "sem: unknown option 'defualt'; did you mean 'default'?")
  raises(function() return sem(g, {}, {default = 1, binary = 3}) end,
         "sem: binary = must be a node name or a list of names, got 3")
  -- a single name for binary = once crashed the program (lua_next on a string)
  local m1 = sem(g, {}, {default = 1, binary = "c"})
  eq(m1:exact(), false, "binary = \"c\" makes c binary")
  eq(sem(g, {}, {default = 1, binary = {c = false}}):exact(), true, "{c = false} is not binary")
end)

test("simulate, effect and limit name their options", function()
  local m = sem(graph "a -> b -> c", {}, {default = 0.5})
  raises(function() return m:simulate(10, {binarize = {b = 0 / 0}}) end,
         "simulate: binarize: the cut of 'b' = nan must be a finite number")
  eq(m:exact(), true, "a refused binarize leaves the model as it was")
  raises(function() return m:simulate(10, {binarize = {a = 0, bb = 1}}) end, "did you mean 'b'?")
  eq(m:exact(), true, "... even when an earlier cut was good")
  raises(function() return m:simulate(-1) end, "simulate: n = -1 must be a whole number of at least 1")
  raises(function() return m:simulate(2.5) end, "simulate: n = 2.5 must be a whole number")
  raises(function() return m:simulate(0 / 0) end, "simulate: n = nan")
  raises(function() return m:simulate() end, "simulate: n = nil must be a whole number")
  raises(function() return m:simulate(10, {seed = 0 / 0}) end, "simulate: seed = nan must be a whole number")
  raises(function() return m:simulate(10, {threads = -1}) end, "simulate: threads = -1 must be a whole number")
  raises(function() return m:simulate(10, {sede = 1}) end, "simulate: unknown option 'sede'; did you mean 'seed'?")
  eq(#m:simulate(10.0, {seed = 3.0}), 10, "integral floats are whole numbers")
  raises(function() return m:effect("a", "c", {draws = 0 / 0}) end, "effect: draws = nan must be a whole number from 2")
  raises(function() return m:effect("a", "c", {draws = 1}) end, "effect: draws = 1")
  raises(function() return m:limit("a", "c", {}, {seed = 1.5}) end, "limit: seed = 1.5 must be a whole number")
  raises(function() return m:limit("a", "c", {}, {draw = 10}) end, "limit: unknown option 'draw'; did you mean 'draws'?")
end)

-- Issue 9: compare{sets = "z"} was ignored (ipairs over a string) and
-- compare{truth = 0/0} failed while printing ("table index is NaN").
test("compare checks every option", function()
  local g = graph "z -> x -> y; z -> y; w -> y"
  local m = sem(g, {}, {default = 0.5})
  local d = m:simulate(400, {seed = 5})
  local function cmp(extra)
    local a = {data = d, graph = g, treatment = "x", outcome = "y", boot = 0}
    for k, v in pairs(extra) do a[k] = v end
    return compare(a)
  end
  local c = cmp{sets = "w"}
  local byset = {}
  for _, r in ipairs(c) do byset[r.set_text] = r end
  eq(byset["{w}"] ~= nil and byset["{w}"].label, "yours", "a single name is one set of one node")
  eq(byset["{w}"].valid, false, "{w} leaves the back door through z open")
  c = cmp{sets = {"w", {"w", "z"}}}
  byset = {}
  for _, r in ipairs(c) do byset[r.set_text] = r end
  eq(byset["{w}"].label, "yours"); eq(byset["{w, z}"].label, "all covariates, optimal, yours")  -- O(x, y) = {w, z}: the parents of y but x
  raises(function() return cmp{sets = "ww"} end, "compare: sets: no node 'ww' in the graph; did you mean 'w'?")
  raises(function() return cmp{sets = 3} end, "compare: sets = must be a node name or a list of sets")
  raises(function() return cmp{sets = {{"w", 2}}} end, "compare: sets = item 1 holds 2, not a node name")
  raises(function() return cmp{truth = 0 / 0} end, "compare: truth = nan must be a finite number")
  raises(function() return cmp{truth = -1 / 0} end, "compare: truth = -inf")
  raises(function() return cmp{truth = "0.5"} end, "compare: truth = must be a number or a model")
  raises(function() return cmp{treatment = "xx"} end, "compare: treatment: no column 'xx'; did you mean 'x'?")
  raises(function() return cmp{methd = "ipw"} end, "compare: unknown argument 'methd'; did you mean 'method'?")
  raises(function() return cmp{method = "ipv"} end, "did you mean 'ipw'?")
  raises(function() return cmp{boot = 2.5} end, "compare: boot = 2.5 must be a whole number")
  raises(function() return cmp{level = 0 / 0} end, "compare: level = nan")
  raises(function() return cmp{seed = 0 / 0} end, "compare: seed = nan")
  raises(function() return cmp{threads = 1.5} end, "compare: threads = 1.5")
  raises(function() return cmp{graph = 3} end, "compare: graph = must be a graph")
  raises(function() return cmp{plot = true} end, "compare: plot = must be a file name")
  raises(function() return cmp{estimand = "ATX"} end, "compare: estimand = \"ATX\" is not one of ATE, ATT, ATC")
  eq(tostring(cmp{truth = 0.5}):find("truth 0.5000", 1, true) ~= nil, true, "a finite truth prints")
end)
