-- Analytic SEs, clusters and BCa intervals of estimate{} through the Lua
-- layer: refusals, warnings, the BCa acceleration against the jackknife's,
-- and the result's fields.  The SEs themselves are checked against a
-- stacked sandwich in numpy (tests/oracle/sandwich_numpy.py) and their
-- coverage in tests/lua/test_coverage.lua.

local g = graph[[shade -> mulch; slope -> mulch; shade -> yield; slope -> yield; mulch -> yield]]
local m = sem(g, {["shade -> mulch"] = 0.8, ["slope -> mulch"] = -0.5, ["shade -> yield"] = 1,
                  ["slope -> yield"] = 0.5, ["mulch -> yield"] = 1.5}, {binary = {"mulch"}})
local d = m:simulate(60, {seed = 7})
local base = {data = d, treatment = "mulch", outcome = "yield", set = {"shade", "slope"}}
local function with(extra)
  local a = {}
  for k, v in pairs(base) do a[k] = v end
  for k, v in pairs(extra) do a[k] = v end
  return a
end

test("every method has an analytic SE by default, and says which", function()
  for _, meth in ipairs({"standardize", "ipw", "aipw"}) do
    local r = estimate(with{method = meth})
    eq(r.se > 0, true, meth .. " has an SE")
    eq(r.se_method, "sandwich", meth .. " SE source")
    eq(r.interval, "normal", meth .. " interval")
    eq(math.abs(r.lo - (r.estimate - 1.959963984540054 * r.se)) < 1e-12, true, meth .. " lo")
  end
  local r = estimate(with{method = "ipw", se = "ps known"})
  eq(r.se_method, "ps known")
  eq(tostring(r):find("propensities taken as known", 1, true) ~= nil, true, "printed")
end)

test("a ratio's interval is exp(log estimate +- z SE)", function()
  local dd = d:binarize("yield", 1, "high")
  local r = estimate{data = dd, treatment = "mulch", outcome = "high", set = {"shade", "slope"},
                     scale = "ratio"}
  eq(r.se_log_scale, true)
  local z = 1.959963984540054
  eq(math.abs(r.lo - math.exp(math.log(r.estimate) - z * r.se)) < 1e-12, true, "lo")
  eq(math.abs(r.hi - math.exp(math.log(r.estimate) + z * r.se)) < 1e-12, true, "hi")
end)

-- Efron and Tibshirani 1993, An Introduction to the Bootstrap, eq. 14.15:
-- the jackknife acceleration a = sum (mean - t_(i))^3 / (6 (sum (mean - t_(i))^2)^1.5).
-- The influence values give the same to first order (Efron 1987): within 10% at n = 300.
test("the BCa acceleration agrees with the jackknife's", function()
  local dj = m:simulate(300, {seed = 8})
  local r = estimate(with{data = dj, method = "ipw", boot = 1000, interval = "bca", seed = 3})
  local t = {}
  for i = 1, #dj do
    local di = dj:filter(function(_, j) return j ~= i end)
    t[i] = estimate{data = di, treatment = "mulch", outcome = "yield", set = {"shade", "slope"},
                    method = "ipw"}.estimate
  end
  local mean = 0
  for i = 1, #t do mean = mean + t[i] / #t end
  local s2, s3 = 0, 0
  for i = 1, #t do s2 = s2 + (mean - t[i]) ^ 2; s3 = s3 + (mean - t[i]) ^ 3 end
  local a = s3 / (6 * s2 ^ 1.5)
  eq(math.abs(r.bca_accel - a) <= 0.1 * math.abs(a) + 1e-4, true,
     string.format("acceleration %.6f beside the jackknife's %.6f", r.bca_accel, a))
  eq(r.interval, "bca")
  eq(r.lo, r.lo_bca)
  eq(r.lo_bca < r.estimate and r.estimate < r.hi_bca, true, "the estimate inside")
  eq(r.se_method, "bootstrap")
  eq(r.se_analytic > 0, true, "the analytic SE is kept beside")
  eq(tostring(r):find("BCa; percentile", 1, true) ~= nil, true, "printed with the others")
end)

test("clusters: the SE grows with correlated rows; one cluster is refused", function()
  local r = estimate(with{cluster = "shade"})   -- each row its own cluster
  local plain = estimate(base)
  eq(math.abs(r.se / plain.se - math.sqrt(60 / 59)) < 1e-9, true,
     "one row per cluster: the plain sandwich times sqrt(G/(G-1))")
  eq(r.clusters, 60)
  local found = false
  for _, w in ipairs(r.warnings) do found = found or w:find("60 clusters", 1, true) ~= nil end
  eq(found, false, "no warning at 60 clusters")
  local dd = d:with_column("site", function(row, i) return i % 5 end)
  local rc = estimate(with{data = dd, cluster = "site"})
  found = false
  for _, w in ipairs(rc.warnings) do found = found or w:find("5 clusters", 1, true) ~= nil end
  eq(found, true, "a warning below 30 clusters")
  local one = d:with_column("farm", function() return 1 end)
  raises(function() estimate(with{data = one, cluster = "farm"}) end, "holds one cluster")
  raises(function() estimate(with{cluster = "sahde"}) end, "cluster", "shade")
end)

test("bad requests are refused by name", function()
  raises(function() estimate(with{interval = "bca", boot = 200}) end, "boot = 1000")
  raises(function() estimate(with{interval = "percentile"}) end, "needs a bootstrap")
  raises(function() estimate(with{se = "ps known"}) end, "applies to method = \"ipw\"")
  raises(function() estimate(with{se = "sandwhich"}) end, "se =", "sandwich")
  raises(function() estimate(with{interval = "bcaa"}) end, "interval =", "bca")
  raises(function() balance{data = d, treatment = "mulch", set = {"shade"}, cluster = "shade"} end,
         "cluster")
end)
