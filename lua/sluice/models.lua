-- sluice.models: ols{} and logit{}, their argument checks, the chosen
-- standard error, and the printed table; the fit comes from the C
-- primitive S._fit (src/bind/bind_stats.c over src/stats/regress.c).
local E = require "sluice.estimate"
local fail, show, choice, check_column, call, fmt = E.fail, E.show, E.choice, E.check_column,
                                                    E.call, E.fmt
local is_frame, as_list, args = E.is_frame, E.as_list, E.args
local M = {}

local S   -- the module, set by install

-- The arguments ols{} and logit{} know.
local known_fit = {data = true, y = true, x = true, se = true, cluster = true, weights = true,
                   level = true}

local model_mt = {__name = "sluice.model"}
model_mt.__index = model_mt

-- What the chosen standard error is, for the line under a model's head.
local se_words = {
  classical = "classical",
  HC0 = "HC0 (heteroskedasticity-robust, White)",
  HC1 = "HC1 (heteroskedasticity-robust, White, times n/(n-p))",
  HC3 = "HC3 (heteroskedasticity-robust, leverage-adjusted)",
}

-- The lines on the standard errors, weights and clusters of a model.
local function model_notes(m)
  local se = se_words[m.se_method] or m.se_method
  if m.se_method == "cluster" then
    se = string.format("cluster-robust by '%s', %d clusters (Liang-Zeger; factor G/(G-1) (n-1)/(n-p))",
                       m.cluster, m.clusters)
  end
  local df = m.df and (m.df == math.floor(m.df) and string.format("%d", m.df)
                       or string.format("%.2f", m.df))
  local dist = string.format("p and %g%% intervals from %s", 100 * m.level,
                             df and ("t with " .. df .. " df") or "the normal")
  local lines = {"  SE " .. se .. "; " .. dist}
  if #lines[1] > 80 then lines = {"  SE " .. se, "  " .. dist} end
  if m.in_database then
    lines[#lines + 1] = "  summed inside the database (aggregate queries; the rows stayed there)"
  end
  if m.weights then
    lines[#lines + 1] = string.format("  weights '%s': sum %s, effective sample size (Kish) %s",
                                      m.weights, fmt(m.weight_sum), fmt(m.ess))
  end
  return table.concat(lines, "\n")
end

function model_mt.__tostring(m)
  local rows = {}
  for i, t in ipairs(m.terms) do
    rows[i] = {term = t, est = m.coef[t], se = m.se[t], z = m.coef[t] / m.se[t], p = m.p[t],
               lo = m.lo[t], hi = m.hi[t]}
    if m.odds_ratio then
      rows[i].orr, rows[i].orlo, rows[i].orhi = m.odds_ratio[t], m.or_lo[t], m.or_hi[t]
    end
  end
  local head = m.kind == "ols"
    and string.format("least squares: %s on %d rows (%d dropped for missing values)\n" ..
                      "  R^2 %s, adjusted %s, residual SD %s",
                      m.y, m.n, m.dropped, fmt(m.r2), fmt(m.adj_r2), fmt(m.sigma))
    or string.format("logistic regression: %s on %d rows (%d dropped for missing values)\n" ..
                     "  log-likelihood %s, %s in %d iterations",
                     m.y, m.n, m.dropped, fmt(m.loglik),
                     m.converged and "converged" or "NOT converged", m.iterations)
  local cols = {{"term", "term", "left"}, {"estimate", "est"}, {"SE", "se"},
                {m.kind == "ols" and "t" or "z", "z"}, {"p", "p"}, {"lower", "lo"}, {"upper", "hi"}}
  if m.odds_ratio then
    cols[#cols + 1] = {"odds ratio", "orr"}
    cols[#cols + 1] = {"OR lower", "orlo"}
    cols[#cols + 1] = {"OR upper", "orhi"}
  end
  local text = head .. "\n" .. model_notes(m) .. "\n" .. E.table_text(rows, cols)
  if m.warning and m.warning ~= "" then text = text .. "\n  warning: " .. m.warning end
  return text
end

-- Predictions for the rows of a frame: a list (NaN where a value is missing).
function model_mt:predict(f)
  if getmetatable(self) ~= model_mt then
    error("m:predict: call it on a model from ols{} or logit{}, as m:predict(f)", 0)
  end
  if not is_frame(f) then error("m:predict: expects a data frame, got " .. show(f), 0) end
  local n, out = #f, {}
  local cols = {}
  for i, term in ipairs(self.terms) do
    if i > 1 then
      local col, level = term:match("^(.-)=(.*)$")
      if not (col and self._categorical[col]) then col, level = term, nil end
      local ok, c = pcall(function() return f[col] end)
      if not ok or c == nil then error("m:predict: the frame has no column '" .. col .. "'", 0) end
      cols[#cols + 1] = {c = c, level = level, b = self.coef[term]}
    end
  end
  local b0 = self.coef["(intercept)"]
  for r = 1, n do
    local eta = b0
    for _, t in ipairs(cols) do
      local v = t.c[r]
      if v == nil then eta = 0 / 0; break end
      if t.level then eta = eta + (v == t.level and t.b or 0) else eta = eta + v * t.b end
    end
    if self.kind == "logit" then eta = 1 / (1 + math.exp(-eta)) end
    out[r] = eta
  end
  return setmetatable(out, {__name = "sluice.predictions",
    __tostring = function(p) return string.format("%d predictions", #p) end})
end

-- Below this many clusters a cluster-robust SE is warned of (common
-- practice: the sandwich needs many clusters to be near its limit).
local FEW_CLUSTERS = 30

-- A numeric column named by option key of fit(), or an error naming it.
local function numeric_column(kind, key, f, name)
  check_column(kind, key, f, name)
  if f[name].type == "category" then
    fail(kind, string.format("%s = '%s' has text values; weights must be numbers", key, name))
  end
  return name
end

-- The options of ols{} and logit{} for S._fit: se =, cluster = (which
-- level =, checked: a number strictly between 0 and 1, or nil.
local function level_option(kind, a)
  if a.level ~= nil and not (type(a.level) == "number" and a.level > 0 and a.level < 1) then
    fail(kind, "level = " .. show(a.level) .. " must lie strictly between 0 and 1, e.g. 0.95")
  end
  return a.level
end

-- alone means se = "cluster"), weights =, level =.
local function fit_options(kind, a)
  local o = {}
  local se = choice(kind, "se", a.se, {"classical", "HC0", "HC1", "HC3", "cluster"})
  if a.cluster ~= nil then
    o.cluster = check_column(kind, "cluster", a.data, a.cluster)
    if se ~= nil and se ~= "cluster" then
      fail(kind, string.format('cluster = "%s" asks for cluster-robust SEs, but se = "%s"; ' ..
                               'drop one of them', a.cluster, se))
    end
    se = "cluster"
  elseif se == "cluster" then
    fail(kind, 'se = "cluster" needs cluster = "column" naming the clusters')
  end
  o.se = se or "classical"
  if a.weights ~= nil then o.weights = numeric_column(kind, "weights", a.data, a.weights) end
  o.level = level_option(kind, a)
  return o
end

local is_lazy = E.is_lazy

-- ols{} and logit{} of a lazy table: summed inside the database
-- (S._fit_db); numeric columns, no weights or clusters, se = classical,
-- HC0 or HC1.
local function fit_db(kind, a)
  for _, key in ipairs({"weights", "cluster"}) do
    if a[key] ~= nil then
      fail(kind, key .. " = is not available for a lazy table yet; fetch the rows " ..
                 "(t:fetch()) and fit in memory")
    end
  end
  local se = choice(kind, "se", a.se, {"classical", "HC0", "HC1", "HC3", "cluster"})
  if se == "HC3" or se == "cluster" then
    fail(kind, string.format('se = "%s" is not available for a lazy table (%s); use "HC1" ' ..
                             'or "HC0", or fetch the rows (t:fetch()) and fit in memory', se,
                             se == "HC3" and "it needs each row's leverage"
                             or "it needs each cluster's sums"))
  end
  local o = {se = se or "classical"}
  o.level = level_option(kind, a)
  local types = a.data:types()
  for _, name in ipairs(as_list(a.x)) do
    if types[name] == "category" then
      fail(kind, string.format("x: '%s' has text values; a lazy table's model takes numeric " ..
                               "columns only (code the levels as 0/1 columns in db:query, " ..
                               "or fetch the rows)", name))
    end
  end
  if types[a.y] == "category" then
    fail(kind, string.format("y: '%s' has text values", a.y))
  end
  return o
end

-- The argument checks of args(), for data = a frame or a lazy table;
-- true for a lazy table.
local function fit_args(kind, a)
  if type(a) == "table" and is_lazy(a.data) then
    local names = {}
    for k in pairs(known_fit) do names[#names + 1] = k end
    table.sort(names)
    for k in pairs(a) do
      if not known_fit[k] then E.unknown_key(kind, k, names, "argument") end
    end
    return true
  end
  args(kind, a, known_fit)
  return false
end

local function fit(kind, a)
  local lazy = fit_args(kind, a)
  if type(a.y) ~= "string" then fail(kind, "y = must name the response column") end
  check_column(kind, "y", a.data, a.y)
  if a.x ~= nil and type(a.x) ~= "string" and type(a.x) ~= "table" then
    fail(kind, "x = must be a column name or a list of names, got " .. show(a.x))
  end
  local x = as_list(a.x)
  for _, name in ipairs(x) do check_column(kind, "x", a.data, name) end
  local opts = lazy and fit_db(kind, a) or fit_options(kind, a)
  local m = call(kind, lazy and S._fit_db or S._fit, a.data, a.y, x, kind, opts)
  m.kind, m.y, m.x, m.in_database = kind, a.y, x, lazy or nil
  m.weights, m.cluster = opts.weights, opts.cluster
  if m.clusters and m.clusters < FEW_CLUSTERS then
    local few = string.format("%d clusters in '%s': cluster-robust SEs are unreliable with " ..
                              "fewer than %d (they tend to be too small)",
                              m.clusters, opts.cluster, FEW_CLUSTERS)
    m.warning = (m.warning ~= "" and m.warning .. "; " or "") .. few
  end
  m._categorical = {}
  for _, name in ipairs(lazy and {} or x) do
    if a.data[name].type == "category" then m._categorical[name] = true end
  end
  return setmetatable(m, model_mt)
end

function M.install(mod, metas)
  S = mod
  metas.model = model_mt   -- its methods are made public with the module's
  mod.ols = function(a) return fit("ols", a) end
  mod.logit = function(a) return fit("logit", a) end
end

return M
