-- Coverage of the analytic intervals of estimate{} in a seeded simulation:
-- 400 data sets of 500 rows from a linear model with a 0/1 treatment
-- (logistic link) whose effect on the outcome is 2 in every unit, so the
-- ATE and the ATT are 2 (no interaction: the structural coefficient). For
-- each method the share of 95% intervals holding 2 must lie within the
-- binomial limits of 0.95 for 400 draws (0.95 +- 3.3 SD, SD = 0.0109: a
-- chance of 1 in 1000 of a false alarm), and the mean SE must agree with
-- the estimates' spread across data sets within 15% (the spread's own
-- relative error is about 1/sqrt(2 * 400) = 3.5%; 4 of those). A standard
-- error that treats the propensities as known was 1.1 to 1.7 times the
-- spread (issue 13) and fails the second check.

local g = graph[[fertiliser -> treated; drainage -> treated
                 fertiliser -> crop; drainage -> crop; treated -> crop]]
local m = sem(g, {["fertiliser -> treated"] = 0.9, ["drainage -> treated"] = -0.7,
                  ["fertiliser -> crop"] = 1, ["drainage -> crop"] = 0.5,
                  ["treated -> crop"] = 2}, {binary = {"treated"}})
local TRUTH, SETS, N = 2, 400, 500

local function study(method, estimand)
  local covered, ests, ses = 0, {}, {}
  for s = 1, SETS do
    local d = m:simulate(N, {seed = 1000 + s})
    local r = estimate{data = d, treatment = "treated", outcome = "crop",
                       set = {"fertiliser", "drainage"}, method = method, estimand = estimand}
    if r.lo <= TRUTH and TRUTH <= r.hi then covered = covered + 1 end
    ests[s], ses[s] = r.estimate, r.se
  end
  local mean, se = 0, 0
  for s = 1, SETS do mean = mean + ests[s] / SETS; se = se + ses[s] / SETS end
  local ss = 0
  for s = 1, SETS do ss = ss + (ests[s] - mean) ^ 2 end
  return covered / SETS, se / math.sqrt(ss / (SETS - 1))
end

for _, case in ipairs({{"standardize", "ATE"}, {"ipw", "ATE"}, {"ipw", "ATT"},
                       {"aipw", "ATE"}, {"aipw", "ATT"}}) do
  test("coverage of the analytic interval: " .. case[1] .. " " .. case[2], function()
    local cover, ratio = study(case[1], case[2])
    if os.getenv("SLUICE_SHOW_COVERAGE") then print(case[1], case[2], cover, ratio) end
    eq(cover >= 0.914 and cover <= 0.986, true, string.format("coverage %.3f within [0.914, 0.986]", cover))
    eq(ratio > 0.85 and ratio < 1.15, true,
       string.format("mean SE / spread of the estimates %.3f within (0.85, 1.15)", ratio))
  end)
end
