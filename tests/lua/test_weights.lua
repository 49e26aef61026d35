-- weights = in estimate{}, balance{}, overlap{} and compare{}: sampling
-- weights.  The weighted SEs are checked against a stacked sandwich with
-- statsmodels' WLS and GLM var_weights fits in tests/oracle/sandwich_numpy.py;
-- here: a whole-number weight is the row repeated (the point estimate, by
-- the estimating equations), the effective sample size, the bootstrap
-- beside the analytic SE, and every refusal.

local g = graph[[slope -> terrace; rain -> terrace; slope -> runoff; rain -> runoff; terrace -> runoff]]
local m = sem(g, {["slope -> terrace"] = 0.6, ["rain -> terrace"] = -0.4, ["slope -> runoff"] = 1,
                  ["rain -> runoff"] = 0.8, ["terrace -> runoff"] = -1.2}, {binary = {"terrace"}})
local d = m:simulate(400, {seed = 21}):with_column("w", function(_, i) return i % 3 + 1 end)
-- the same rows, each repeated w times
local rep = {}
for i = 1, #d do
  local r = d:row(i)
  for _ = 1, r.w do rep[#rep + 1] = r end
end
local path = os.tmpname()
local f = assert(io.open(path, "w"))
f:write("slope,rain,terrace,runoff\n")
for _, r in ipairs(rep) do
  f:write(string.format("%.17g,%.17g,%d,%.17g\n", r.slope, r.rain, r.terrace, r.runoff))
end
f:close()
local dr = read_csv(path)
os.remove(path)

local function args(data, extra)
  local a = {data = data, treatment = "terrace", outcome = "runoff", set = {"slope", "rain"}}
  for k, v in pairs(extra or {}) do a[k] = v end
  return a
end

test("a whole-number weight is its row repeated, for every method and estimand", function()
  for _, meth in ipairs({"standardize", "ipw", "aipw"}) do
    for _, est in ipairs({"ATE", "ATT", "ATC"}) do
      local w = estimate(args(d, {method = meth, estimand = est, weights = "w"}))
      local r = estimate(args(dr, {method = meth, estimand = est}))
      eq(math.abs(w.estimate - r.estimate) < 1e-9, true,
         string.format("%s %s: %.12g beside %.12g", meth, est, w.estimate, r.estimate))
    end
  end
end)

test("the effective sample size of the weights is printed", function()
  local r = estimate(args(d, {weights = "w"}))
  -- weights 1, 2, 3 in turn over 400 rows (133, 134, 133 of them: i % 3 = 1, 2, 0):
  -- (sum w)^2 / sum w^2 = 799^2 / 1865, by hand
  local n1, n2, n3 = 134, 133, 133   -- w = 2 for i % 3 == 1, 3 for 2, 1 for 0
  local sw, sw2 = n1 * 2 + n2 * 3 + n3 * 1, n1 * 4 + n2 * 9 + n3 * 1
  eq(math.abs(r.ess_weights - sw * sw / sw2) < 1e-9, true, "Kish's ESS")
  eq(tostring(r):find("sampling weights (Kish's effective sample size", 1, true) ~= nil, true, "printed")
end)

test("the bootstrap carries the weights: its SE near the analytic one", function()
  local r = estimate(args(d, {method = "ipw", weights = "w", boot = 400, seed = 5}))
  eq(math.abs(r.se / r.se_analytic - 1) < 0.15, true,
     string.format("bootstrap %.4f beside sandwich %.4f", r.se, r.se_analytic))
  local l = estimate(args(d, {weights = "w", boot = 400, seed = 5}))
  eq(math.abs(l.se / l.se_analytic - 1) < 0.15, true,
     string.format("linear route: bootstrap %.4f beside sandwich %.4f", l.se, l.se_analytic))
end)

test("bad weights are refused by column and row", function()
  local neg = d:with_column("v", function(_, i) return i == 7 and -1 or 1 end)
  raises(function() estimate(args(neg, {weights = "v"})) end, "weights = 'v' is -1 at row 7")
  local miss = d:with_column("v", function(_, i) return i == 9 and 0 / 0 or 1 end)
  raises(function() estimate(args(miss, {weights = "v"})) end, "weights = 'v' is missing at row 9")
  local zero = d:with_column("v", function() return 0 end)
  raises(function() estimate(args(zero, {weights = "v"})) end, "is 0 in every complete row")
  local text = d:with_column("v", function() return "heavy" end)
  raises(function() estimate(args(text, {weights = "v"})) end, "has text values")
  raises(function() estimate(args(d, {weights = "ww"})) end, "weights", "'w'")
  raises(function() estimate(args(d, {method = "iv", instrument = "rain", weights = "w"})) end,
         "weights = applies to")
end)

test("balance, overlap and compare take weights", function()
  local b = balance(args(d, {weights = "w"}))
  local b0 = balance(args(d))
  eq(b.weights, "inverse probability times w")
  eq(b[1].before ~= b0[1].before, true, "the unweighted SMD is of the weighted rows")
  local o = overlap(args(d, {weights = "w"}))
  eq(o.n, #d)
  local c = compare{data = d, graph = g, treatment = "terrace", outcome = "runoff", truth = -1.2,
                    weights = "w"}
  local cr = compare{data = dr, graph = g, treatment = "terrace", outcome = "runoff", truth = -1.2}
  eq(math.abs(c[1].estimate - cr[1].estimate) < 1e-9, true, "compare's first row, weighted")
end)
