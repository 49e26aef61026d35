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
  raises(function() return estimate{data = d, treatment = "s", outcome = "y", set = "w"} end,
         "the treatment 's' has text values")
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
