-- ols{} and logit{}: the chosen standard error (se =, cluster =), weights,
-- intervals and odds ratios through the Lua layer, their printing and
-- their refusals.  The numbers on real data are checked against
-- statsmodels in tests/oracle/regress_se_statsmodels.py; here the model is
-- the mean (an intercept alone), whose every covariance is worked by hand
-- (the same case as test_regress.c): y = 1, 2, 4, 7, 6 has mean 4,
-- residuals -3, -2, 0, 3, 2 (sum of squares 26) and every leverage 1/5, so
--   classical var 26 / (5 * 4) = 1.3, HC0 26 / 25 = 1.04, HC1 1.04 * 5/4 = 1.3,
--   HC3 (26 / 0.8^2) / 25 = 1.625, clusters a = {1,2}, b = {3,4}, c = {5}:
--   score sums -5, 3, 2, (25 + 9 + 4) / 25 * 3/2 * (4/4) = 2.28 on 2 df.
-- Weights w = 1, 2, 1, 1, 3 (sum 8): mean 34/8 = 4.25, sum w e^2 = 37.5,
-- classical var 37.5 / 7 / 8 on 7 df; HC0 sum w^2 e^2 / 64 = 66 / 64;
-- Kish's effective size 8^2 / 16 = 4.

local path = os.tmpname()
local f = assert(io.open(path, "w"))
f:write("y,yb,g,w,wneg,wna,wz,wtxt,one,gna\n")
local rows = {
  {1, 1, "a", 1, 1, 1, 0, "x", "k", "a"},
  {2, 0, "a", 2, 1, "", 0, "x", "k", "a"},
  {4, 0, "b", 1, -1, 1, 0, "x", "k", ""},
  {7, 1, "b", 1, 1, 1, 0, "x", "k", "b"},
  {6, 1, "c", 3, 1, 1, 0, "x", "k", "c"},
}
for _, r in ipairs(rows) do
  local cells = {}
  for j, v in ipairs(r) do cells[j] = tostring(v) end
  f:write(table.concat(cells, ","), "\n")
end
f:close()
local d = read_csv(path)
os.remove(path)

local function near(a, b, tol, what)
  if not (math.abs(a - b) <= (tol or 1e-12) * math.max(1, math.abs(b))) then
    error(string.format("%s: got %.17g, expected %.17g", what or "value", a, b), 2)
  end
end

local I = "(intercept)"

test("each se = gives the hand-worked variance of the mean", function()
  local want = {classical = 1.3, HC0 = 1.04, HC1 = 1.3, HC3 = 1.625}
  for kind, v in pairs(want) do
    local m = ols{data = d, y = "y", se = kind}
    near(m.coef[I], 4, 1e-14, kind .. " mean")
    near(m.se[I], math.sqrt(v), 1e-13, kind .. " SE")
    eq(m.se_method, kind)
    eq(m.df, 4)
    near(m.se_classical[I], math.sqrt(1.3), 1e-13, "classical SE beside it")
    near(m.robust_se[I], math.sqrt(1.625), 1e-13, "robust_se stays HC3")
  end
end)

test("cluster = alone means se = \"cluster\": G - 1 df, the t interval", function()
  local m = ols{data = d, y = "y", cluster = "g"}
  eq(m.se_method, "cluster")
  eq(m.clusters, 3)
  eq(m.df, 2)
  near(m.se[I], math.sqrt(2.28), 1e-13, "cluster SE")
  -- t with 2 df in closed form: P(|T| > t) = 1 - t / sqrt(t^2 + 2), and its
  -- 0.975 quantile (2p - 1) / sqrt(2 p (1 - p)) = 4.302652729911275
  local t = 4 / math.sqrt(2.28)
  near(m.p[I], 1 - t / math.sqrt(t * t + 2), 1e-10, "p from t(2)")
  local q = 0.95 / math.sqrt(2 * 0.975 * 0.025)
  near(m.lo[I], 4 - q * math.sqrt(2.28), 1e-10, "lower end")
  near(m.hi[I], 4 + q * math.sqrt(2.28), 1e-10, "upper end")
  local same = ols{data = d, y = "y", se = "cluster", cluster = "g"}
  near(same.se[I], m.se[I], 0, "se = \"cluster\" with cluster = is the same")
  local text = tostring(m)
  eq(text:find("SE cluster-robust by 'g', 3 clusters", 1, true) ~= nil, true, text)
  eq(text:find("warning: 3 clusters in 'g': cluster-robust SEs are unreliable with fewer than 30",
               1, true) ~= nil, true, "the warning below 30 clusters")
  eq(m.warning:find("3 clusters", 1, true) ~= nil, true, "the warning is in the result")
end)

test("weights: frequency for the classical SE, sampling for HC0, Kish's size printed", function()
  local m = ols{data = d, y = "y", weights = "w"}
  near(m.coef[I], 4.25, 1e-14, "weighted mean")
  near(m.se[I], math.sqrt(37.5 / 56), 1e-13, "classical, frequency weights")
  eq(m.df, 7)
  near(m.ess, 4, 1e-14, "Kish")
  near(m.weight_sum, 8, 0, "sum of weights")
  eq(m.weights, "w")
  local h = ols{data = d, y = "y", weights = "w", se = "HC0"}
  near(h.se[I], math.sqrt(66 / 64), 1e-13, "HC0, sampling weights")
  eq(h.df, 4)
  local text = tostring(m)
  eq(text:find("weights 'w': sum 8.0000, effective sample size (Kish) 4.0000", 1, true) ~= nil,
     true, text)
end)

test("logit prints odds ratios with their interval", function()
  -- y = 1, 0, 0, 1, 1: mu = 0.6, odds 1.5, information 5 * 0.24 = 1.2;
  -- the normal 0.975 quantile 1.959963984540054 (any table)
  local m = logit{data = d, y = "yb"}
  near(m.odds_ratio[I], 1.5, 1e-9, "odds ratio")
  local z, se = 1.959963984540054, math.sqrt(1 / 1.2)
  near(m.se[I], se, 1e-9, "classical SE")
  near(m.or_lo[I], math.exp(math.log(1.5) - z * se), 1e-9, "lower end of the odds ratio")
  near(m.or_hi[I], math.exp(math.log(1.5) + z * se), 1e-9, "upper end of the odds ratio")
  eq(m.df, nil, "normal: no degrees of freedom")
  local text = tostring(m)
  eq(text:find("odds ratio  OR lower  OR upper", 1, true) ~= nil, true, text)
  eq(text:find("1.5000", 1, true) ~= nil, true, "the odds ratio printed")
  eq(text:find("intervals from the normal", 1, true) ~= nil, true, text)
  local h = logit{data = d, y = "yb", se = "HC3", level = 0.9}
  near(h.se[I], math.sqrt(1 / 1.2 / 0.64), 1e-9, "HC3: leverages 1/5")
  eq(h.level, 0.9)
  eq(tostring(h):find("SE HC3", 1, true) ~= nil, true, "the printed SE says HC3")
  local c = logit{data = d, y = "yb", cluster = "g"}
  near(c.se[I], 0.5, 1e-9, "cluster: 0.24 / 1.2^2 * 3/2")
end)

test("ols prints the chosen SE, its distribution and the interval", function()
  local text = tostring(ols{data = d, y = "y", se = "HC1", level = 0.9})
  eq(text:find("SE HC1 (heteroskedasticity-robust, White, times n/(n-p))\n" ..
               "  p and 90% intervals from t with 4 df", 1, true) ~= nil, true, text)
  eq(text:find("p%s+lower%s+upper\n") ~= nil, true, text)
end)

test("bad se =, cluster =, weights = and level = are refused by name", function()
  raises(function() return ols{data = d, y = "y", se = "HC2"} end,
         'ols: se = "HC2" is not one of classical, HC0, HC1, HC3, cluster')
  raises(function() return ols{data = d, y = "y", se = "hc3"} end, "did you mean 'HC3'?")
  raises(function() return logit{data = d, y = "yb", se = "cluster"} end,
         'logit: se = "cluster" needs cluster = "column"')
  raises(function() return ols{data = d, y = "y", se = "HC1", cluster = "g"} end,
         'ols: cluster = "g" asks for cluster-robust SEs, but se = "HC1"')
  raises(function() return ols{data = d, y = "y", cluster = "gg"} end,
         "ols: cluster: no column 'gg'; did you mean 'g'?")
  raises(function() return ols{data = d, y = "y", cluster = "one"} end,
         "ols: every row is in one cluster; cluster standard errors need at least two")
  raises(function() return ols{data = d, y = "y", cluster = "gna"} end,
         "ols: cluster: row 3 of 'gna' is missing")
  raises(function() return ols{data = d, y = "y", weights = "wneg"} end,
         "ols: weights: row 3 of 'wneg' is negative (-1)")
  raises(function() return logit{data = d, y = "yb", weights = "wna"} end,
         "logit: weights: row 2 of 'wna' is missing")
  raises(function() return ols{data = d, y = "y", weights = "wz"} end,
         "ols: weights: every weight in 'wz' is 0")
  raises(function() return ols{data = d, y = "y", weights = "wtxt"} end,
         "ols: weights = 'wtxt' has text values")
  raises(function() return ols{data = d, y = "y", weights = 2} end,
         "ols: weights = must name a column, got 2")
  raises(function() return logit{data = d, y = "yb", level = 1.5} end,
         "logit: level = 1.5 must lie strictly between 0 and 1")
end)
