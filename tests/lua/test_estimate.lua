-- Effect estimates through the Lua layer: argument checks, the bootstrap's
-- independence from the thread count, graph-chosen sets and diagnostics.
-- The numbers themselves are checked against statsmodels in
-- tests/oracle/estimate_statsmodels.py; here the data are a small invented
-- orchard trial with values worked out by hand where a value is asserted.

-- mulching (t) of 8 rows of trees, slope (w) and harvest (y): a design where
-- y = 2 + 3 t + w exactly, so every valid method recovers 3 (by hand)
local path = os.tmpname()
local f = assert(io.open(path, "w"))
f:write("t,w,y,v,s\n")
local rows = {{0, 0}, {0, 1}, {0, 2}, {1, 0}, {1, 1}, {1, 2}, {0, 1}, {1, 1}}
for i, r in ipairs(rows) do
  f:write(string.format("%d,%d,%d,%d,%s\n", r[1], r[2], 2 + 3 * r[1] + r[2], i % 3,
                        i <= 4 and "north" or "south"))
end
f:close()
local d = read_csv(path)
os.remove(path)

test("an exact linear design gives the exact effect", function()
  local r = estimate{data = d, treatment = "t", outcome = "y", set = "w"}
  eq(math.abs(r.estimate - 3) < 1e-9, true, "standardization recovers 3")
  eq(r.n, 8)
  local m = ols{data = d, y = "y", x = {"t", "w"}}
  eq(math.abs(m.coef.t - 3) < 1e-9, true, "ols slope")
  eq(math.abs(m.coef["(intercept)"] - 2) < 1e-9, true, "ols intercept")
  local p = m:predict(d)
  eq(math.abs(p[4] - 5) < 1e-9, true, "prediction for t=1, w=0")
end)

-- Issue 12: "ESS 1915.6 (treated 698.3, control 1522.5)" read as parts of a
-- whole that did not add up; each figure is Kish's (sum w)^2 / sum w^2, over
-- all rows and within each group, and the label now says so.
test("ipw labels the overall and within-group effective sample sizes", function()
  local r = estimate{data = d, treatment = "t", outcome = "y", set = "w", method = "ipw"}
  -- by hand: t is independent of w here (each w has one treated and one
  -- control row per pair), so every propensity is 1/2, every weight 2:
  -- overall 16^2 / (8 * 4) = 8, within each group of 4 rows 8^2 / 16 = 4
  eq(math.abs(r.ess - 8) < 1e-9, true, "overall")
  eq(math.abs(r.ess_treated - 4) < 1e-9, true, "treated")
  eq(tostring(r):find("ESS        8.0 overall; within groups: treated 4.0, control 4.0", 1, true) ~= nil,
     true, tostring(r))
end)

-- Issue 12: the documented form balance{data =, treatment =, graph =} (and
-- overlap{}) failed inside g:optimal for want of an outcome; without one the
-- treatment's parents are the covariates (they block every back-door trail).
test("balance and overlap take graph = without an outcome", function()
  local m = sem(graph "z -> x -> y; z -> y; w -> x", {}, {default = 0.5})
  local dd = m:simulate(300, {seed = 1}):binarize("x", 0, "t")
  local g = graph "z -> t -> y; z -> y; w -> t"
  local b = balance{data = dd, treatment = "t", graph = g}
  local s = balance{data = dd, treatment = "t", set = {"w", "z"}}
  eq(#b, 2)
  for i = 1, 2 do
    eq(b[i].covariate, s[i].covariate)
    eq(b[i].after, s[i].after, "the same weights as with the parents given")
  end
  -- SMD before weighting by its definition (Austin 2009): difference of the
  -- group means over the root of the mean of the two variances
  local sum = {[0] = {0, 0, 0}, [1] = {0, 0, 0}}
  for i = 1, #dd do
    local g2 = sum[dd.t[i]]
    g2[1], g2[2], g2[3] = g2[1] + 1, g2[2] + dd.w[i], g2[3] + dd.w[i] ^ 2
  end
  local function mv(g2) local mu = g2[2] / g2[1]; return mu, g2[3] / g2[1] - mu * mu end
  local m1, v1 = mv(sum[1])
  local m0, v0 = mv(sum[0])
  eq(math.abs(b[1].before - (m1 - m0) / math.sqrt((v1 + v0) / 2)) < 1e-9, true, "SMD of w")
  eq(overlap{data = dd, treatment = "t", graph = g}.n, 300)
  raises(function() balance{data = dd, treatment = "t", graph = graph "z -> t -> y; w <-> t"} end,
         "balance: graph = alone cannot choose the covariates", "hidden common cause with 'w'",
         "give outcome =")
  raises(function() overlap{data = dd, treatment = "t", graph = graph "z -> x -> y"} end,
         "overlap: treatment = 't' is not a node of graph =")
end)

test("the bootstrap is identical for 1 and 2 threads", function()
  local a = estimate{data = d, treatment = "t", outcome = "y", set = {"w", "v"},
                     boot = 60, seed = 11, threads = 1, interactions = false}
  local b = estimate{data = d, treatment = "t", outcome = "y", set = {"w", "v"},
                     boot = 60, seed = 11, threads = 2, interactions = false}
  eq(a.se, b.se, "se"); eq(a.lo, b.lo, "lo"); eq(a.hi, b.hi, "hi")
  local c = estimate{data = d, treatment = "t", outcome = "y", set = {"w", "v"},
                     boot = 60, seed = 12, threads = 2, interactions = false}
  eq(c.se ~= a.se, true, "another seed, another bootstrap")
end)

test("graph = uses the optimal set and says so", function()
  local g = graph "w -> t; w -> y; t -> y; v -> y"
  local r = estimate{data = d, treatment = "t", outcome = "y", graph = g}
  same_list(r.set, {"v", "w"})
  eq(r.set_reason, "the optimal set O(X, Y) of the graph")
  eq(tostring(r):find("An estimate is only as good as the graph", 1, true) ~= nil, true)
end)

test("bad input names the problem", function()
  raises(function() return estimate{data = d, treatment = "tt", outcome = "y", set = "w"} end,
         "no column 'tt'", "did you mean 't'?")
  raises(function() return estimate{data = d, treatment = "t", outcome = "y", set = {"w", "y"}} end,
         "the outcome 'y' is also in the adjustment set")
  raises(function() return estimate{data = d, treatment = "w", outcome = "y", set = "v", method = "ipw"} end,
         "ipw needs a 0/1 treatment")
  raises(function() return estimate{data = d, treatment = "t", outcome = "y", set = "w", method = "ipv"} end,
         "did you mean 'ipw'?")
  raises(function() return estimate{data = d, treatment = "t", outcome = "y", set = "w", bootstrap = 9} end,
         "unknown argument 'bootstrap'")
  raises(function() return estimate{data = d, treatment = "t", outcome = "y"} end,
         "give set = {covariates}, or graph = g")
  local one = d:filter(function(r) return r.t == 1 end)
  raises(function() return estimate{data = one, treatment = "t", outcome = "y", set = "w"} end,
         "takes the single value 1")
  -- a text treatment with two levels is binary (tests/lua/test_treatment_coding.lua)
  eq(estimate{data = d, treatment = "s", outcome = "y", set = "w"}.treated_level, "south")
  raises(function() return ols{data = d, y = "y", x = {"t", "t"}} end, "collinear")
  raises(function() return estimate{data = 3, treatment = "t"} end, "data = must be a data frame")
end)

test("balance and overlap", function()
  local b = balance{data = d, treatment = "t", set = {"w", "s"}}
  eq(b[1].covariate, "w"); eq(b[2].covariate, "s=south")
  -- by hand: w has the same mean (1) in both arms; SMD before = 0
  eq(math.abs(b[1].before) < 1e-12, true, "w is balanced before weighting")
  local out = os.tmpname() .. ".svg"
  local o = overlap{data = d, treatment = "t", set = "w", plot = out}
  eq(o.groups[1].n + o.groups[2].n, 8)
  local svg = assert(io.open(out)):read("a")
  eq(svg:find("<svg", 1, true) ~= nil, true, "an SVG picture")
  os.remove(out)
end)

-- Issue 9: options that were taken silently (level = 0/0 printed "-nan% CI",
-- contrast = 0 gave 0, threads = 0/0 reached the library) and errors that
-- cited lua/sluice/estimate.lua and the primitive '_estimate'.
test("estimate refuses NaN, inf and impossible option values by name", function()
  local function est(extra)
    local a = {data = d, treatment = "t", outcome = "y", set = "w"}
    for k, v in pairs(extra) do a[k] = v end
    return function() return estimate(a) end
  end
  raises(est{level = 0 / 0}, "estimate: level = nan must lie strictly between 0 and 1")
  raises(est{level = 1}, "estimate: level = 1 must lie strictly between 0 and 1")
  raises(est{level = 95}, "level = 95")
  raises(est{contrast = 0}, "estimate: contrast = 0 must be a finite number other than 0")
  raises(est{contrast = 0 / 0}, "estimate: contrast = nan")
  raises(est{contrast = 1 / 0}, "estimate: contrast = inf")
  raises(est{boot = 0 / 0}, "estimate: boot = nan must be a whole number of replicates")
  raises(est{boot = 2.5}, "estimate: boot = 2.5")
  raises(est{seed = 0 / 0}, "estimate: seed = nan must be a whole number")
  raises(est{seed = 1.5}, "estimate: seed = 1.5")
  raises(est{threads = 0 / 0}, "estimate: threads = nan must be a whole number")
  raises(est{threads = -1}, "estimate: threads = -1")
  raises(est{interactions = "no"}, 'estimate: interactions = "no" must be true or false')
  raises(est{truncate = {0 / 0, 99}, method = "ipw"}, "estimate: truncate = {lo, hi}")
  raises(est{truncate = {99, 1}, method = "ipw"}, "0 <= lo < hi <= 100")
  -- whole numbers written as floats are whole numbers
  local a = estimate{data = d, treatment = "t", outcome = "y", set = "w", boot = 20.0, seed = 3.0}
  eq(a.boot + a.boot_failed, 20, "boot = 20.0 replicates")
  local msg = raises(est{level = 0 / 0}, "estimate:")
  eq(msg:find("lua/sluice", 1, true), nil, "no file of the Lua layer in " .. msg)
  msg = raises(function()   -- not a tail call, so the caller's line is known
                 local r = estimate{data = d, treatment = "tt", outcome = "y", set = "w"}
                 return r
               end, "estimate: treatment: no column 'tt'; did you mean 't'?")
  eq(msg:find("'_estimate'", 1, true), nil, "no primitive's name in " .. msg)
  eq(msg:find("test_estimate.lua", 1, true) ~= nil, true, "the user's line in " .. msg)
  raises(function() return estimate{data = d, treatment = "t", outcome = "y", set = {"w", "vv"}} end,
         "estimate: set: no column 'vv'; did you mean 'v'?")
  raises(function() return ols{data = d, y = "yy", x = "t"} end, "ols: y: no column 'yy'; did you mean 'y'?")
end)

-- A ratio of means with a control mean at or below zero has no meaning
-- (its sign flips with the coding of the outcome).  Data by hand: y is 2, 3,
-- 4, 3 among the controls (mean 3) and 5, 6, 7, 6 among the treated (mean
-- 6), so y - 4 has means -1 and 2.
test("a ratio scale with a negative control mean is refused", function()
  local e = d:with_column("yneg", (function()
    local v = {}
    for i = 1, #d do v[i] = d.y[i] - 4 end
    return v
  end)())
  raises(function() return estimate{data = e, treatment = "t", outcome = "yneg", set = {}, scale = "ratio"} end,
         "estimate: scale = \"ratio\" needs positive mean outcomes", "the mean of 'yneg' is -1 under control and 2 under treatment",
         "use scale = \"difference\"")
  -- y itself: means 3 (control) and 6 (treated), ratio 2 by hand
  local r = estimate{data = d, treatment = "t", outcome = "y", set = {}, scale = "ratio"}
  eq(math.abs(r.estimate - 2) < 1e-12, true, "ratio of positive means")
end)

test("balance refuses a covariate that is the treatment", function()
  raises(function() return balance{data = d, treatment = "t", set = {"w", "t"}} end,
         "balance: set = holds the treatment 't': a covariate cannot be the treatment")
  local e = d:with_column("t_copy", d.t:values())
  raises(function() return balance{data = e, treatment = "t", set = {"w", "t_copy"}} end,
         "balance: the covariate 't_copy' takes one value among the treated and another among the controls")
  local f = d:with_column("t_scaled", (function()
    local v = {}
    for i = 1, #d do v[i] = 10 * d.t[i] + 5 end
    return v
  end)())
  raises(function() return balance{data = f, treatment = "t", set = {"t_scaled"}} end,
         "'t_scaled' takes one value among the treated")
  raises(function() return overlap{data = d, treatment = "t", set = "w", bins = 0 / 0} end,
         "overlap: bins = nan must be a whole number from 1 to 1000")
end)
