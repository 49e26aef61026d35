-- bench_coverage.lua: the long version of tests/lua/test_coverage.lua for
-- bench/run.sh (build/sluice bench/bench_coverage.lua SETS N).  SETS data
-- sets of N rows from a linear model with a 0/1 treatment (logistic link)
-- whose effect is 2 in every unit; for each method and estimand one line:
--   method=M estimand=E cover=C ratio=R sets=S
-- C the share of 95% analytic intervals holding 2, R the mean SE over the
-- SD of the estimates across the data sets (1 when the SE is honest).
local sets, n = math.tointeger(tonumber(arg[1] or "2000")), math.tointeger(tonumber(arg[2] or "500"))
local g = graph[[fertiliser -> treated; drainage -> treated
                 fertiliser -> crop; drainage -> crop; treated -> crop]]
local m = sem(g, {["fertiliser -> treated"] = 0.9, ["drainage -> treated"] = -0.7,
                  ["fertiliser -> crop"] = 1, ["drainage -> crop"] = 0.5,
                  ["treated -> crop"] = 2}, {binary = {"treated"}})
local cases = {{"standardize", "ATE"}, {"standardize", "ATT"}, {"ipw", "ATE"}, {"ipw", "ATT"},
               {"aipw", "ATE"}, {"aipw", "ATT"}}
local acc = {}
for i = 1, #cases do acc[i] = {cover = 0, sum = 0, sum2 = 0, se = 0} end
for s = 1, sets do
  local d = m:simulate(n, {seed = 50000 + s})
  for i, c in ipairs(cases) do
    local r = estimate{data = d, treatment = "treated", outcome = "crop",
                       set = {"fertiliser", "drainage"}, method = c[1], estimand = c[2]}
    local a = acc[i]
    if r.lo <= 2 and 2 <= r.hi then a.cover = a.cover + 1 end
    a.sum, a.sum2, a.se = a.sum + r.estimate, a.sum2 + r.estimate ^ 2, a.se + r.se
  end
end
for i, c in ipairs(cases) do
  local a = acc[i]
  local mean = a.sum / sets
  local sd = math.sqrt((a.sum2 - sets * mean * mean) / (sets - 1))
  print(string.format("method=%s estimand=%s cover=%.4f ratio=%.4f sets=%d", c[1], c[2],
                      a.cover / sets, a.se / sets / sd, sets))
end
