-- sluice.estimate: the public form of the models and estimators: ols{},
-- logit{}, estimate{}, balance{}, overlap{}, with their argument checks
-- and printed tables.  The numbers come from the C primitives S._fit,
-- S._estimate, S._weights, S._histograms.
local P = require "sluice.print"
local E = {}

E.caution = "An estimate is only as good as the graph and the no-unmeasured-confounding\n" ..
            "  assumption behind it; it is no substitute for qualified epidemiological or\n" ..
            "  clinical judgement."

local S   -- the module, set by install

local getinfo = debug and debug.getinfo   -- kept before any sandbox hides it

-- "file:line: " of the line the user wrote: the first caller outside the
-- files of lua/sluice ("" when that is a C function).
local function where()
  if not getinfo then return "" end
  for level = 3, 60 do
    local info = getinfo(level, "Sl")
    if not info then break end
    if not (info.source or ""):find("^@lua/sluice/") then
      if (info.currentline or 0) > 0 then return info.short_src .. ":" .. info.currentline .. ": " end
      break
    end
  end
  return ""
end
E.where = where

-- Raise an error for the caller of the public function.
local function fail(fname, msg) error(where() .. fname .. ": " .. msg, 0) end
E.fail = fail

-- A value as the user would write it, for messages: 2.5, nan, "x".
local function show(v)
  if type(v) == "string" then return string.format("%q", v) end
  if type(v) == "number" then
    if v ~= v then return "nan" end
    if v == math.huge then return "inf" elseif v == -math.huge then return "-inf" end
    return tostring(v)
  end
  if v == nil then return "nil" end
  return "a " .. type(v)
end
E.show = show

local function closest(word, choices)
  local best, bestd
  local limit = #word <= 3 and 1 or #word <= 6 and 2 or 3   -- as sl_closest
  for _, c in ipairs(choices) do
    local a, b = word:lower(), c:lower()
    local prev = {}
    for j = 0, #b do prev[j] = j end
    for i = 1, #a do
      local cur = {[0] = i}
      for j = 1, #b do
        cur[j] = math.min(prev[j] + 1, cur[j - 1] + 1,
                          prev[j - 1] + (a:sub(i, i) == b:sub(j, j) and 0 or 1))
      end
      prev = cur
    end
    if prev[#b] <= limit and (not bestd or prev[#b] < bestd) then best, bestd = c, prev[#b] end
  end
  return best
end
E.closest = closest

-- One of the allowed words, or an error that suggests the nearest.
local function choice(fname, key, value, allowed, default)
  if value == nil then return default end
  for _, a in ipairs(allowed) do if value == a then return value end end
  local near = type(value) == "string" and closest(value, allowed)
  fail(fname, string.format("%s = %q is not one of %s%s", key, tostring(value),
       table.concat(allowed, ", "), near and ("; did you mean '" .. near .. "'?") or ""))
end

local function as_list(v)
  if v == nil then return {} end
  if type(v) == "string" then return {v} end
  local out = {}
  for i, x in ipairs(v) do out[i] = x end
  return out
end

local function is_frame(v)
  local mt = getmetatable(v)
  return type(mt) == "table" and mt.__name == "sluice.frame"
end

-- v when it is a whole number from lo to hi (integral floats count), as an integer.
local function whole(v, lo, hi)
  local i = math.type(v) and math.tointeger(v)
  if i and i >= lo and i <= hi then return i end
end

-- The column name at a[key] must name a column of f; the message suggests
-- the nearest name.
local function check_column(fname, key, f, name)
  if type(name) ~= "string" then
    fail(fname, string.format("%s = must name a column, got %s", key, show(name)))
  end
  local names = f:names()
  for _, n in ipairs(names) do if n == name then return name end end
  local near = closest(name, names)
  fail(fname, string.format("%s: no column '%s'%s", key, name,
       near and ("; did you mean '" .. near .. "'?") or ""))
end
E.check_column = check_column
E.is_frame = is_frame
E.choice = choice

-- Call a C primitive; its error is re-raised with the public name and the
-- user's line (not the line of this file, nor the primitive's name).
local function call(fname, fn, ...)
  local ok, a, b, c, d = pcall(fn, ...)
  if ok then return a, b, c, d end
  local msg = tostring(a):gsub("^[^:\n]*:%d+: ", "", 1)
  msg = msg:gsub("^bad argument #%d+ to '[^']*' %((.*)%)$", "%1")
  if msg:sub(1, #fname + 2) == fname .. ": " then msg = msg:sub(#fname + 3) end
  fail(fname, msg)
end
E.call = call

-- The options every estimator shares, checked with their names; returns
-- boot, seed, threads as integers.
function E.check_common(fname, a)
  local boot, seed, threads
  if a.boot ~= nil then
    boot = whole(a.boot, 0, 1000000)
    if not boot then
      fail(fname, "boot = " .. show(a.boot) .. " must be a whole number of replicates (0 to 1000000)")
    end
  end
  if a.level ~= nil and not (type(a.level) == "number" and a.level > 0 and a.level < 1) then
    fail(fname, "level = " .. show(a.level) .. " must lie strictly between 0 and 1, e.g. 0.95")
  end
  if a.seed ~= nil then
    seed = whole(a.seed, math.mininteger, math.maxinteger)
    if not seed then fail(fname, "seed = " .. show(a.seed) .. " must be a whole number") end
  end
  if a.threads ~= nil then
    threads = whole(a.threads, 0, 1024)
    if not threads then
      fail(fname, "threads = " .. show(a.threads) .. " must be a whole number from 0 (all cores) to 1024")
    end
  end
  return boot, seed, threads
end

local known = {
  fit = {data = true, y = true, x = true},
  estimate = {data = true, treatment = true, outcome = true, set = true, graph = true,
              method = true, estimand = true, scale = true, interactions = true,
              contrast = true, stabilized = true, truncate = true, boot = true,
              level = true, seed = true, threads = true},
}
known.balance = known.estimate
known.overlap = {data = true, treatment = true, outcome = true, set = true, graph = true,
                 plot = true, bins = true}

-- The argument table, with unknown keys refused (they are typos).
local function args(fname, a, keys)
  if type(a) ~= "table" then fail(fname, "expects a table of named arguments, e.g. " ..
                                  fname .. "{data = f, ...}") end
  local names = {}
  for k in pairs(keys) do names[#names + 1] = k end
  table.sort(names)
  for k in pairs(a) do
    if not keys[k] then
      local near = type(k) == "string" and closest(k, names)
      fail(fname, string.format("unknown argument '%s'%s", tostring(k),
           near and ("; did you mean '" .. near .. "'?") or ""))
    end
  end
  if not is_frame(a.data) then fail(fname, "data = must be a data frame (read_csv, read_sql)") end
  return a
end

local function fmt(v)
  if v == nil then return "" end
  if type(v) ~= "number" then return tostring(v) end
  if v ~= v then return "NaN" end
  if math.type(v) == "integer" then return tostring(v) end
  local a = math.abs(v)
  if a ~= 0 and (a >= 1e6 or a < 1e-4) then return string.format("%.4e", v) end
  return string.format("%.4f", v)
end
E.fmt = fmt

-- A table of rows as aligned text: cols is a list of {title, key, align}.
function E.table_text(rows, cols)
  local width = {}
  for j, c in ipairs(cols) do width[j] = #c[1] end
  local cells = {}
  for i, r in ipairs(rows) do
    cells[i] = {}
    for j, c in ipairs(cols) do
      local v = r[c[2]]
      local s = type(v) == "number" and fmt(v) or tostring(v == nil and "" or v)
      cells[i][j] = s
      if utf8.len(s) and utf8.len(s) > width[j] then width[j] = utf8.len(s) end
    end
  end
  local function line(vals)
    local out = {}
    for j, c in ipairs(cols) do
      local s = vals[j]
      local pad = string.rep(" ", width[j] - (utf8.len(s) or #s))
      out[j] = c[3] == "left" and s .. pad or pad .. s
    end
    return "  " .. table.concat(out, "  "):gsub("%s+$", "")
  end
  local head = {}
  for j, c in ipairs(cols) do head[j] = c[1] end
  local lines = {line(head)}
  for i = 1, #rows do lines[#lines + 1] = line(cells[i]) end
  return table.concat(lines, "\n")
end

-- ---- models ----

local model_mt = {__name = "sluice.model"}
model_mt.__index = model_mt

function model_mt.__tostring(m)
  local rows = {}
  for i, t in ipairs(m.terms) do
    rows[i] = {term = t, est = m.coef[t], se = m.se[t], rse = m.robust_se[t],
               z = m.coef[t] / m.se[t], p = m.p[t]}
  end
  local head = m.kind == "ols"
    and string.format("least squares: %s on %d rows (%d dropped for missing values)\n" ..
                      "  R^2 %s, adjusted %s, residual SD %s",
                      m.y, m.n, m.dropped, fmt(m.r2), fmt(m.adj_r2), fmt(m.sigma))
    or string.format("logistic regression: %s on %d rows (%d dropped for missing values)\n" ..
                     "  log-likelihood %s, %s in %d iterations",
                     m.y, m.n, m.dropped, fmt(m.loglik),
                     m.converged and "converged" or "NOT converged", m.iterations)
  local text = head .. "\n" .. E.table_text(rows, {
    {"term", "term", "left"}, {"estimate", "est"}, {"SE", "se"},
    {m.kind == "ols" and "robust SE (HC3)" or "robust SE", "rse"},
    {m.kind == "ols" and "t" or "z", "z"}, {"p", "p"}})
  if m.warning and m.warning ~= "" then text = text .. "\n  warning: " .. m.warning end
  return text
end

-- Predictions for the rows of a frame: a list (NaN where a value is missing).
function model_mt:predict(f)
  if not is_frame(f) then error("predict: expects a data frame", 2) end
  local n, out = #f, {}
  local cols = {}
  for i, term in ipairs(self.terms) do
    if i > 1 then
      local col, level = term:match("^(.-)=(.*)$")
      if not (col and self._categorical[col]) then col, level = term, nil end
      local ok, c = pcall(function() return f[col] end)
      if not ok or c == nil then error("predict: the frame has no column '" .. col .. "'", 2) end
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

local function fit(kind, a)
  args(kind, a, known.fit)
  if type(a.y) ~= "string" then fail(kind, "y = must name the response column") end
  check_column(kind, "y", a.data, a.y)
  if a.x ~= nil and type(a.x) ~= "string" and type(a.x) ~= "table" then
    fail(kind, "x = must be a column name or a list of names, got " .. show(a.x))
  end
  local x = as_list(a.x)
  for _, name in ipairs(x) do check_column(kind, "x", a.data, name) end
  local m = call(kind, S._fit, a.data, a.y, x, kind)
  m.kind, m.y, m.x = kind, a.y, x
  m._categorical = {}
  for _, name in ipairs(x) do
    if a.data[name].type == "category" then m._categorical[name] = true end
  end
  return setmetatable(m, model_mt)
end

-- ---- the estimate ----

local estimate_mt = {__name = "sluice.estimate"}

local method_names = {standardize = "standardization (g-formula)",
                      ipw = "inverse probability weighting (normalised weights)",
                      aipw = "augmented IPW (doubly robust)"}

function estimate_mt.__tostring(r)
  local lines = {string.format("%s: %s of %s on %s, %s scale", method_names[r.method],
                               r.estimand, r.treatment, r.outcome, r.scale)}
  local function add(k, v) lines[#lines + 1] = string.format("  %-10s %s", k, v) end
  add("estimate", fmt(r.estimate))
  if r.se then
    add("SE", fmt(r.se) .. (r.boot and string.format("   (bootstrap, %d replicates)", r.boot)
                                    or (r.method == "aipw" and "   (influence function)"
                                        or "   (sandwich, propensities as known)")))
    add(string.format("%g%% CI", r.level * 100),
        fmt(r.lo) .. " to " .. fmt(r.hi) ..
        (r.boot and ("   (percentile; normal " .. fmt(r.lo_normal) .. " to " ..
                     fmt(r.hi_normal) .. ")") or ""))
  else
    add("SE", "none: give boot = 200 or more")
  end
  add("n", string.format("%d used, %d dropped for missing values", r.n, r.dropped))
  local set = {}
  for i, v in ipairs(r.set) do set[i] = P.name(v) end
  add("set", "{" .. table.concat(set, ", ") .. "}   (" .. r.set_reason .. ")")
  if r.binary_treatment then
    add("means", string.format("%s under treatment, %s under control", fmt(r.mu1), fmt(r.mu0)))
  else
    add("means", string.format("%s with the treatment raised by %s, %s as observed",
                               fmt(r.mu1), fmt(r.contrast or 1), fmt(r.mu0)))
  end
  if r.ess then
    add("ESS", string.format("%.1f (treated %.1f, control %.1f)", r.ess,
                             r.ess_treated, r.ess_control))
    add("propensity", fmt(r.ps_min) .. " to " .. fmt(r.ps_max))
  end
  for _, w in ipairs(r.warnings) do add("warning", w) end
  lines[#lines + 1] = "  " .. E.caution
  return table.concat(lines, "\n")
end

-- The covariates: set = as given, or graph = chosen from the graph.
local function resolve_set(fname, a)
  if a.set ~= nil and a.graph ~= nil then fail(fname, "give set = or graph =, not both") end
  if a.set ~= nil then return as_list(a.set), "as given" end
  if a.graph == nil then
    fail(fname, "give set = {covariates}, or graph = g to choose them from a causal graph")
  end
  local g = a.graph
  local o, why = g:optimal(a.treatment, a.outcome)
  if o then return as_list(o), "the optimal set O(X, Y) of the graph" end
  local sets = g:adjust(a.treatment, a.outcome)
  if #sets == 0 then
    fail(fname, "the graph admits no valid adjustment set: " ..
         tostring(sets.none and sets.none[1] or "?"))
  end
  return as_list(sets[1]), "the smallest minimal set of the graph; no optimal set: " ..
                           (why and why[1] and why[1].text or "?")
end

local function spec(fname, a)
  args(fname, a, known[fname])
  check_column(fname, "treatment", a.data, a.treatment)
  if fname == "estimate" or a.outcome ~= nil then check_column(fname, "outcome", a.data, a.outcome) end
  if a.set ~= nil and type(a.set) ~= "string" and type(a.set) ~= "table" then
    fail(fname, "set = must be a column name or a list of names, got " .. show(a.set))
  end
  if a.graph ~= nil and (getmetatable(a.graph) or {}).__name ~= "sluice.graph" then
    fail(fname, "graph = must be a graph (graph[[...]] or read_graph), got " .. show(a.graph))
  end
  local set, why = resolve_set(fname, a)
  for _, name in ipairs(set) do check_column(fname, "set", a.data, name) end
  local boot, seed, threads = E.check_common(fname, a)
  for _, k in ipairs({"interactions", "stabilized"}) do
    if a[k] ~= nil and type(a[k]) ~= "boolean" then
      fail(fname, k .. " = " .. show(a[k]) .. " must be true or false")
    end
  end
  if a.contrast ~= nil and not (type(a.contrast) == "number" and a.contrast == a.contrast and
                                 math.abs(a.contrast) < math.huge and a.contrast ~= 0) then
    fail(fname, "contrast = " .. show(a.contrast) .. " must be a finite number other than 0 " ..
         "(the change in a continuous treatment, e.g. 1)")
  end
  local opts = {
    method = choice(fname, "method", a.method, {"standardize", "ipw", "aipw"}, "standardize"),
    estimand = choice(fname, "estimand", a.estimand, {"ATE", "ATT", "ATC"}, "ATE"),
    scale = choice(fname, "scale", a.scale, {"difference", "ratio", "odds ratio"}, "difference"),
    interactions = a.interactions, contrast = a.contrast, stabilized = a.stabilized,
    boot = boot, level = a.level, seed = seed, threads = threads,
  }
  if a.truncate ~= nil then
    local t = a.truncate
    local lo, hi = type(t) == "table" and t[1], type(t) == "table" and t[2]
    if type(t) ~= "table" or #t ~= 2 or type(lo) ~= "number" or type(hi) ~= "number" or
       not (lo >= 0 and lo < hi and hi <= 100) then
      fail(fname, "truncate = {lo, hi}: two percentiles of the weights with 0 <= lo < hi <= 100, " ..
           "e.g. {1, 99}")
    end
    opts.trunc_lo, opts.trunc_hi = lo, hi
  end
  opts.progress = (boot or 0) >= 200
  return set, why, opts
end

function E.estimate(a)
  local set, why, opts = spec("estimate", a)
  local outcome = a.outcome
  local r = call("estimate", S._estimate, a.data, a.treatment, outcome, set, opts)
  r.method, r.estimand, r.scale = opts.method, opts.estimand, opts.scale
  r.treatment, r.outcome, r.level = a.treatment, outcome, a.level or 0.95
  r.contrast = a.contrast
  r.set, r.set_reason = set, why
  local w = {}
  for line in (r.warnings or ""):gmatch("[^\n]+") do w[#w + 1] = line end
  r.warnings = w
  r.seed = opts.seed or 1
  return setmetatable(r, estimate_mt)
end

-- ---- diagnostics ----

-- Standardized mean difference of x between t = 1 and t = 0, weighted.
local function smd(x, t, w)
  local s = {[0] = {0, 0, 0}, [1] = {0, 0, 0}}
  for i = 1, #x do
    local g = s[t[i]]
    g[1] = g[1] + w[i]; g[2] = g[2] + w[i] * x[i]; g[3] = g[3] + w[i] * x[i] * x[i]
  end
  local function mv(g) local m = g[2] / g[1]; return m, g[3] / g[1] - m * m end
  local m1, v1 = mv(s[1])
  local m0, v0 = mv(s[0])
  local pooled = math.sqrt((v1 + v0) / 2)
  if pooled == 0 then return 0 end
  return (m1 - m0) / pooled
end

local balance_mt = {__name = "sluice.balance"}
function balance_mt.__tostring(b)
  return string.format("covariate balance between treated and control (%s weights for the %s)\n",
                       b.weights, b.estimand) ..
         E.table_text(b, {{"covariate", "covariate", "left"}, {"SMD before", "before"},
                          {"SMD after", "after"}, {"", "flag", "left"}}) ..
         "\n  * |SMD| > 0.1 after weighting (common practice; Austin 2009)"
end

-- A covariate that takes one value among the treated and another among
-- the controls: the treatment under another name; no weights balance it.
local function separates(x, t)
  local v = {}
  for i = 1, #x do
    local g = t[i]
    if v[g] == nil then v[g] = x[i] elseif v[g] ~= x[i] then return false end
  end
  return v[0] ~= nil and v[1] ~= nil and v[0] ~= v[1]
end

function E.balance(a)
  local set, _, opts = spec("balance", a)
  for _, name in ipairs(set) do
    if name == a.treatment then
      fail("balance", "set = holds the treatment '" .. name .. "': a covariate cannot be the treatment")
    end
  end
  opts.method = "ipw"
  local ps, w, t, rows = call("balance", S._weights, a.data, a.treatment, a.outcome, set, opts)
  local out = {weights = "inverse probability", estimand = opts.estimand}
  local ones = {}
  for i = 1, #w do ones[i] = 1 end
  for _, name in ipairs(set) do
    local c = a.data[name]
    local function add(label, x)
      if separates(x, t) then
        fail("balance", string.format("the covariate '%s' takes one value among the treated and " ..
             "another among the controls: it is the treatment '%s' under another name, and its " ..
             "SMD is not defined", label, a.treatment))
      end
      local before, after = smd(x, t, ones), smd(x, t, w)
      out[#out + 1] = {covariate = label, before = before, after = after,
                       flag = math.abs(after) > 0.1 and "*" or ""}
    end
    if c.type == "category" then
      local lv = c:levels()
      for l = 2, #lv do
        local x = {}
        for i, r in ipairs(rows) do x[i] = c[r] == lv[l] and 1 or 0 end
        add(name .. "=" .. lv[l], x)
      end
    else
      local x = {}
      for i, r in ipairs(rows) do x[i] = c[r] end
      add(name, x)
    end
  end
  return setmetatable(out, balance_mt)
end

local overlap_mt = {__name = "sluice.overlap"}
function overlap_mt.__tostring(o)
  local lines = {"propensity of treatment by group (" .. o.n .. " rows)",
                 E.table_text(o.groups, {{"group", "group", "left"}, {"n", "n"}, {"min", "min"},
                                         {"q1", "q1"}, {"median", "median"}, {"q3", "q3"},
                                         {"max", "max"}}),
                 "", "  propensity  treated (#)   control (o)"}
  local maxc, first, last = 1, #o.hist, 1
  for k = 1, #o.hist do
    maxc = math.max(maxc, o.hist[k][1], o.hist[k][2])
    if o.hist[k][1] + o.hist[k][2] > 0 then first = math.min(first, k); last = k end
  end
  for k = first, last do
    local a, b = o.hist[k][1], o.hist[k][2]
    lines[#lines + 1] = string.format("  %4.2f-%4.2f  %-12s  %s", (k - 1) / #o.hist, k / #o.hist,
      string.rep("#", math.floor(12 * a / maxc + 0.5)),
      string.rep("o", math.floor(12 * b / maxc + 0.5))):gsub("%s+$", "")
  end
  if o.extreme > 0 then
    lines[#lines + 1] = string.format("  warning: %d propensities outside [0.01, 0.99] " ..
                                      "(common practice): weights there are unstable", o.extreme)
  end
  if o.plot then lines[#lines + 1] = "  picture: " .. o.plot end
  return table.concat(lines, "\n")
end

local function quantiles(v)
  table.sort(v)
  local function q(p)
    local h = (#v - 1) * p
    local lo = math.floor(h)
    if lo + 1 >= #v then return v[#v] end
    return v[lo + 1] + (h - lo) * (v[lo + 2] - v[lo + 1])
  end
  return {n = #v, min = v[1], q1 = q(0.25), median = q(0.5), q3 = q(0.75), max = v[#v]}
end

function E.overlap(a)
  local set, _, opts = spec("overlap", a)
  local bins = 20
  if a.bins ~= nil then
    bins = whole(a.bins, 1, 1000)
    if not bins then fail("overlap", "bins = " .. show(a.bins) .. " must be a whole number from 1 to 1000") end
  end
  if a.plot ~= nil and type(a.plot) ~= "string" then
    fail("overlap", "plot = must be a file name ending in .svg, .png or .pdf, got " .. show(a.plot))
  end
  local ps, _, t = call("overlap", S._weights, a.data, a.treatment, a.outcome, set, opts)
  local g1, g0, extreme = {}, {}, 0
  local hist = {}
  for k = 1, bins do hist[k] = {0, 0} end
  for i = 1, #ps do
    if t[i] == 1 then g1[#g1 + 1] = ps[i] else g0[#g0 + 1] = ps[i] end
    if ps[i] < 0.01 or ps[i] > 0.99 then extreme = extreme + 1 end
    local k = math.min(bins, math.floor(ps[i] * bins) + 1)
    local h = hist[k]
    if t[i] == 1 then h[1] = h[1] + 1 else h[2] = h[2] + 1 end
  end
  local treated, control = quantiles({table.unpack(g1)}), quantiles({table.unpack(g0)})
  treated.group, control.group = "treated", "control"
  local o = {groups = {treated, control}, n = #ps, extreme = extreme, hist = hist, ps = ps}
  if a.plot then
    o.plot = call("overlap", S._histograms, a.plot, "Propensity of " .. a.treatment .. " by group",
                  "fitted propensity", g1, "treated", g0, "control", 0, 1, bins)
  end
  return setmetatable(o, overlap_mt)
end

function E.install(M)
  S = M
  M.ols = function(a) return fit("ols", a) end
  M.logit = function(a) return fit("logit", a) end
  M.estimate = E.estimate
  M.balance = E.balance
  M.overlap = E.overlap
end

return E
