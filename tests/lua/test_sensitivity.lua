-- evalue, sensitivity{} and compare{hidden =}: worked values of VanderWeele
-- and Ding 2017 and of Cinelli and Hazlett 2020 (from memory), the defining
-- properties of each closed form checked by independent means (the bounding
-- factor, a brute-force search over confounder strengths, models rebuilt by
-- hand), and every refusal.  The numpy oracle (tests/oracle/
-- sensitivity_numpy.py) checks the fitted numbers to 1e-9.
local S = require "sluice"

local function near(a, b, tol, what)
  if not (math.abs(a - b) <= tol) then
    error(string.format("%s: expected %.12g, got %.12g", what or "value", b, a), 2)
  end
end

-- ---- E-values ----

test("evalue: the worked values of VanderWeele and Ding 2017", function()
  -- from memory: RR 3.9 (CI 1.8 to 8.7) gives 7.26, and 3.0 for the lower limit
  local e = evalue{rr = 3.9, lo = 1.8, hi = 8.7}
  near(e.point, 7.26, 0.005, "E-value of RR 3.9")
  near(e.limit, 3.0, 1e-12, "E-value of the lower limit 1.8")   -- 1.8 + sqrt(1.44)
  eq(e.which, "lower")
  local text = tostring(e):gsub("%s+", " ")
  eq(text:find("at least 7.26 each", 1, true) ~= nil, true, "plain reading")
  eq(text:find("above and beyond the measured covariates", 1, true) ~= nil, true, "reading")
  eq(text:find("lower limit of the interval to 1, a risk ratio of 3.00", 1, true) ~= nil, true, "limit")
  eq(text:find("clinical judgement", 1, true) ~= nil, true, "caution")
end)

test("evalue: E solves the bounding factor E^2 / (2E - 1) = RR", function()
  -- Ding and VanderWeele 2016 (Epidemiology): the joint bounding factor of two
  -- equal risk ratios e is e^2 / (2e - 1); the E-value is the e that makes
  -- it equal the observed RR (or 1/RR below 1)
  for _, rr in ipairs({1.01, 1.3, 2, 3.9, 10, 250, 0.8, 0.25}) do
    local e = evalue{rr = rr}.point
    local target = rr >= 1 and rr or 1 / rr
    near(e * e / (2 * e - 1), target, 1e-9 * target, "bounding factor at RR " .. rr)
    eq(e >= target, true, "E-value at least the RR")
  end
  eq(evalue{rr = 1}.point, 1, "RR 1")
end)

test("evalue: the limit closest to the null, and intervals holding 1", function()
  local e = evalue{rr = 0.5, lo = 0.3, hi = 0.8}
  eq(e.which, "upper")
  near(e.limit, 1 / 0.8 + math.sqrt(1 / 0.8 * (1 / 0.8 - 1)), 1e-12, "upper limit of a protective RR")
  near(e.point, 2 + math.sqrt(2), 1e-12, "RR 0.5 is RR 2 turned over")
  eq(evalue{rr = 1.4, lo = 0.9, hi = 2.2}.limit, 1, "interval crossing 1")
  eq(evalue{rr = 0.7, lo = 0.4, hi = 1.3}.limit, 1, "interval crossing 1 below")
  eq(evalue{rr = 1.4, hi = 2.2}.limit, nil, "no lower limit given")
  eq(tostring(evalue{rr = 1.4, lo = 0.9}):find("already includes no effect", 1, true) ~= nil, true)
end)

test("evalue: odds ratios, hazard ratios and standardized differences", function()
  -- common outcome: RR ~ sqrt(OR) (VanderWeele 2017); rare: OR as RR
  local e = evalue{["or"] = 4, lo = 2.25, hi = 9, rare = false}
  eq(e.rr, 2); eq(e.rr_lo, 1.5); eq(e.rr_hi, 3)
  near(e.point, 2 + math.sqrt(2), 1e-12, "sqrt(OR 4) = 2")
  eq(evalue{or_ = 4, rare = true}.rr, 4, "rare outcome")
  -- HR of a common outcome (VanderWeele 2020, from memory):
  -- (1 - 0.5^sqrt(HR)) / (1 - 0.5^sqrt(1/HR)); HR 1 is RR 1, and turning the
  -- HR over turns the RR over
  local h = evalue{hr = 2, rare = false}
  near(h.rr, (1 - 0.5 ^ math.sqrt(2)) / (1 - 0.5 ^ math.sqrt(0.5)), 1e-12, "HR 2")
  near(h.rr, 1.612548, 2e-6, "HR 2 as RR (by hand: 0.624786 / 0.387453)")
  near(evalue{hr = 0.5, rare = false}.rr, 1 / h.rr, 1e-12, "HR 1/2 as RR")
  near(evalue{hr = 1, rare = false}.rr, 1, 1e-12, "HR 1")
  eq(evalue{hr = 2, rare = true}.rr, 2, "rare: HR as RR")
  -- d: RR ~ exp(0.91 d) (VanderWeele and Ding 2017, after Hasselblad and Hedges)
  local d = evalue{d = 0.5, lo = 0.2, hi = 0.8}
  near(d.rr, math.exp(0.455), 1e-12, "d 0.5")
  near(d.limit, evalue{rr = math.exp(0.91 * 0.2)}.point, 1e-12, "lower limit of d")
  local m = evalue{diff = 3, sd = 6, lo = 1.2, hi = 4.8}
  near(m.rr, math.exp(0.455), 1e-12, "diff / sd")
  near(m.limit, d.limit, 1e-12, "same d, same limit")
  near(evalue{d = -0.5}.point, evalue{d = 0.5}.point, 1e-12, "a negative d")
end)

test("evalue: bad input names what was wrong", function()
  raises(function() return evalue{rr = 0} end, "evalue:", "rr = 0 must be positive")
  raises(function() return evalue{rr = -2} end, "must be positive")
  raises(function() return evalue{rr = 0 / 0} end, "rr = nan must be a finite number")
  raises(function() return evalue{rr = 2, lo = 3, hi = 1} end, "lo = 3 is above hi = 1")
  raises(function() return evalue{rr = 2, lo = 2.5, hi = 4} end, "the estimate 2 lies outside its interval 2.5 to 4")
  raises(function() return evalue{rr = 2, lo = -1} end, "lo = -1 must be positive")
  raises(function() return evalue{["or"] = 2} end, "needs rare = true", "or rare = false")
  raises(function() return evalue{hr = 2, rare = "yes"} end, 'rare = "yes" must be true')
  raises(function() return evalue{rr = 2, rare = true} end, "rare = applies to an odds ratio or a hazard ratio")
  raises(function() return evalue{rr = 2, hr = 2} end, "give one measure")
  raises(function() return evalue{diff = 2} end, "diff = needs sd =")
  raises(function() return evalue{diff = 2, sd = 0} end, "sd = 0 must be positive")
  raises(function() return evalue{rr = 2, hi_ = 3} end, "unknown argument 'hi_'", "did you mean 'hi'?")
  raises(function() return evalue{} end, "give the estimate")
  raises(function() return evalue("x") end, "expects an estimate result")
  raises(function() return evalue{rr = 2, lo = 1.1, hi = 3, sd = 1} end, "sd = goes with diff =")
end)

-- A clinic scenario (invented): a 0/1 programme, a 0/1 readmission and a
-- continuous length of stay, confounded by age.
local function clinic()
  local g = graph "age -> programme, readmitted, stay; programme -> readmitted, stay"
  local m = sem(g, {["age -> programme"] = 0.5, ["age -> readmitted"] = 0.6, ["age -> stay"] = 0.8,
                    ["programme -> readmitted"] = -0.7, ["programme -> stay"] = -1.2},
                {binarize = {programme = 0, readmitted = 0.8}})
  return m:simulate(4000, {seed = 11})
end

test("evalue(r): an estimate's scale picks the measure", function()
  local f = clinic()
  local rr = estimate{data = f, treatment = "programme", outcome = "readmitted", set = {"age"},
                      scale = "ratio", boot = 0}
  local e = evalue(rr)
  local same = evalue{rr = rr.estimate, lo = rr.lo, hi = rr.hi}
  eq(e.point, same.point, "ratio scale")
  eq(e.limit, same.limit, "ratio scale limit")
  local orr = estimate{data = f, treatment = "programme", outcome = "readmitted", set = {"age"},
                       scale = "odds ratio", boot = 0}
  local eo = evalue(orr)
  eq(eo.rare, math.max(orr.mu1, orr.mu0) < 0.15, "rare chosen from the risks")
  eq(evalue(orr, {rare = true}).rr, orr.estimate, "rare = given")
  local diff = estimate{data = f, treatment = "programme", outcome = "stay", set = {"age"}, boot = 0}
  raises(function() return evalue(diff) end, "needs the SD of the outcome", "evalue(r, {data = f})")
  local ed = evalue(diff, {data = f})
  near(ed.rr, math.exp(0.91 * diff.estimate / f.stay:sd()), 1e-12, "d from the outcome's SD")
  eq(evalue(diff, {sd = 2}).sd, 2)
  local rd = estimate{data = f, treatment = "programme", outcome = "readmitted", set = {"age"}, boot = 0}
  raises(function() return evalue(rd) end, "a risk difference has no E-value", 'scale = "ratio"')
  raises(function() return evalue(rr, {sd = 1}) end, "sd = and data = apply to a difference")
  raises(function() return evalue(rr, {sdd = 1}) end, "unknown argument 'sdd'", "did you mean 'sd'?")
end)

-- ---- sensitivity{} ----

test("sensitivity: the worked example of Cinelli and Hazlett 2020", function()
  -- from memory: the Darfur example, directly harmed on peace attitudes:
  -- estimate 0.097, SE 0.023 (t 4.18) on 783 df; partial R^2 2.19%,
  -- RV 13.9%, RV at alpha 0.05 7.6%
  local s = sensitivity{estimate = 0.09731, se = 0.02326, df = 783}
  near(s.t, 4.18, 0.01, "t")
  near(s.partial_r2, 0.0219, 0.0005, "partial R^2")
  near(s.rv, 0.139, 0.0005, "RV")
  near(s.rv_alpha, 0.076, 0.0005, "RV alpha")
  local text = tostring(s)
  eq(text:find("RV (q = 1)    13.87%", 1, true) ~= nil, true, "printed RV")
  eq(text:find("clinical judgement", 1, true) ~= nil, true, "caution")
end)

-- The t statistic after a confounder of strength (a, b) moves the estimate
-- by the fraction q of itself, written out from the bias and SE formulas of
-- Cinelli and Hazlett 2020 (eqs. 11-12): the null is (1 - q) estimate.
local function adjusted_t(t, df, q, a, b)
  local f = t / math.sqrt(df)
  return math.sqrt(df - 1) * (q * f * math.sqrt(1 - a) - math.sqrt(a * b)) / math.sqrt(1 - b)
end

-- The least max(a, b) over a fine grid where the adjusted t falls to tc.
local function brute_rv(t, df, q, tc)
  local best = 1
  local steps = 2000
  for i = 0, steps do
    local a = i / steps * 0.9999
    -- for fixed a the t falls as b grows until tc matters: bisect on b <= best
    for j = 0, steps do
      local b = j / steps * 0.9999
      if math.max(a, b) >= best then break end
      if adjusted_t(t, df, q, a, b) <= tc then best = math.max(a, b); break end
    end
  end
  return best
end

test("sensitivity: RV and RV_alpha are the least strength that does it (brute force)", function()
  -- the diagonal case (large df) and the corner case (tiny df, where the
  -- least strength lies off the diagonal); critical t from tables:
  -- t_{0.975, 99} = 1.984217, t_{0.975, 2} = 4.302653
  local cases = {{t = 3, df = 100, q = 1, tc = 1.984217}, {t = 5, df = 100, q = 0.5, tc = 1.984217},
                 {t = 10, df = 3, q = 1, tc = 4.302653}}
  for _, c in ipairs(cases) do
    local s = sensitivity{estimate = c.t, se = 1, df = c.df, q = c.q}
    near(s.rv, brute_rv(c.t, c.df, c.q, 0), 1e-3, "RV t " .. c.t)
    near(s.rv_alpha, brute_rv(c.t, c.df, c.q, c.tc), 1e-3, "RV alpha t " .. c.t)
  end
  eq(sensitivity{estimate = 1, se = 1, df = 100}.rv_alpha, 0, "not significant: RV alpha 0")
end)

test("sensitivity: a confounder at the RV brings the estimate to zero", function()
  local s = sensitivity{estimate = 0.8, se = 0.25, df = 400}
  local est = S._sens_adjust(0.8, 0.25, 400, s.rv, s.rv)
  near(est, 0, 1e-12, "adjusted estimate at RV")
  local e0, se0 = S._sens_adjust(0.8, 0.25, 400, 0, 0)
  eq(e0, 0.8, "no confounder")
  near(se0, 0.25 * math.sqrt(400 / 399), 1e-15, "no confounder: SE on df - 1")
end)

local function wards(n, seed)
  local g = graph "age -> hours, stay; severity -> hours, stay; ward -> stay; hours -> stay"
  local m = sem(g, {["age -> hours"] = 0.4, ["age -> stay"] = 0.5, ["severity -> hours"] = 0.3,
                    ["severity -> stay"] = 0.9, ["ward -> stay"] = 0.4, ["hours -> stay"] = -0.3})
  return m:simulate(n, {seed = seed})
end

test("sensitivity: data, benchmarks and the bound formulas", function()
  local f = wards(3000, 5)
  local s = sensitivity{data = f, treatment = "hours", outcome = "stay", set = {"age", "severity", "ward"},
                        benchmark = {"severity", "age"}, k = {1, 2}}
  local fit = ols{data = f, y = "stay", x = {"hours", "age", "severity", "ward"}}
  eq(s.estimate, fit.coef.hours, "the OLS coefficient")
  eq(s.se, fit.se.hours, "its classical SE")
  eq(s.df, 3000 - 5)
  eq(#s.bounds, 4, "2 benchmarks x 2 k")
  -- the benchmark's partial R^2 with the outcome: from the outcome fit's t
  local ty = fit.coef.severity / fit.se.severity
  near(s.benchmarks[1].r2y, ty * ty / (ty * ty + s.df), 1e-15, "R^2 y~severity|hours,X")
  -- a k = 1 bound on r2dz is f^2 of the benchmark (their eq. for kD)
  local b = s.bounds[1]
  eq(b.label, "1x severity")
  near(b.r2dz, s.benchmarks[1].r2d / (1 - s.benchmarks[1].r2d), 1e-15, "R^2 d~Z|X bound")
  local est, se = S._sens_adjust(s.estimate, s.se, s.df, b.r2dz, b.r2yz)
  eq(b.estimate, est); eq(b.se, se)
  eq(math.abs(b.estimate) < math.abs(s.estimate), true, "bias towards zero")
  eq(s.bounds[3].benchmark, "age")
  local text = tostring(s)
  eq(text:find("2x severity", 1, true) ~= nil, true, "bounds table")
end)

test("sensitivity: rows with a missing value are dropped", function()
  local f = wards(500, 6)
  local path = os.tmpname()
  local h = io.open(path, "w")
  h:write("hours,stay,age\n")
  local hours, stay, age = f.hours, f.stay, f.age
  for i = 1, #f do   -- every 10th outcome and every 25th covariate missing
    h:write(string.format("%.17g,%s,%s\n", hours[i], i % 10 == 0 and "" or string.format("%.17g", stay[i]),
                          i % 25 == 3 and "" or string.format("%.17g", age[i])))
  end
  h:close()
  local g = read_csv(path)
  os.remove(path)
  local s = sensitivity{data = g, treatment = "hours", outcome = "stay", set = {"age"}, benchmark = "age"}
  eq(s.dropped, 50 + 20, "rows dropped")
  eq(s.n, 430, "rows used")
  eq(tostring(s):find("430 used, 70 dropped", 1, true) ~= nil, true, "printed")
  -- the treatment model used the same rows: its benchmark R^2 is that of the complete rows
  local kept = g:filter(function(row) return row.stay ~= nil and row.age ~= nil end)
  local fd = ols{data = kept, y = "hours", x = {"age"}}
  local t = fd.coef.age / fd.se.age
  near(s.benchmarks[1].r2d, t * t / (t * t + 428), 1e-12, "R^2 hours~age on the complete rows")
end)

test("sensitivity: a contour picture and bad input", function()
  local f = wards(800, 7)
  local path = os.tmpname() .. ".svg"
  local s = sensitivity{data = f, treatment = "hours", outcome = "stay", set = {"age", "severity"},
                        benchmark = "severity", plot = path}
  local h = io.open(path, "r")
  local body = h:read("a")
  h:close()
  os.remove(path)
  eq(body:find("<svg", 1, true) ~= nil, true, "an SVG file")
  eq(s.plot, path)
  local base = {data = f, treatment = "hours", outcome = "stay", set = {"age", "severity"}}
  local function with(k, v)
    local a = {}
    for key, val in pairs(base) do a[key] = val end
    a[k] = v
    return function() return sensitivity(a) end
  end
  raises(with("benchmark", "hours"), "sensitivity:", "benchmark = names the treatment 'hours'")
  raises(with("benchmark", "stay"), "benchmark = names the outcome 'stay'")
  raises(with("benchmark", "ward"), "benchmark = 'ward' is not in set =")
  raises(with("benchmark", "severty"), "did you mean 'severity'?")
  raises(with("treatment", "hour"), "treatment: no column 'hour'", "did you mean 'hours'?")
  raises(with("q", 0), "q = 0 must be positive")
  raises(with("alpha", 1.5), "alpha = 1.5 must lie strictly between 0 and 1")
  raises(with("k", {1, -2}), "k = item 2 is -2")
  raises(with("plot", 3), "plot = must be a file name")
  raises(with("plot", "x.txt"), "end the name in .svg, .png or .pdf")
  raises(with("set", {"age", "hours"}), "set = holds the treatment 'hours'")
  raises(with("benchmarks", "age"), "unknown argument 'benchmarks'", "did you mean 'benchmark'?")
  raises(with("outcome", "hours"), "name the same column")
  raises(function() return sensitivity{estimate = 1, se = 0, df = 10} end, "se = 0 must be positive")
  raises(function() return sensitivity{estimate = 1, se = 1} end, "needs se = and df =")
  raises(function() return sensitivity{estimate = 1, se = 1, df = 10, benchmark = "a"} end, "needs the data")
  raises(function() return sensitivity{estimate = 1, se = 1, df = 10, k = 4} end, "needs the data")
  raises(function() return sensitivity(3) end, "expects a table of named arguments")
  -- an impossible k: the bound on R^2 d~Z|X reaches 1
  raises(function() return S._sens_bound(0.6, 0.1, 2, 2) end, "use a smaller k")
end)

-- ---- compare{hidden =} ----

local hidden_model = function()
  local g = graph "hidden frailty; frailty -> rehab, stay; age -> rehab, stay; rehab -> stay"
  return sem(g, {["frailty -> rehab"] = 0.6, ["frailty -> stay"] = 0.7, ["age -> rehab"] = 0.5,
                 ["age -> stay"] = 0.4, ["rehab -> stay"] = -0.5})
end

test("compare{hidden =}: each set's limit as the hidden confounder grows", function()
  local m = hidden_model()
  local f = m:simulate(2000, {seed = 4})
  local c = compare{data = f, truth = m, treatment = "rehab", outcome = "stay", boot = 0, hidden = "frailty"}
  local h = c.hidden
  same_list(h.factors, {0, 0.5, 1, 1.5, 2}, "multipliers")
  -- the same models built by hand with the hidden coefficients scaled
  for i, k in ipairs(h.factors) do
    local g = m:graph()
    local mk = sem(g, {["frailty -> rehab"] = 0.6 * k, ["frailty -> stay"] = 0.7 * k,
                       ["age -> rehab"] = 0.5, ["age -> stay"] = 0.4, ["rehab -> stay"] = -0.5})
    near(h.truth[i], mk:effect("rehab", "stay"), 1e-12, "truth x" .. k)
    for j, r in ipairs(h.rows) do
      local set = c[j].set
      near(r[i], mk:limit("rehab", "stay", set), 1e-12, r.set_text .. " x" .. k)
    end
  end
  -- x1 is the model as given: the comparison's own limit column
  for j, r in ipairs(h.rows) do eq(r[3], c[j].limit, "x1 = limit " .. r.set_text) end
  -- with no hidden confounding, adjusting for age recovers the truth
  for j, r in ipairs(h.rows) do
    if r.set_text == "{age}" then near(r[1], -0.5, 1e-12, "{age} at x0") end
  end
  local text = tostring(c)
  eq(text:find("as the hidden frailty grows", 1, true) ~= nil, true, "table heading")
  eq(text:find("x1.5", 1, true) ~= nil, true, "multiplier column")
end)

test("compare{hidden =}: a picture of its own, and refusals", function()
  local m = hidden_model()
  local f = m:simulate(500, {seed = 5})
  local path = os.tmpname()
  local c = compare{data = f, truth = m, treatment = "rehab", outcome = "stay", boot = 0,
                    hidden = "frailty", plot = path .. ".svg"}
  eq(c.hidden.plot, path .. "-hidden.svg")
  local h = io.open(path .. "-hidden.svg", "r")
  eq(h ~= nil and h:read("a"):find("<svg", 1, true) ~= nil, true, "the hidden picture")
  if h then h:close() end
  os.remove(path .. ".svg"); os.remove(path .. "-hidden.svg"); os.remove(path)
  local base = {data = f, truth = m, treatment = "rehab", outcome = "stay", boot = 0}
  local function with(k, v)
    local a = {}
    for key, val in pairs(base) do a[key] = val end
    a[k] = v
    return function() return compare(a) end
  end
  raises(with("hidden", "age"), "compare:", "hidden = 'age' is observed in the graph", "frailty")
  raises(with("hidden", "frailt"), "not a node of the model's graph", "did you mean 'frailty'?")
  raises(with("hidden", 3), "hidden = must name a hidden node")
  raises(function()
    return compare{data = f, graph = m:graph(), truth = -0.5, treatment = "rehab", outcome = "stay",
                   boot = 0, hidden = "frailty"}
  end, "hidden = needs truth = a linear model")
end)
