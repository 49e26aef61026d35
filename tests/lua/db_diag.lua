-- db_diag.lua: balance{} and overlap{} of a lazy table, summed inside the
-- database, against the same of the fetched frame (1e-9 relative, counts
-- exactly), and the frame's numbers against their definitions computed
-- here from the propensities of logit{} (whose fit tests/oracle/
-- logit_statsmodels.py holds to statsmodels): the standardized mean
-- differences by Austin's formula (Austin 2009, Stat. Med. 28, 3083,
-- eq. 1 and 2, from memory), the quartiles by sorting (type 7 of Hyndman
-- and Fan 1996, as Python's statistics.quantiles(method='inclusive')) and
-- the histogram by counting.  Loaded by test_db_diag.lua (SQLite) and
-- db_engines.lua (SQLite and PostgreSQL, tests/shell/postgres.sh); the
-- table is "plots" of tests/data/db_plots.csv.  Returns function(name, db)
-- and the checks, for test_db_diag.lua's larger tables.
local rel = dofile("tests/lua/db_common.lua").rel

-- Near in absolute terms for numbers about 1 (SMDs near 0, propensities).
local function near(a, b, what, tol)
  if not (math.abs(a - b) <= tol * math.max(math.abs(b), 1)) then
    error(string.format("%s: expected %.17g, got %.17g", what, b, a), 2)
  end
end

local moments = {"treated_mean", "control_mean", "treated_var", "control_var", "treated_mean_after",
                 "control_mean_after", "treated_var_after", "control_var_after"}

-- Every number and line of two balance{} results.
local function same_balance(a, b, what)
  eq(#a, #b, what .. ": covariates")
  eq(a.n, b.n, what .. ": n")
  eq(a.dropped, b.dropped, what .. ": dropped")
  eq(a.weights, b.weights, what .. ": weights")
  eq(a.estimand, b.estimand, what .. ": estimand")
  for i = 1, #b do
    local x, y = a[i], b[i]
    eq(x.covariate, y.covariate, what .. ": covariate " .. i)
    eq(x.flag, y.flag, what .. ": flag of " .. y.covariate)
    rel(x.before, y.before, what .. ": SMD before of " .. y.covariate)
    rel(x.after, y.after, what .. ": SMD after of " .. y.covariate)
    for _, k in ipairs(moments) do rel(x[k], y[k], what .. ": " .. k .. " of " .. y.covariate) end
  end
  eq(tostring(a), tostring(b), what .. ": the printout")
end

-- Every number and line of two overlap{} results.
local function same_overlap(a, b, what)
  eq(a.n, b.n, what .. ": n")
  eq(a.dropped, b.dropped, what .. ": dropped")
  eq(a.extreme, b.extreme, what .. ": extreme")
  for g = 1, 2 do
    local x, y = a.groups[g], b.groups[g]
    eq(x.group, y.group, what .. ": group " .. g)
    eq(x.n, y.n, what .. ": rows of " .. y.group)
    for _, k in ipairs({"min", "q1", "median", "q3", "max"}) do
      rel(x[k], y[k], what .. ": " .. k .. " of " .. y.group)
    end
  end
  eq(#a.hist, #b.hist, what .. ": bins")
  for k = 1, #b.hist do
    eq(a.hist[k][1], b.hist[k][1], what .. ": treated in bin " .. k)
    eq(a.hist[k][2], b.hist[k][2], what .. ": control in bin " .. k)
  end
  eq(tostring(a), tostring(b), what .. ": the printout")
end

-- The propensities of the complete rows of f by logit{} (weights: the
-- column, or nil), with their treatment and weight; x the covariates.
local function propensities(f, t, x, weights)
  local m = logit{data = f, y = t, x = x, weights = weights}
  local ps, rows = m:predict(f), {}
  for i = 1, #f do
    if ps[i] == ps[i] then
      rows[#rows + 1] = {p = ps[i], t = f[t][i], w = weights and f[weights][i] or 1, i = i}
    end
  end
  return rows
end

-- Type 7: v sorted, h = (n - 1) p, v[lo + 1] + (h - lo) (v[lo + 2] - v[lo + 1]).
local function type7(v, p)
  local h = (#v - 1) * p
  local lo = math.floor(h)
  if lo + 1 >= #v then return v[#v] end
  return v[lo + 1] + (h - lo) * (v[lo + 2] - v[lo + 1])
end

-- overlap{} of a frame against its definition from the propensities: bin
-- k from (k - 1) / bins to k / bins, each edge and 0.01 less 1e-12 of
-- itself and 0.99 more, so that a propensity on them in exact arithmetic
-- counts as on them (help("overlap")).
local function overlap_by_definition(o, rows, bins, what, tol)
  local arm, hist, extreme = {[0] = {}, [1] = {}}, {}, 0
  for k = 1, bins do hist[k] = {0, 0} end
  for _, r in ipairs(rows) do
    local v = arm[r.t]
    v[#v + 1] = r.p
    if r.p < 0.01 * (1 - 1e-12) or r.p > 0.99 * (1 + 1e-12) then extreme = extreme + 1 end
    local k = 1
    for j = 1, bins - 1 do if r.p >= j / bins * (1 - 1e-12) then k = j + 1 end end
    hist[k][2 - r.t] = hist[k][2 - r.t] + 1
  end
  eq(o.n, #rows, what .. ": rows")
  eq(o.extreme, extreme, what .. ": outside [0.01, 0.99]")
  for g, a in ipairs({1, 0}) do
    local v = arm[a]
    table.sort(v)
    eq(o.groups[g].n, #v, what .. ": rows of arm " .. a)
    near(o.groups[g].min, v[1], what .. ": min of arm " .. a, tol)
    near(o.groups[g].max, v[#v], what .. ": max of arm " .. a, tol)
    near(o.groups[g].q1, type7(v, 0.25), what .. ": q1 of arm " .. a, tol)
    near(o.groups[g].median, type7(v, 0.5), what .. ": median of arm " .. a, tol)
    near(o.groups[g].q3, type7(v, 0.75), what .. ": q3 of arm " .. a, tol)
  end
  for k = 1, bins do
    eq(o.hist[k][1], hist[k][1], what .. ": treated in bin " .. k)
    eq(o.hist[k][2], hist[k][2], what .. ": control in bin " .. k)
  end
end

-- balance{} of a frame against Austin's SMD with the estimand's weights
-- from the propensities: ATE 1/p and 1/(1 - p), ATT 1 and p/(1 - p), ATC
-- (1 - p)/p and 1, times the rows' own weights.
local function balance_by_definition(b, f, rows, x, estimand, what, tol)
  local function ipw(r)
    local p = r.p
    if estimand == "ATT" then return r.t == 1 and 1 or p / (1 - p) end
    if estimand == "ATC" then return r.t == 1 and (1 - p) / p or 1 end
    return r.t == 1 and 1 / p or 1 / (1 - p)
  end
  local k = 0
  for _, name in ipairs(x) do
    local col = f[name]
    local dummies = {}
    if col.type == "category" then
      local lv = col:levels()
      for l = 2, #lv do dummies[#dummies + 1] = {name .. "=" .. lv[l], lv[l]} end
    else dummies[1] = {name} end
    for _, d in ipairs(dummies) do
      k = k + 1
      local function value(r)
        local v = col[r.i]
        if d[2] then return v == d[2] and 1 or 0 end
        return v
      end
      local function smd(weight)
        local s = {[0] = {0, 0, 0}, [1] = {0, 0, 0}}
        for _, r in ipairs(rows) do
          local g, w, v = s[r.t], weight(r), value(r)
          g[1], g[2], g[3] = g[1] + w, g[2] + w * v, g[3] + w * v * v
        end
        local function mv(g) local m = g[2] / g[1]; return m, g[3] / g[1] - m * m end
        local m1, v1 = mv(s[1])
        local m0, v0 = mv(s[0])
        return (m1 - m0) / math.sqrt((v1 + v0) / 2), m1, m0
      end
      eq(b[k].covariate, d[1], what .. ": covariate " .. k)
      local before, m1, m0 = smd(function(r) return r.w end)
      local after, a1, a0 = smd(function(r) return r.w * ipw(r) end)
      near(b[k].before, before, what .. ": SMD before of " .. d[1], tol)
      near(b[k].after, after, what .. ": SMD after of " .. d[1], tol)
      rel(b[k].treated_mean, m1, what .. ": treated mean of " .. d[1], tol)
      rel(b[k].control_mean, m0, what .. ": control mean of " .. d[1], tol)
      rel(b[k].treated_mean_after, a1, what .. ": treated mean after of " .. d[1], tol)
      rel(b[k].control_mean_after, a0, what .. ": control mean after of " .. d[1], tol)
    end
  end
  eq(#b, k, what .. ": covariates")
end

local checks = {rel = rel, same_balance = same_balance, same_overlap = same_overlap,
                propensities = propensities, overlap_by_definition = overlap_by_definition,
                balance_by_definition = balance_by_definition}

return function(name, db)
  -- a text treatment, weights and a covariate that is the treatment in
  -- another coding, from the same rows
  local q = db:query("SELECT plot, soil, rain, treated, yield, " ..
                     "CASE WHEN treated = 1 THEN 'mulched' ELSE 'bare' END AS cover, " ..
                     "10 * treated + 5 AS t_scaled, 1 + plot % 3 AS w FROM plots")
  local f = q:fetch()

  local function both(fn, a, what)
    a.data = q
    local r1 = fn(a)
    a.data = f
    local r2 = fn(a)
    if fn == balance then same_balance(r1, r2, what) else same_overlap(r1, r2, what) end
    return r1, r2
  end

  test(name("balance{} in the database equals the fetched frame's"), function()
    for _, est in ipairs({"ATE", "ATT", "ATC"}) do
      local b = both(balance, {treatment = "treated", set = {"rain", "soil"}, estimand = est}, est)
      eq(#b, 4, "rain and a dummy for each soil but clay")
      eq(b[2].covariate, "soil=loam")
      eq(b.n, 31, "the rows with rain and soil")
      eq(b.dropped, 9, "rows dropped for missing values")
      both(balance, {treatment = "treated", set = {"rain", "soil"}, estimand = est, weights = "w"},
           est .. " weights")
    end
    both(balance, {treatment = "treated", set = {"rain"}, stabilized = true}, "stabilized")
    both(balance, {treatment = "cover", set = {"rain", "soil"}}, "text treatment")
    both(balance, {treatment = "cover", set = {"rain"}, treated = "bare"}, "treated =")
    both(balance, {treatment = "treated", outcome = "yield", set = {"rain"}}, "outcome =")
    both(balance, {treatment = "treated", outcome = "yield",
                   graph = graph "rain -> treated -> yield; rain -> yield; soil -> yield"}, "graph =")
    both(balance, {treatment = "treated", set = {}}, "no covariates")
  end)

  test(name("balance{} of the frame is Austin's SMD with the weights from logit{}"), function()
    for _, est in ipairs({"ATE", "ATT", "ATC"}) do
      for _, w in ipairs({false, true}) do
        local weights = w and "w" or nil
        local b = balance{data = f, treatment = "treated", set = {"rain", "soil"}, estimand = est,
                          weights = weights}
        local rows = propensities(f, "treated", {"rain", "soil"}, weights)
        balance_by_definition(b, f, rows, {"rain", "soil"}, est,
                              est .. (w and " weights" or ""), 1e-8)
      end
    end
  end)

  test(name("overlap{} in the database equals the fetched frame's"), function()
    local o = both(overlap, {treatment = "treated", set = {"rain", "soil"}}, "20 bins")
    eq(o.n, 31)
    eq(o.groups[1].n + o.groups[2].n, 31, "treated and control")
    for _, bins in ipairs({1, 7, 250, 1000}) do
      both(overlap, {treatment = "treated", set = {"rain", "soil"}, bins = bins}, bins .. " bins")
    end
    both(overlap, {treatment = "treated", set = {"rain"}, weights = "w"}, "weights")
    both(overlap, {treatment = "cover", set = {"rain"}, treated = "bare"}, "treated =")
    -- few distinct propensities (one per soil), and one for every row
    both(overlap, {treatment = "treated", set = {"soil"}}, "ties")
    both(overlap, {treatment = "treated", set = {}}, "one propensity")
  end)

  test(name("overlap{} of the frame is its propensities sorted and counted"), function()
    for _, set in ipairs({{"rain", "soil"}, {"soil"}, {"rain"}}) do
      for _, bins in ipairs({20, 3, 1000}) do
        local o = overlap{data = f, treatment = "treated", set = set, bins = bins}
        overlap_by_definition(o, propensities(f, "treated", set), bins,
                              table.concat(set, ", ") .. ", " .. bins .. " bins", 1e-9)
      end
    end
    local o = overlap{data = f, treatment = "treated", set = {"rain"}, weights = "w"}
    overlap_by_definition(o, propensities(f, "treated", {"rain"}, "w"), 20, "weights", 1e-9)
  end)

  test(name("overlap{} of a lazy table draws the same picture as the frame's"), function()
    local dir = os.tmpname()
    os.remove(dir)
    assert(os.execute("mkdir " .. dir))
    overlap{data = q, treatment = "treated", set = {"rain", "soil"}, plot = dir .. "/lazy.svg"}
    overlap{data = f, treatment = "treated", set = {"rain", "soil"}, plot = dir .. "/frame.svg"}
    local a, b = assert(io.open(dir .. "/lazy.svg")):read("a"), assert(io.open(dir .. "/frame.svg")):read("a")
    assert(a:find("<svg", 1, true), "an SVG picture")
    eq(a, b, "the same picture")
    os.execute("rm -rf " .. dir)
  end)

  test(name("what balance{} and overlap{} in the database cannot do is refused by name"), function()
    raises(function() balance{data = q, treatment = "treated", set = {"rain"}, truncate = {5, 95}} end,
           "balance:", "truncate =", "t:fetch()")
    raises(function() balance{data = q, treatment = "treated", set = {"rain", "t_scaled"}} end,
           "balance:", "the covariate 't_scaled' takes one value among the treated and another " ..
           "among the controls", "the treatment 'treated' under another name")
    raises(function() balance{data = q, treatment = "treated", set = {"rain", "treated"}} end,
           "balance:", "set = holds the treatment 'treated'")
    raises(function() overlap{data = q, treatment = "rain", set = {"soil"}} end,
           "overlap:", "needs a 0/1 treatment", "'rain' takes other values")
    raises(function() overlap{data = q, treatment = "soil", set = {"rain"}} end,
           "overlap:", "the treatment 'soil' has 4 levels")
    raises(function() overlap{data = q, treatment = "treated", set = {"rian"}} end,
           "overlap:", "no column 'rian'", "did you mean 'rain'")
    raises(function() balance{data = q, treatment = "treated", set = {"rain"}, weights = "soil"} end,
           "balance:", "weights = 'soil' has text values")
    -- a diagnostic draws no bootstrap replicates, so needs no key
    eq(#balance{data = q, treatment = "treated", set = {"rain"}, boot = 10}, 1)
  end)
end, checks
