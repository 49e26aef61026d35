-- The front-door and instrumental-variable routes of estimate{} and
-- compare{}: values by hand, against the product of coefficients from
-- ols{} (checked against NIST StRD and statsmodels in test_regress), against
-- the truth of a simulated linear model (m:effect), the bootstrap's
-- independence from the thread count, the graph's choice of a route, and
-- bad input.  The estimators themselves are checked against statsmodels in
-- tests/oracle/iv_statsmodels.py and tests/oracle/frontdoor_statsmodels.py.

local function frame(header, rows)
  local path = os.tmpname()
  local f = assert(io.open(path, "w"))
  f:write(header, "\n")
  for _, r in ipairs(rows) do f:write(table.concat(r, ","), "\n") end
  f:close()
  local d = read_csv(path)
  os.remove(path)
  return d
end

-- An invented reminder-letter trial of 8 patients: z = a letter was sent,
-- x = the patient came for screening, y = a score.  By hand:
--   letter:    x = 1, 1, 1, 0 (mean 0.75), y = 5, 6, 4, 2 (mean 4.25)
--   no letter: x = 0, 0, 1, 0 (mean 0.25), y = 1, 2, 4, 3 (mean 2.5)
--   Wald = (4.25 - 2.5) / (0.75 - 0.25) = 1.75 / 0.5 = 3.5
-- and 2SLS with one 0/1 instrument and no covariates is the Wald ratio
-- (Angrist and Pischke 2009, Mostly Harmless Econometrics, 4.1.2; from
-- memory).  First stage by hand: x on z has RSS 0.75 + 0.75 = 1.5 within
-- the arms and 8 x 0.25 = 2 about the grand mean 0.5, so
-- F = (2 - 1.5) / (1.5 / 6) = 2 on 1 and 6 df.
local letters = frame("z,x,y,site", {
  {1, 1, 5, "a"}, {1, 1, 6, "b"}, {1, 1, 4, "a"}, {1, 0, 2, "b"},
  {0, 0, 1, "a"}, {0, 0, 2, "b"}, {0, 1, 4, "a"}, {0, 0, 3, "b"}})

test("iv: the Wald estimator and 2SLS by hand", function()
  local r = estimate{data = letters, treatment = "x", outcome = "y", method = "iv", instrument = "z"}
  eq(math.abs(r.wald_itt - 1.75) < 1e-12, true, "difference in y between the letter arms")
  eq(math.abs(r.wald_uptake - 0.5) < 1e-12, true, "difference in uptake")
  eq(math.abs(r.wald - 3.5) < 1e-12, true, "Wald = 3.5")
  eq(math.abs(r.estimate - 3.5) < 1e-12, true, "2SLS = Wald = 3.5, got " .. r.estimate)
  eq(math.abs(r.first_f - 2) < 1e-12, true, "first-stage F = 2, got " .. r.first_f)
  eq(r.first_df1, 1); eq(r.first_df2, 6)
  local text = tostring(r)
  eq(text:find("Wald", 1, true) ~= nil, true, "the Wald ratio is printed")
  eq(text:find("weak instrument: the first-stage F is 2, below 10 (Staiger and Stock 1997)", 1, true) ~= nil,
     true, "weak-instrument warning in " .. text)
  eq(text:find("compliers", 1, true) ~= nil, true, "the local-effect caution")
  eq(text:find("Imbens and Angrist 1994", 1, true) ~= nil, true, "its source")
  eq(text:find("no substitute for qualified epidemiological or clinical judgement", 1, true) ~= nil,
     true, "the health caution")
  -- with a covariate there is no Wald ratio (it needs no set)
  local s = estimate{data = letters, treatment = "x", outcome = "y", method = "iv", instrument = "z",
                     set = "site"}
  eq(s.wald, nil, "no Wald ratio with a set")
end)

-- A linear front-door model (Pearl 2009, Causality, fig. 3.5, from
-- memory): u hidden, u -> x, u -> y, x -> m -> y.  The treatment is x
-- binarized at 0, so the effect of x on y is 0.9 x 0.7 = 0.63 whatever the
-- binarization (linear below x).
local fd_graph = graph "hidden u; u -> x; u -> y; x -> m -> y"
local fd_model = sem(fd_graph, {["u -> x"] = 0.8, ["u -> y"] = 1.0, ["x -> m"] = 0.9,
                                ["m -> y"] = 0.7})
local fd = fd_model:simulate(40000, {seed = 17, binarize = {x = 0}})

test("frontdoor: linear models give the product of coefficients and Sobel's SE", function()
  local r = estimate{data = fd, treatment = "x", outcome = "y", method = "frontdoor", via = "m"}
  local a = ols{data = fd, y = "m", x = {"x"}}
  local b = ols{data = fd, y = "y", x = {"x", "m"}}
  local prod = a.coef.x * b.coef.m
  eq(math.abs(r.estimate - prod) < 1e-12 * math.abs(prod), true,
     string.format("front-door %.17g against a b = %.17g", r.estimate, prod))
  -- Sobel 1982: sqrt(a^2 se_b^2 + b^2 se_a^2)
  local sobel = math.sqrt(a.coef.x ^ 2 * b.se.m ^ 2 + b.coef.m ^ 2 * a.se.x ^ 2)
  eq(math.abs(r.se - sobel) < 1e-10 * sobel, true,
     string.format("delta-method SE %.17g against Sobel %.17g", r.se, sobel))
  eq(r.product, true)
  -- against the truth, within 4 SE (the linear model makes m:effect exact
  -- even with x binarized: its Monte Carlo SE is 0)
  local truth, tse = fd_model:effect("x", "y", {draws = 100000, seed = 3})
  eq(math.abs(truth - 0.63) < 1e-9, true, "m:effect = 0.9 x 0.7")
  eq(math.abs(r.estimate - truth) < 4 * math.sqrt(r.se ^ 2 + tse ^ 2), true,
     string.format("estimate %.4f, truth %.4f, SE %.4f", r.estimate, truth, r.se))
  -- adjustment cannot do it: the unadjusted difference is far off
  local naive = estimate{data = fd, treatment = "x", outcome = "y", set = {}}
  eq(math.abs(naive.estimate - truth) > 20 * r.se, true, "the confounded contrast is biased")
end)

test("frontdoor and iv: the bootstrap is identical for 1 and 2 threads", function()
  local e = fd:binarize("m", 0, "mb")
  local function run(threads, seed)
    return estimate{data = e, treatment = "x", outcome = "y", method = "frontdoor", via = {"mb"},
                    boot = 40, seed = seed, threads = threads}
  end
  local a, b, c = run(1, 5), run(2, 5), run(2, 6)
  eq(a.se, b.se, "se"); eq(a.lo, b.lo, "lo"); eq(a.hi, b.hi, "hi")
  eq(c.se ~= a.se, true, "another seed, another bootstrap")
  local function iv(threads)
    return estimate{data = letters, treatment = "x", outcome = "y", method = "iv", instrument = "z",
                    boot = 40, seed = 9, threads = threads}
  end
  local p, q = iv(1), iv(2)
  eq(p.se, q.se, "iv se"); eq(p.lo, q.lo, "iv lo")
end)

test("frontdoor: no analytic SE with a logistic mediator says so", function()
  local e = fd:binarize("m", 0, "mb")
  local r = estimate{data = e, treatment = "x", outcome = "y", method = "frontdoor", via = "mb"}
  eq(r.se, nil, "no SE")
  eq(tostring(r):find("no analytic standard error for this front-door estimate", 1, true) ~= nil, true)
  -- with a 0/1 mediator and a linear outcome, by the formula: b (P(m=1|x=1) - P(m=1|x=0)),
  -- the logistic model of mb on x being saturated (its fitted probabilities
  -- are the arm proportions)
  local p = {[0] = {0, 0}, [1] = {0, 0}}
  for i = 1, #e do local g = p[e.x[i]]; g[1] = g[1] + e.mb[i]; g[2] = g[2] + 1 end
  local b = ols{data = e, y = "y", x = {"x", "mb"}}
  local want = b.coef.mb * (p[1][1] / p[1][2] - p[0][1] / p[0][2])
  eq(math.abs(r.estimate - want) < 1e-8 * math.abs(want), true,
     string.format("%.17g against %.17g", r.estimate, want))
end)

test("bad input to the routes names the option", function()
  local function est(extra)
    local a = {data = fd, treatment = "x", outcome = "y"}
    for k, v in pairs(extra) do a[k] = v end
    return function() local r = estimate(a); return r end
  end
  raises(est{method = "iv", instrument = "zz"}, "estimate: instrument: no column 'zz'")
  raises(est{method = "iv", instrument = "x"}, "estimate: instrument = holds the treatment 'x'")
  raises(est{method = "iv", instrument = "y"}, "estimate: instrument = holds the outcome 'y'")
  raises(est{method = "iv", instrument = "m", set = {"m"}}, "instrument = 'm' is also in set =")
  raises(est{method = "iv"}, 'estimate: method = "iv" needs instrument = a column')
  raises(est{method = "iv", instrument = "m", scale = "ratio"}, 'method = "iv" estimates a difference')
  raises(est{method = "iv", instrument = "m", via = "m"}, 'via = applies to method = "frontdoor"')
  raises(est{method = "frontdoor", via = {"m", "x"}}, "estimate: via = holds the treatment 'x'")
  raises(est{method = "frontdoor", via = "y"}, "estimate: via = holds the outcome 'y'")
  raises(est{method = "frontdoor", via = {"m", "m"}}, "via = names 'm' twice")
  raises(est{method = "frontdoor", via = "mm"}, "estimate: via: no column 'mm'; did you mean 'm'?")
  raises(est{method = "frontdoor", via = {}}, "via = must name the mediators")
  raises(est{method = "frontdoor"}, 'method = "frontdoor" needs via = {mediators}')
  raises(est{method = "frontdoor", via = "m", set = {}}, 'set = does not apply to method = "frontdoor"')
  raises(est{method = "frontdoor", via = "m", estimand = "ATT"}, "ATT and ATC are not available")
  raises(est{method = "frontdoor", via = "m", instrument = "m"}, 'instrument = applies to method = "iv"')
  raises(est{via = "m"}, 'estimate: via = applies to method = "frontdoor"')
  raises(est{instrument = "m", set = {}}, 'estimate: instrument = applies to method = "iv"')
  raises(est{method = "frontdor", via = "m"}, "did you mean 'frontdoor'?")
  raises(est{method = "frontdoor", via = "m", truncate = {1, 99}}, 'truncate = applies to method = "ipw"')
  -- a treatment that is not 0/1: the front-door estimator needs one
  raises(function() return estimate{data = fd, treatment = "m", outcome = "y", method = "frontdoor",
                                    via = "x"} end,
         "estimate: treatment = 'm' takes values other than 0 and 1", 'method = "frontdoor" needs a 0/1 treatment')
  -- an instrument with one value moves nothing
  local c = letters:with_column("one", {1, 1, 1, 1, 1, 1, 1, 1})
  raises(function() return estimate{data = c, treatment = "x", outcome = "y", method = "iv",
                                    instrument = "one"} end,
         "the instrument 'one' takes the single value 1")
  raises(function() return estimate{data = letters, treatment = "x", outcome = "y", method = "iv",
                                    instrument = "site"} end,
         "the instrument 'site' has text values")
  local msg = raises(est{method = "iv", instrument = "x"}, "estimate:")
  eq(msg:find("test_iv.lua", 1, true) ~= nil, true, "the user's line in " .. msg)
  eq(msg:find("lua/sluice", 1, true), nil, "no file of the Lua layer in " .. msg)
end)

-- The routes the graph names (g:frontdoor, g:instruments, g:identify).
-- Graphs: the front-door graph (Pearl 2009, Causality, 3.3.2, fig. 3.5);
-- an instrument z of x given w, with x and y confounded by a hidden u; the
-- bow arc x -> y, x <-> y (not identified; Pearl 2009, 3.5, from memory);
-- the napkin graph (identified, but by no adjustment set; Pearl 2009, 4.3.3
-- and Shpitser and Pearl 2006, from memory).
local iv_graph = graph "hidden u; u -> x; u -> y; z -> x; w -> z; w -> y; x -> y"
local iv_model = sem(iv_graph, {["u -> x"] = 0.8, ["u -> y"] = 1.0, ["z -> x"] = 1.0,
                                ["w -> z"] = 0.6, ["w -> y"] = 0.5, ["x -> y"] = 0.4})
local ivd = iv_model:simulate(40000, {seed = 23})

test("graph = picks the front-door set and the instrument", function()
  local r = estimate{data = fd, treatment = "x", outcome = "y", graph = fd_graph, method = "frontdoor"}
  same_list(r.via, {"m"})
  eq(r.set_reason, "the front-door set of the graph")
  local s = estimate{data = fd, treatment = "x", outcome = "y", method = "frontdoor", via = "m"}
  eq(r.estimate, s.estimate, "the same estimate as via = \"m\"")
  local v = estimate{data = ivd, treatment = "x", outcome = "y", graph = iv_graph, method = "iv"}
  same_list(v.instrument, {"z"}); same_list(v.set, {"w"})
  eq(v.set_reason, "the instrument of the graph")
  -- 2SLS against the truth of the linear model, within 4 SE
  local truth = iv_model:effect("x", "y")
  eq(math.abs(truth - 0.4) < 1e-12, true, "m:effect")
  eq(math.abs(v.estimate - truth) < 4 * v.se, true,
     string.format("2SLS %.4f, truth %.4f, SE %.4f", v.estimate, truth, v.se))
  -- instrument = alone takes the set the graph lists with it
  local t = estimate{data = ivd, treatment = "x", outcome = "y", graph = iv_graph, method = "iv",
                     instrument = "z"}
  same_list(t.set, {"w"})
  eq(t.estimate, v.estimate)
end)

test("graph = refuses a route the graph does not have, with the graph's reason", function()
  raises(function() return estimate{data = ivd, treatment = "x", outcome = "y", graph = iv_graph,
                                    method = "iv", instrument = "w"} end,
         "estimate: instrument = 'w' given {} is not an instrument for x -> y in the graph")
  raises(function() return estimate{data = ivd, treatment = "x", outcome = "y", graph = iv_graph,
                                    method = "iv", instrument = "z", set = {}} end,
         "instrument = 'z' given {} is not an instrument")
  raises(function() return estimate{data = fd, treatment = "x", outcome = "y", graph = fd_graph:with("m <-> y"),
                                    method = "frontdoor", via = "m"} end,
         "estimate: via = {m} is not a front-door set for x -> y in the graph")
  raises(function() return estimate{data = fd, treatment = "x", outcome = "y", graph = fd_graph,
                                    method = "frontdoor", via = "u"} end,
         "via = names 'u', hidden in the graph: it has no data")
  raises(function() return estimate{data = ivd, treatment = "x", outcome = "y", graph = iv_graph,
                                    method = "frontdoor"} end,
         "estimate: graph = admits no front-door set for x -> y", "an instrument z given {w}")
  raises(function() return estimate{data = fd, treatment = "x", outcome = "y", graph = fd_graph,
                                    method = "iv"} end,
         "estimate: graph = shows no instrument for x -> y", 'method = "frontdoor", via = {"m"}')
end)

test("estimate{graph =} with no adjustment set names the route and the call", function()
  local msg = raises(function() return estimate{data = fd, treatment = "x", outcome = "y", graph = fd_graph} end,
    "estimate: the graph admits no valid adjustment set for x -> y",
    "a front-door set {m}",
    'estimate{data = ..., treatment = "x", outcome = "y", method = "frontdoor", via = {"m"}}',
    "the general formula P(y | do(x)) = Σ_m P(m | x) Σ_x' P(y | x', m) P(x')")
  raises(function() return estimate{data = ivd, treatment = "x", outcome = "y", graph = iv_graph} end,
    "an instrument z given {w}",
    'estimate{data = ..., treatment = "x", outcome = "y", method = "iv", instrument = "z", set = {"w"}}')
  -- the bow arc: nothing identifies the effect
  raises(function() return estimate{data = ivd, treatment = "x", outcome = "y",
                                    graph = graph "x -> y; x <-> y; z; w"} end,
    "no valid adjustment set", "none: the effect of x on y is not identified",
    "no estimator recovers it")
  -- the napkin: identified by the general formula alone
  local napkin = graph "w1 -> w2 -> x -> y; w1 <-> x; w1 <-> y"
  local nd = ivd:with_column("w1", ivd.w:values()):with_column("w2", ivd.z:values())
  raises(function() return estimate{data = nd, treatment = "x", outcome = "y", graph = napkin} end,
    "the general formula P(y | do(x)) =", 'g:identify("x", "y"):evaluate(data')
end)

test("estimate{graph =} says which set it used when the graph has no optimal set", function()
  -- whatever g:optimal answers, estimate says the same: the optimal set, or
  -- the smallest minimal set and g:optimal's reason
  local g = graph "hidden u; x -> y; u -> y; u -> w; v -> x; v -> y"
  local d = iv_model:simulate(200, {seed = 1})
  d = d:with_column("v", d.z:values())
  local o, why = g:optimal("x", "y")
  local r = estimate{data = d, treatment = "x", outcome = "y", graph = g}
  if o then
    eq(r.set_reason, "the optimal set O(X, Y) of the graph")
  else
    local sets = g:adjust("x", "y")
    same_list(r.set, sets[1])
    local text = type(why[1]) == "table" and why[1].text or tostring(why[1])
    eq(r.set_reason, "the smallest minimal set of the graph; no optimal set: " .. text)
  end
end)

test("compare{} shows the front-door and IV routes beside the sets", function()
  local c = compare{data = fd, truth = fd_model, treatment = "x", outcome = "y", boot = 0}
  local row
  for _, r in ipairs(c) do if r.label == "front-door" then row = r end end
  eq(row ~= nil, true, "a front-door row by default: the graph has no adjustment set")
  eq(row.set_text, "front-door via {m}")
  local direct = estimate{data = fd, treatment = "x", outcome = "y", method = "frontdoor", via = "m"}
  eq(row.estimate, direct.estimate)
  eq(tostring(c):find("front-door via {m}", 1, true) ~= nil, true)
  -- routes = false leaves them out; routes = true adds them where sets exist
  local c2 = compare{data = fd, truth = fd_model, treatment = "x", outcome = "y", boot = 0, routes = false}
  for _, r in ipairs(c2) do eq(r.label ~= "front-door", true, "no route rows") end
  local c3 = compare{data = ivd, truth = iv_model, treatment = "x", outcome = "y", boot = 0, routes = true}
  local iv
  for _, r in ipairs(c3) do if r.label == "instrument" then iv = r end end
  eq(iv.set_text, "instrument z | {w}")
  eq(math.abs(iv.estimate - 0.4) < 4 * iv.se, true, "the IV row near the truth")
  raises(function() return compare{data = fd, truth = fd_model, treatment = "x", outcome = "y",
                                   routes = "yes"} end, 'compare: routes = "yes" must be true or false')
end)
