-- sluice.sensitivity: how strong an unmeasured confounder would have to be
-- to change the answer.  evalue(r) and evalue{...}: the E-value of
-- VanderWeele and Ding (2017, Ann Intern Med 167:268); sensitivity{...}:
-- omitted-variable bias of a least-squares estimate in the partial R^2
-- parametrisation (Cinelli and Hazlett 2020, JRSS-B 82:39).  The closed
-- forms of the latter and its picture come from the C primitives
-- S._sens_rv, _sens_bound, _sens_adjust, _sens_tcrit, _sens_contour.
local E = require "sluice.estimate"
local P = require "sluice.print"
local V = {}
local S

V.caution = "A sensitivity analysis says how strong a missing confounder would have to be,\n" ..
            "  not whether one exists; judging that needs subject knowledge, and no number\n" ..
            "  here is a substitute for qualified epidemiological or clinical judgement."

local fmt, show = E.fmt, E.show

-- A finite number or nil; anything else an error naming the argument.
local function number_arg(fname, key, v)
  if v == nil then return nil end
  if type(v) ~= "number" or v ~= v or v == math.huge or v == -math.huge then
    E.fail(fname, key .. " = " .. show(v) .. " must be a finite number")
  end
  return v
end

-- Refuse keys not in keys, suggesting the nearest.
local function only(fname, a, keys)
  local names = {}
  for k in pairs(keys) do names[#names + 1] = k end
  table.sort(names)
  for k in pairs(a) do
    if not keys[k] then E.unknown_key(fname, k, names, "argument") end
  end
end

-- ---- E-values ----

-- The E-value of a risk ratio: RR + sqrt(RR (RR - 1)) for RR >= 1, of
-- 1/RR below 1 (VanderWeele and Ding 2017, eq. in "The E-value").
local function evalue_rr(rr)
  if rr < 1 then rr = 1 / rr end
  return rr + math.sqrt(rr * (rr - 1))
end
V.evalue_rr = evalue_rr

-- The conversions to an approximate risk ratio.  OR of a common outcome:
-- sqrt(OR) (VanderWeele 2017, "On a square-root transformation of the
-- odds ratio"); HR of a common outcome: (1 - 0.5^sqrt(HR)) /
-- (1 - 0.5^sqrt(1/HR)) (VanderWeele 2020, Biometrics 76:746), from memory;
-- a standardized difference d: exp(0.91 d) (VanderWeele and Ding 2017,
-- after Hasselblad and Hedges 1995).  A rare outcome: OR and HR as RR.
local convert = {
  rr = function(v) return v end,
  ["or"] = function(v, rare) return rare and v or math.sqrt(v) end,
  hr = function(v, rare)
    if rare then return v end
    return (1 - 0.5 ^ math.sqrt(v)) / (1 - 0.5 ^ math.sqrt(1 / v))
  end,
  d = function(v) return math.exp(0.91 * v) end,
}

local measure_names = {rr = "risk ratio", ["or"] = "odds ratio", hr = "hazard ratio",
                       d = "standardized mean difference", diff = "difference in means"}

local evalue_mt = {__name = "sluice.evalue"}

function evalue_mt.__tostring(r)
  local lines = {"E-value (VanderWeele and Ding 2017)"}
  local function add(k, v) lines[#lines + 1] = string.format("  %-10s %s", k, v) end
  local function interval(lo, hi)
    if not (lo or hi) then return "" end
    return string.format("; interval %s to %s", lo and fmt(lo) or "-", hi and fmt(hi) or "-")
  end
  add("estimate", fmt(r.value) .. "  (" .. r.measure .. interval(r.lo, r.hi) .. ")")
  if r.measure ~= "risk ratio" then
    add("as RR", fmt(r.rr) .. "  (" .. r.conversion:gsub("^%((.*)%)$", "%1") ..
        interval(r.rr_lo, r.rr_hi) .. ")")
  end
  local lim = ""
  if r.limit then
    lim = r.limit == 1 and string.format("; 1 for the interval, which already holds %s",
                                         r.measure == "risk ratio" and "1" or "the null")
          or string.format(", %s for the %s limit", string.format("%.2f", r.limit), r.which)
  end
  add("E-value", string.format("%.2f for the estimate%s", r.point, lim))
  local text
  if r.point == 1 then
    text = "the estimate shows no association (a risk ratio of 1): there is nothing for a " ..
           "confounder to explain away."
  else
    text = string.format("an unmeasured confounder would need to be associated with both the " ..
      "treatment and the outcome by a risk ratio of at least %.2f each, above and beyond the " ..
      "measured covariates, to explain away the estimate; weaker confounding could not.", r.point)
    if r.limit and r.limit > 1 then
      text = text .. string.format(" To move the %s limit of the interval to 1, a risk ratio of " ..
        "%.2f each would suffice.", r.which, r.limit)
    elseif r.limit == 1 then
      text = text .. " The interval already includes no effect, so no confounding is needed " ..
        "to make it compatible with none."
    end
  end
  local words, line = {}, "  reading:"
  for w in text:gmatch("%S+") do
    if #line + #w + 1 > 78 then words[#words + 1] = line; line = "   " end
    line = line .. " " .. w
  end
  words[#words + 1] = line
  lines[#lines + 1] = table.concat(words, "\n")
  lines[#lines + 1] = "  " .. V.caution
  return table.concat(lines, "\n")
end

-- The E-value of a value on one of the measures, with its interval.
local function evalue_of(fname, measure, value, lo, hi, rare, extra)
  local c = convert[measure]
  if measure ~= "d" then
    if not (value > 0) then
      E.fail(fname, string.format("%s = %s must be positive (a ratio)", measure, show(value)))
    end
    if lo and not (lo > 0) then E.fail(fname, "lo = " .. show(lo) .. " must be positive (a ratio)") end
    if hi and not (hi > 0) then E.fail(fname, "hi = " .. show(hi) .. " must be positive (a ratio)") end
  end
  if lo and hi and lo > hi then
    E.fail(fname, string.format("lo = %s is above hi = %s", show(lo), show(hi)))
  end
  if (lo and value < lo) or (hi and value > hi) then
    E.fail(fname, string.format("the estimate %s lies outside its interval %s to %s", show(value),
           lo and show(lo) or "-", hi and show(hi) or "-"))
  end
  local rr, rlo, rhi = c(value, rare), lo and c(lo, rare), hi and c(hi, rare)
  local r = {measure = measure_names[measure], value = value, lo = lo, hi = hi,
             rr = rr, rr_lo = rlo, rr_hi = rhi, rare = rare}
  r.point = rr == 1 and 1 or evalue_rr(rr)
  -- the limit closest to the null: the lower one above 1, the upper below
  if rr >= 1 and rlo then
    r.which, r.limit = "lower", rlo <= 1 and 1 or evalue_rr(rlo)
  elseif rr < 1 and rhi then
    r.which, r.limit = "upper", rhi >= 1 and 1 or evalue_rr(rhi)
  end
  if measure == "or" then
    r.conversion = rare and "(rare outcome: the OR taken as the RR)" or "(common outcome: RR ~ sqrt(OR))"
  elseif measure == "hr" then
    r.conversion = rare and "(rare outcome: the HR taken as the RR)"
                   or "(common outcome: RR ~ (1 - 0.5^sqrt(HR)) / (1 - 0.5^sqrt(1/HR)))"
  elseif measure == "d" then
    r.conversion = "(RR ~ exp(0.91 d))"
  end
  for k, v in pairs(extra or {}) do r[k] = v end
  return setmetatable(r, evalue_mt)
end

local evalue_keys = {rr = true, ["or"] = true, or_ = true, hr = true, d = true, diff = true,
                     sd = true, lo = true, hi = true, rare = true}

-- rare = true/false for an OR or HR, or nil when the call may choose.
local function rare_arg(fname, v)
  if v ~= nil and type(v) ~= "boolean" then
    E.fail(fname, "rare = " .. show(v) .. " must be true (outcome under about 15% by the end " ..
           "of follow-up) or false")
  end
  return v
end

-- evalue{rr =, lo =, hi =} and its siblings.
local function evalue_table(a)
  local fname = "evalue"
  only(fname, a, evalue_keys)
  if a["or"] ~= nil and a.or_ ~= nil then E.fail(fname, 'give the odds ratio once: or_ = or ["or"] =') end
  local given = {}
  for _, k in ipairs({"rr", "or", "or_", "hr", "d", "diff"}) do
    if a[k] ~= nil then given[#given + 1] = k end
  end
  if #given == 0 then
    E.fail(fname, "give the estimate: rr =, or_ = (with rare =), hr = (with rare =), d = " ..
           "(a standardized difference) or diff = with sd =")
  end
  if #given > 1 then
    E.fail(fname, string.format("give one measure, not %s and %s", given[1], given[2]))
  end
  local measure = given[1] == "or_" and "or" or given[1]
  local value = number_arg(fname, given[1], a[given[1]])
  local lo, hi = number_arg(fname, "lo", a.lo), number_arg(fname, "hi", a.hi)
  local rare = rare_arg(fname, a.rare)
  if (measure == "or" or measure == "hr") and rare == nil then
    E.fail(fname, string.format("%s needs rare = true (the outcome is rare, under about 15%% " ..
           "by the end of follow-up: the %s approximates the RR) or rare = false (common: " ..
           "converted)", given[1], measure:upper()))
  end
  if rare ~= nil and measure ~= "or" and measure ~= "hr" then
    E.fail(fname, "rare = applies to an odds ratio or a hazard ratio, not to " .. given[1] .. " =")
  end
  if a.sd ~= nil and measure ~= "diff" then E.fail(fname, "sd = goes with diff = (a difference in means)") end
  if measure == "diff" then
    local sd = number_arg(fname, "sd", a.sd)
    if not sd then E.fail(fname, "diff = needs sd =, the standard deviation of the outcome") end
    if not (sd > 0) then E.fail(fname, "sd = " .. show(sd) .. " must be positive") end
    if (lo and hi and lo > hi) then E.fail(fname, string.format("lo = %s is above hi = %s", show(lo), show(hi))) end
    local r = evalue_of(fname, "d", value / sd, lo and lo / sd, hi and hi / sd, nil,
                        {measure = "difference in means", value = value, lo = lo, hi = hi, sd = sd})
    r.conversion = string.format("(d = %s / SD %s = %s; RR ~ exp(0.91 d))", fmt(value), fmt(sd), fmt(value / sd))
    return r
  end
  return evalue_of(fname, measure, value, lo, hi, rare)
end

-- evalue(r, {rare =, sd =, data =}) for an estimate result.
local function evalue_estimate(r, o)
  local fname = "evalue"
  o = o or {}
  if type(o) ~= "table" then E.fail(fname, "the options are a table such as {sd = 2.5}, got " .. show(o)) end
  only(fname, o, {rare = true, sd = true, data = true})
  local rare = rare_arg(fname, o.rare)
  local est, lo, hi = r.estimate, r.lo, r.hi
  if type(est) ~= "number" or est ~= est then E.fail(fname, "the estimate has no finite value") end
  local function opt_ci(v) return (type(v) == "number" and v == v) and v or nil end
  lo, hi = opt_ci(lo), opt_ci(hi)
  if r.scale == "ratio" then
    if o.sd or o.data then E.fail(fname, "sd = and data = apply to a difference in means, not a risk ratio") end
    return evalue_of(fname, "rr", est, lo, hi, nil)
  elseif r.scale == "odds ratio" then
    if o.sd or o.data then E.fail(fname, "sd = and data = apply to a difference in means, not an odds ratio") end
    local how
    if rare == nil then   -- choose from the risks the estimate gives
      if type(r.mu1) ~= "number" or type(r.mu0) ~= "number" then
        E.fail(fname, "an odds ratio needs rare = true or false")
      end
      rare = math.max(r.mu1, r.mu0) < 0.15
      how = string.format("(risks %s and %s: %s; VanderWeele and Ding 2017 take under 15%% as rare)",
                          fmt(r.mu1), fmt(r.mu0), rare and "rare" or "common")
    end
    local v = evalue_of(fname, "or", est, lo, hi, rare)
    if how then v.conversion = v.conversion .. " " .. how end
    return v
  end
  -- a difference: a mean difference through its standardized form
  if r.binary_outcome then
    E.fail(fname, "a risk difference has no E-value of its own: estimate on scale = \"ratio\" " ..
           "and pass that result")
  end
  if o.rare ~= nil then E.fail(fname, "rare = applies to an odds ratio or a hazard ratio") end
  local sd, from = o.sd, "given"
  if sd == nil and o.data ~= nil then
    if not E.is_frame(o.data) then E.fail(fname, "data = must be a data frame") end
    E.check_column(fname, "data", o.data, r.outcome)
    sd, from = o.data[r.outcome]:sd(), "of " .. r.outcome .. " in the data"
  end
  if sd == nil then
    E.fail(fname, string.format("a difference in means needs the SD of the outcome: " ..
           "evalue(r, {data = f}) takes it from the column '%s', or give sd =", tostring(r.outcome)))
  end
  number_arg(fname, "sd", sd)
  if not (sd > 0) then E.fail(fname, "sd = " .. show(sd) .. " must be positive") end
  local v = evalue_of(fname, "d", est / sd, lo and lo / sd, hi and hi / sd, nil,
                      {measure = "difference in means", value = est, lo = lo, hi = hi, sd = sd})
  v.conversion = string.format("(d = %s / SD %s %s = %s; RR ~ exp(0.91 d))", fmt(est), fmt(sd),
                               from, fmt(est / sd))
  return v
end

function V.evalue(a, o)
  local mt = getmetatable(a)
  if type(mt) == "table" and mt.__name == "sluice.estimate" then return evalue_estimate(a, o) end
  if type(a) ~= "table" or mt ~= nil then
    E.fail("evalue", "expects an estimate result or a table such as {rr = 3.9, lo = 1.8, hi = 8.7}, got " .. show(a))
  end
  if o ~= nil then E.fail("evalue", "a table of values takes no second argument") end
  return evalue_table(a)
end

-- ---- sensitivity{} ----

local sens_keys = {data = true, treatment = true, outcome = true, set = true, benchmark = true,
                   k = true, q = true, alpha = true, plot = true, estimate = true, se = true,
                   df = true}

-- The list of names of an option (a name or a list), each a string.
local function names_of(fname, key, v)
  if v == nil then return {} end
  if type(v) == "string" then return {v} end
  if type(v) ~= "table" then E.fail(fname, key .. " = must be a column name or a list of names, got " .. show(v)) end
  local out = {}
  for i, x in ipairs(v) do
    if type(x) ~= "string" then E.fail(fname, string.format("%s = item %d is %s, not a column name", key, i, show(x))) end
    out[i] = x
  end
  return out
end

-- k = a number or a list of positive numbers; default 1, 2, 3.
local function k_list(fname, v)
  if v == nil then return {1, 2, 3} end
  if type(v) == "number" then v = {v} end
  if type(v) ~= "table" or #v == 0 then E.fail(fname, "k = must be a positive number or a list of them, got " .. show(v)) end
  local out = {}
  for i, x in ipairs(v) do
    if type(x) ~= "number" or not (x > 0) or x == math.huge then
      E.fail(fname, string.format("k = item %d is %s: each k is a positive number (times as strong as the benchmark)", i, show(x)))
    end
    out[i] = x
  end
  return out
end

-- The frame's rows with no missing value in the columns cols.
local function complete(f, cols)
  local any = false
  for _, c in ipairs(cols) do if f[c]:missing() > 0 then any = true end end
  if not any then return f, 0 end
  local g = f:select(cols)
  local kept = g:filter(function(row)
    for _, c in ipairs(cols) do if row[c] == nil or row[c] ~= row[c] then return false end end
    return true
  end)
  return kept, #f - #kept
end

-- The residual sum of squares of a least-squares fit and its df.
local function rss(fit) return fit.sigma * fit.sigma * (fit.n - #fit.terms), fit.n - #fit.terms end

-- The partial R^2 of the column b in the fit of y on x (terms of b
-- dropped); one coefficient: from its t; a category: from the two RSS.
local function partial_r2(fname, f, y, x, b, fit)
  if fit.coef[b] then
    local t = fit.coef[b] / fit.se[b]
    local df = fit.n - #fit.terms
    return t * t / (t * t + df)
  end
  local rest = {}
  for _, v in ipairs(x) do if v ~= b then rest[#rest + 1] = v end end
  local reduced = E.call(fname, S._fit, f, y, rest, "ols")
  local full = rss(fit)
  local red = rss(reduced)
  return 1 - full / red
end

local sens_mt = {__name = "sluice.sensitivity"}

local function pct(v) return string.format("%.2f%%", 100 * v) end

function sens_mt.__tostring(r)
  local lines = {}
  local function add(k, v) lines[#lines + 1] = string.format("  %-13s %s", k, v) end
  if r.treatment then
    lines[1] = string.format("sensitivity to an unmeasured confounder Z: least squares of %s on %s given %s",
                             r.outcome, r.treatment, r.set_text)
  else
    lines[1] = "sensitivity to an unmeasured confounder Z of a least-squares estimate"
  end
  lines[1] = lines[1] .. "\n  (omitted-variable bias, Cinelli and Hazlett 2020)"
  add("estimate", string.format("%s  (SE %s, t %s on %s df)", fmt(r.estimate), fmt(r.se),
                                fmt(r.t), fmt(r.df)))
  if r.n then add("n", string.format("%d used, %d dropped for missing values", r.n, r.dropped)) end
  add("partial R^2", pct(r.partial_r2) .. " of the outcome's variance left by the set is explained by the treatment;")
  lines[#lines + 1] = "                a confounder explaining all the rest of the outcome would need to explain\n" ..
                      "                " .. pct(r.partial_r2) .. " of the treatment's to bring the estimate to 0"
  local goal = r.q == 1 and "to 0" or string.format("by %s of itself", pct(r.q))
  add(string.format("RV (q = %g)", r.q), pct(r.rv) .. ": a confounder explaining " .. pct(r.rv) ..
      " of the residual variance of both")
  lines[#lines + 1] = "                the treatment and the outcome would move the estimate " .. goal ..
                      "; weaker ones could not"
  add(string.format("RV, alpha %g", r.alpha), pct(r.rv_alpha) ..
      (r.rv_alpha == 0 and ": the interval already reaches that value without any confounder"
       or ": enough to make the " .. string.format("%g%%", 100 * (1 - r.alpha)) ..
          " interval reach it (" .. (r.q == 1 and "0" or "the moved value") .. ")"))
  if #r.bounds > 0 then
    lines[#lines + 1] = "bounds: a confounder k times as strong as a benchmark covariate " ..
                        "(in explaining both the treatment and the outcome)"
    lines[#lines + 1] = E.table_text(r.bounds, {
      {"benchmark", "label", "left"}, {"R^2 d~Z|X", "r2dz"}, {"R^2 y~Z|d,X", "r2yz"},
      {"adjusted", "estimate"}, {"SE", "se"}, {"t", "t"},
      {string.format("%g%% interval", 100 * (1 - r.alpha)), "interval", "left"}})
    for _, b in ipairs(r.bounds) do
      if b.impossible then
        lines[#lines + 1] = "  " .. b.label .. ": impossible: a confounder that strong would explain all " ..
                            "of the treatment left by the set"
      end
      if b.capped then
        lines[#lines + 1] = "  * " .. b.label .. ": the bound on R^2 y~Z|d,X exceeds 1 and is set to 1"
      end
    end
    local marks = {}
    for _, b in ipairs(r.benchmarks) do
      marks[#marks + 1] = string.format("%s: R^2 with the treatment %s, with the outcome %s",
                                        b.name, pct(b.r2d), pct(b.r2y))
    end
    lines[#lines + 1] = "  the benchmarks themselves: " .. table.concat(marks, "; ")
  end
  if r.plot then lines[#lines + 1] = "  picture: " .. r.plot .. " (the adjusted estimate over both partial R^2)" end
  lines[#lines + 1] = "  " .. V.caution
  return table.concat(lines, "\n")
end

-- The summary numbers from estimate, se, df alone (no data).
local function from_summary(a)
  local fname = "sensitivity"
  for _, k in ipairs({"data", "treatment", "outcome", "set", "benchmark", "k", "plot"}) do
    if a[k] ~= nil then
      E.fail(fname, k .. " = needs the data: give data =, treatment =, outcome =, set = " ..
             "instead of estimate =, se =, df =")
    end
  end
  local est = number_arg(fname, "estimate", a.estimate)
  local se = number_arg(fname, "se", a.se)
  local df = number_arg(fname, "df", a.df)
  if not se or not df then E.fail(fname, "estimate = needs se = and df = (the residual degrees of freedom)") end
  if not (se > 0) then E.fail(fname, "se = " .. show(se) .. " must be positive") end
  if not (df > 1) then E.fail(fname, "df = " .. show(df) .. " must be above 1") end
  return est, se, df
end

function V.sensitivity(a)
  local fname = "sensitivity"
  if type(a) ~= "table" then
    E.fail(fname, "expects a table of named arguments, e.g. sensitivity{data = f, treatment = \"d\", outcome = \"y\", set = {...}}")
  end
  only(fname, a, sens_keys)
  local q = number_arg(fname, "q", a.q) or 1
  if not (q > 0) then E.fail(fname, "q = " .. show(q) .. " must be positive (1: the whole estimate)") end
  local alpha = number_arg(fname, "alpha", a.alpha) or 0.05
  if not (alpha > 0 and alpha < 1) then
    E.fail(fname, "alpha = " .. show(alpha) .. " must lie strictly between 0 and 1, e.g. 0.05")
  end
  local r = {q = q, alpha = alpha, bounds = {}, benchmarks = {}}
  if a.data == nil and a.estimate ~= nil then
    r.estimate, r.se, r.df = from_summary(a)
  else
    if not E.is_frame(a.data) then E.fail(fname, "data = must be a data frame (read_csv, read_sql)") end
    if a.estimate ~= nil or a.se ~= nil or a.df ~= nil then
      E.fail(fname, "estimate =, se = and df = replace data =: give one or the other")
    end
    local d, y = a.treatment, a.outcome
    E.check_column(fname, "treatment", a.data, d)
    E.check_column(fname, "outcome", a.data, y)
    if d == y then E.fail(fname, "treatment = and outcome = name the same column '" .. d .. "'") end
    for _, c in ipairs({{"treatment", d}, {"outcome", y}}) do
      if a.data[c[2]].type == "category" then
        E.fail(fname, string.format("%s = '%s' is a category column: the analysis is of a " ..
               "least-squares coefficient, so it needs a numeric column (0/1 for a treatment)", c[1], c[2]))
      end
    end
    local set = names_of(fname, "set", a.set)
    for _, v in ipairs(set) do
      E.check_column(fname, "set", a.data, v)
      if v == d then E.fail(fname, "set = holds the treatment '" .. d .. "'") end
      if v == y then E.fail(fname, "set = holds the outcome '" .. y .. "'") end
    end
    local bench = names_of(fname, "benchmark", a.benchmark)
    local inset = {}
    for _, v in ipairs(set) do inset[v] = true end
    for _, b in ipairs(bench) do
      if b == d then
        E.fail(fname, "benchmark = names the treatment '" .. d .. "': a benchmark is a measured " ..
               "covariate of the set, to compare the confounder with")
      end
      if b == y then
        E.fail(fname, "benchmark = names the outcome '" .. y .. "': a benchmark is a measured " ..
               "covariate of the set, to compare the confounder with")
      end
      if not inset[b] then
        local near = E.closest(b, set)
        E.fail(fname, string.format("benchmark = '%s' is not in set = %s%s", b, E.lua_list(set),
               near and ("; did you mean '" .. near .. "'?") or ""))
      end
    end
    local ks = k_list(fname, a.k)
    if a.k ~= nil and #bench == 0 then E.fail(fname, "k = applies to the benchmarks: give benchmark = too") end
    if a.plot ~= nil and type(a.plot) ~= "string" then
      E.fail(fname, "plot = must be a file name ending in .svg, .png or .pdf, got " .. show(a.plot))
    end
    local cols = {y, d}
    for _, v in ipairs(set) do cols[#cols + 1] = v end
    local f, dropped = complete(a.data, cols)
    local x = {d}
    for _, v in ipairs(set) do x[#x + 1] = v end
    local fy = E.call(fname, S._fit, f, y, x, "ols")
    if not fy.coef[d] then E.fail(fname, "the fit has no coefficient for the treatment '" .. d .. "'") end
    r.estimate, r.se = fy.coef[d], fy.se[d]
    r.df = fy.n - #fy.terms
    if not (r.df > 1) then
      E.fail(fname, string.format("%d rows leave %d residual degrees of freedom for %d terms: too few rows",
             fy.n, r.df, #fy.terms))
    end
    if not (r.se > 0) then E.fail(fname, "the fit is exact (SE 0): no room for a confounder to act") end
    r.n, r.dropped = fy.n, dropped
    r.treatment, r.outcome, r.set = d, y, set
    local st = {}
    for i, v in ipairs(set) do st[i] = P.name(v) end
    r.set_text = "{" .. table.concat(st, ", ") .. "}"
    if #bench > 0 then
      local fd = E.call(fname, S._fit, f, d, set, "ols")
      local tcrit = S._sens_tcrit(alpha, r.df - 1)
      for _, b in ipairs(bench) do
        local r2d = partial_r2(fname, f, d, set, b, fd)
        local r2y = partial_r2(fname, f, y, x, b, fy)
        r.benchmarks[#r.benchmarks + 1] = {name = b, r2d = r2d, r2y = r2y}
        for _, k in ipairs(ks) do
          local label = string.format("%gx %s", k, P.name(b))
          local ok, r2dz, r2yz, capped = pcall(S._sens_bound, r2d, r2y, k, k)
          local row = {benchmark = b, k = k, label = label}
          if ok then
            local est, se, t = E.call(fname, S._sens_adjust, r.estimate, r.se, r.df, r2dz, r2yz)
            row.r2dz, row.r2yz, row.capped = r2dz, r2yz, capped
            row.estimate, row.se, row.t = est, se, t
            row.lo, row.hi = est - tcrit * se, est + tcrit * se
            row.interval = fmt(row.lo) .. " to " .. fmt(row.hi)
          else   -- no confounder can be that strong: a row that says so
            row.impossible, row.interval = true, "impossible"
          end
          r.bounds[#r.bounds + 1] = row
        end
      end
    end
  end
  r.t = r.estimate / r.se
  r.partial_r2 = r.t * r.t / (r.t * r.t + r.df)
  r.rv, r.rv_alpha = E.call(fname, S._sens_rv, r.t, r.df, q, alpha)
  if a.plot then
    local xmax, ymax = 0.4, 0.4
    local labels, px, py = {}, {}, {}
    for _, b in ipairs(r.bounds) do
      if not b.impossible then
        xmax, ymax = math.max(xmax, 1.2 * b.r2dz), math.max(ymax, 1.2 * b.r2yz)
        labels[#labels + 1], px[#px + 1], py[#py + 1] = b.label, b.r2dz, b.r2yz
      end
    end
    xmax, ymax = math.min(xmax, 0.99), math.min(ymax, 1)
    r.plot = E.call(fname, S._sens_contour, a.plot,
                    "Adjusted estimate of " .. r.treatment .. " on " .. r.outcome,
                    r.estimate, r.se, r.df, xmax, ymax, 0, "red dashed: adjusted estimate 0",
                    labels, px, py)
  end
  return setmetatable(r, sens_mt)
end

function V.install(M)
  S = M
  M.evalue = V.evalue
  M.sensitivity = V.sensitivity
end

return V
