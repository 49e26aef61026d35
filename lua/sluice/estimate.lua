-- sluice.estimate: the public form of the estimators, estimate{}, with its
-- argument checks and printed table, and the argument helpers the other
-- layers share (sluice.models for ols{} and logit{}, sluice.diagnostics for
-- balance{} and overlap{}).  The numbers come from the C primitive
-- S._estimate.
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
  if v == nil or type(v) == "boolean" then return tostring(v) end
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

-- Refuse key k, not one of the sorted names: suggest the nearest, or
-- list them all when none is near (word: "argument" or "option").
local function unknown_key(fname, k, names, word)
  local near = type(k) == "string" and closest(k, names)
  fail(fname, string.format("unknown %s %s%s", word,
       type(k) == "string" and ("'" .. k .. "'") or show(k),
       near and ("; did you mean '" .. near .. "'?")
       or (" (" .. word .. "s: " .. table.concat(names, ", ") .. ")")))
end
E.unknown_key = unknown_key

-- One of the allowed words, or an error that suggests the nearest.
local function choice(fname, key, value, allowed, default)
  if value == nil then return default end
  for _, a in ipairs(allowed) do if value == a then return value end end
  local near = type(value) == "string" and closest(value, allowed)
  fail(fname, string.format("%s = %s is not one of %s%s", key, show(value),
       table.concat(allowed, ", "), near and ("; did you mean '" .. near .. "'?") or ""))
end

local function as_list(v)
  if v == nil then return {} end
  if type(v) == "string" then return {v} end
  local out = {}
  for i, x in ipairs(v) do out[i] = x end
  return out
end

-- Whether v is a lazy table (connect(...):table or :query).
function E.is_lazy(v)
  local mt = getmetatable(v)
  return type(v) == "userdata" and type(mt) == "table" and mt.__name == "sluice.lazy"
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
  estimate = {data = true, treatment = true, outcome = true, set = true, graph = true,
              method = true, estimand = true, scale = true, interactions = true,
              contrast = true, stabilized = true, truncate = true, boot = true,
              level = true, seed = true, threads = true, via = true, instrument = true,
              se = true, interval = true, cluster = true, treated = true, weights = true},
}
known.balance = {}
for k in pairs(known.estimate) do known.balance[k] = true end
known.balance.via, known.balance.instrument = nil, nil
known.balance.se, known.balance.interval, known.balance.cluster = nil, nil, nil
known.overlap = {data = true, treatment = true, outcome = true, set = true, graph = true,
                 plot = true, bins = true, weights = true, treated = true}
E.known = known

-- The argument table, with unknown keys refused (they are typos).
local function args(fname, a, keys)
  if type(a) ~= "table" then fail(fname, "expects a table of named arguments, e.g. " ..
                                  fname .. "{data = f, ...}") end
  local names = {}
  for k in pairs(keys) do names[#names + 1] = k end
  table.sort(names)
  for k in pairs(a) do
    if not keys[k] then unknown_key(fname, k, names, "argument") end
  end
  if E.is_lazy(a.data) then
    if (fname == "estimate" and (a.method == nil or a.method == "standardize" or
                                 a.method == "ipw" or a.method == "aipw")) or
       fname == "balance" or fname == "overlap" then
      return a
    end
    fail(fname, "data = is a database table: " .. (fname == "estimate" and
         'method = "' .. tostring(a.method) .. '"' or fname .. "{}") .. " runs on data frames " ..
         "(estimate{} with standardize, ipw and aipw, balance{}, overlap{}, ols{} and logit{} " ..
         "run in the database); " ..
         "fetch the rows with t:fetch()")
  end
  if not is_frame(a.data) then
    fail(fname, "data = must be a data frame (read_csv, read_sql) or, for estimate{}, balance{}, " ..
         "overlap{}, ols{} and logit{}, a database table (connect)")
  end
  return a
end

E.args = args
E.as_list = as_list
E.whole = whole

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

-- A table of rows as aligned text: cols is a list of {title, key, align, format}
-- (format, a function of a number, defaults to fmt).
function E.table_text(rows, cols)
  local width = {}
  for j, c in ipairs(cols) do width[j] = #c[1] end
  local cells = {}
  for i, r in ipairs(rows) do
    cells[i] = {}
    for j, c in ipairs(cols) do
      local v = r[c[2]]
      local s = type(v) == "number" and (c[4] or fmt)(v) or tostring(v == nil and "" or v)
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

-- ---- the estimate ----

local estimate_mt = {__name = "sluice.estimate"}

local method_names = {standardize = "standardization (g-formula)",
                      ipw = "inverse probability weighting (normalised weights)",
                      aipw = "augmented IPW (doubly robust)",
                      frontdoor = "front-door formula (regression models)",
                      iv = "instrumental variables (two-stage least squares)"}

E.route_caution = "An estimate is only as good as the graph and the assumptions of its route;\n" ..
                  "  it is no substitute for qualified epidemiological or clinical judgement."

-- {"a", "b"} as the user would write the list in Lua.
local function lua_list(list)
  local q = {}
  for i, v in ipairs(list) do q[i] = string.format("%q", v) end
  return "{" .. table.concat(q, ", ") .. "}"
end
E.lua_list = lua_list

local function set_text(list)
  local names = {}
  for i, v in ipairs(list) do names[i] = P.name(v) end
  return "{" .. table.concat(names, ", ") .. "}"
end

-- The printed form of a front-door or IV estimate.
local function route_text(r)
  local lines = {}
  local function add(k, v) lines[#lines + 1] = string.format("  %-11s %s", k, v) end
  if r.method == "frontdoor" then
    lines[1] = string.format("%s: %s of %s on %s, %s scale", method_names.frontdoor, "ATE",
                             r.treatment, r.outcome, r.scale)
  else
    lines[1] = string.format("%s: effect of %s on %s (per unit of %s)", method_names.iv,
                             r.treatment, r.outcome, r.treatment)
  end
  add("estimate", fmt(r.estimate))
  if r.se and r.se == r.se then
    local how
    if r.boot then how = string.format("bootstrap, %d replicates", r.boot)
    elseif r.method == "frontdoor" then how = "delta method on the product of coefficients"
    else how = "HC1 robust" end
    if r.method == "iv" and r.se_classical then
      how = how .. "; classical " .. fmt(r.se_classical) .. ", HC0 " .. fmt(r.se_hc0) ..
            (r.boot and (", HC1 " .. fmt(r.se_hc1)) or "")
    end
    if r.method == "frontdoor" and r.boot and r.se_delta then
      how = how .. "; delta method " .. fmt(r.se_delta)
    end
    add("SE", fmt(r.se) .. "   (" .. how .. ")")
    add(string.format("%g%% CI", r.level * 100),
        fmt(r.lo) .. " to " .. fmt(r.hi) ..
        (r.boot and ("   (percentile; normal " .. fmt(r.lo_normal) .. " to " ..
                     fmt(r.hi_normal) .. ")") or "   (normal)"))
  else
    add("SE", "none: give boot = 200 or more")
  end
  add("n", string.format("%d used, %d dropped for missing values", r.n, r.dropped))
  if r.method == "frontdoor" then
    add("via", set_text(r.via) .. "   (" .. r.set_reason .. ")")
    local models = {}
    for j, m in ipairs(r.via) do
      local rhs = {r.treatment}
      for l = 1, j - 1 do rhs[#rhs + 1] = r.via[l] end
      models[j] = string.format("%s ~ %s (%s): %s %s", P.name(m), table.concat(rhs, " + "),
                                r.mediator_binary[j] and "logistic" or "linear", r.treatment,
                                fmt(r.mediator_coef[j]))
    end
    for j, t in ipairs(models) do add(j == 1 and "models" or "", t) end
    local coefs = {}
    for j, m in ipairs(r.via) do coefs[j] = P.name(m) .. " " .. fmt(r.outcome_coef[j]) end
    add("", string.format("%s ~ %s + %s%s (%s): %s", r.outcome, r.treatment,
                          table.concat(r.via, " + "), r.interactions and " + interactions" or "",
                          r.binary_outcome and "logistic" or "linear", table.concat(coefs, ", ")))
    if r.product and #r.via == 1 then
      add("product", string.format("%s x %s = %s", fmt(r.mediator_coef[1]), fmt(r.outcome_coef[1]),
                                   fmt(r.mediator_coef[1] * r.outcome_coef[1])))
    end
    add("means", string.format("%s under treatment, %s under control (E[%s | do(%s)])",
                               fmt(r.mu1), fmt(r.mu0), r.outcome, r.treatment))
  else
    add("instrument", set_text(r.instrument) .. " given " .. set_text(r.set) ..
        "   (" .. r.set_reason .. ")")
    local coefs = {}
    for j, z in ipairs(r.instrument) do coefs[j] = P.name(z) .. " " .. fmt(r.first_coef[j]) end
    add("first stage", string.format("F = %s on %d and %d df (p %s), partial R^2 %s; %s",
                                     fmt(r.first_f), r.first_df1, r.first_df2, fmt(r.first_p),
                                     fmt(r.first_r2_partial), table.concat(coefs, ", ")))
    if r.wald then
      add("Wald", string.format("%s / %s = %s   (difference in %s over difference in %s " ..
                                "between the instrument's arms)", fmt(r.wald_itt),
                                fmt(r.wald_uptake), fmt(r.wald), r.outcome, r.treatment))
    end
  end
  for _, w in ipairs(r.warnings) do add("warning", w) end
  if r.method == "iv" and r.binary_treatment then
    lines[#lines + 1] = "  caution: when the effect differs between units, 2SLS estimates a local effect:\n" ..
      "  the average effect among compliers (those whose treatment the instrument\n" ..
      "  moves), assuming no one does the opposite of what it encourages\n" ..
      "  (Imbens and Angrist 1994); not the effect in everyone."
  elseif r.method == "iv" then
    lines[#lines + 1] = "  caution: when the effect differs between units, 2SLS estimates a weighted\n" ..
      "  average of the effects of unit changes among those whose treatment the\n" ..
      "  instrument moves (Angrist, Graddy and Imbens 2000; for a 0/1 treatment, the\n" ..
      "  effect among compliers, Imbens and Angrist 1994); not the effect in everyone."
  end
  lines[#lines + 1] = "  " .. E.route_caution
  return table.concat(lines, "\n")
end

-- Where the SE comes from, in words.
local function se_text(r)
  local log = r.se_log_scale and "of the log " .. (r.scale == "ratio" and "ratio" or "odds ratio")
              .. ", " or ""
  if r.se_method == "bootstrap" then
    return string.format("%sbootstrap, %d replicates%s", r.in_database and "Poisson " or "",
                         r.boot, r.se_analytic and
                         ("; sandwich " .. (r.se_log_scale and "(log scale) " or "") ..
                          fmt(r.se_analytic)) or "")
  elseif r.se_method == "ps known" then
    return log .. "sandwich, propensities taken as known"
  elseif r.method == "ipw" then
    return log .. "sandwich with the propensity model (M-estimation)"
  elseif r.method == "aipw" then
    return log .. "influence function"
  end
  return log .. "sandwich with the outcome model (M-estimation)"
end

-- Which interval lo and hi are, and the others beside it.
local function interval_text(r)
  local others = {}
  local function other(name, lo, hi)
    if lo and r.interval ~= name then others[#others + 1] = name .. " " .. fmt(lo) .. " to " .. fmt(hi) end
  end
  other("percentile", r.lo_percentile, r.hi_percentile)
  other("bca", r.lo_bca, r.hi_bca)
  if r.boot then other("normal", r.lo_normal, r.hi_normal) end
  local own = r.interval == "bca" and "BCa" or r.interval
  if r.interval == "normal" and r.se_log_scale and r.se_method ~= "bootstrap" then
    own = "normal on the log scale"
  end
  return own .. (#others > 0 and ("; " .. table.concat(others, "; ")) or "")
end

function estimate_mt.__tostring(r)
  if r.method == "frontdoor" or r.method == "iv" then return route_text(r) end
  local lines = {string.format("%s: %s of %s on %s, %s scale", method_names[r.method],
                               r.estimand, r.treatment, r.outcome, r.scale)}
  local function add(k, v) lines[#lines + 1] = string.format("  %-10s %s", k, v) end
  add("estimate", fmt(r.estimate))
  if r.se then
    add("SE", fmt(r.se) .. "   (" .. se_text(r) .. ")")
    add(string.format("%g%% CI", r.level * 100), fmt(r.lo) .. " to " .. fmt(r.hi) ..
        "   (" .. interval_text(r) .. ")")
  else
    add("SE", "none: give boot = 200 or more")
  end
  add("n", string.format("%d used, %d dropped for missing values", r.n, r.dropped))
  if r.in_database then
    add("data", "summed inside the database (" .. r.in_database .. "); no row left it")
  end
  local set = {}
  for i, v in ipairs(r.set) do set[i] = P.name(v) end
  add("set", "{" .. table.concat(set, ", ") .. "}   (" .. r.set_reason .. ")")
  if r.ess_weights then
    add("weights", string.format("%s, sampling weights (Kish's effective sample size %.1f of %d rows)",
                                 P.name(r.weights), r.ess_weights, r.n))
  end
  if r.clusters then add("clusters", string.format("%d (%s)", r.clusters, P.name(r.cluster))) end
  if r.treated_level then
    add("treated", string.format("%s = %s (control %s = %s; choose with treated =)", r.treatment,
                                 P.name(r.treated_level), r.treatment, P.name(r.control_level)))
  end
  if r.binary_treatment then
    add("means", string.format("%s under treatment, %s under control", fmt(r.mu1), fmt(r.mu0)))
  else
    add("means", string.format("%s with the treatment raised by %s, %s as observed",
                               fmt(r.mu1), fmt(r.contrast or 1), fmt(r.mu0)))
  end
  if r.ess then
    -- Kish's ESS over all rows, then within each group: the groups' figures
    -- are not parts of the overall one, so the label keeps them apart
    add("ESS", string.format("%.1f overall; within groups: treated %.1f, control %.1f", r.ess,
                             r.ess_treated, r.ess_control))
    add("propensity", fmt(r.ps_min) .. " to " .. fmt(r.ps_max))
  end
  for _, w in ipairs(r.warnings) do add("warning", w) end
  lines[#lines + 1] = "  " .. E.caution
  return table.concat(lines, "\n")
end

-- ---- routes in the graph ----

-- The method name of the graph g, when g has it (g:frontdoor, g:instruments
-- and g:identify come from other parts of sluice; each is used when there).
local function graph_method(g, name)
  local ok, f = pcall(function() return g[name] end)
  if ok and type(f) == "function" then return f end
end
E.graph_method = graph_method

-- The first reason of a list of reasons (or a reason, or a string) as text.
local function reason_text(why)
  if type(why) == "table" then
    local w = why[1]
    if w == nil then return "?" end
    if type(w) == "table" and w.text then return tostring(w.text) end
    return tostring(w)
  end
  return why == nil and "?" or tostring(why)
end
E.reason_text = reason_text

-- The list in causal order: by place in g:order(), names not in it last.
local function causal_order(g, list)
  local at = {}
  for i, v in ipairs(g:order()) do at[v] = i end
  local out = as_list(list)
  local pos = {}
  for i, v in ipairs(out) do pos[v] = i end
  table.sort(out, function(a, b)
    local pa, pb = at[a] or math.huge, at[b] or math.huge
    if pa ~= pb then return pa < pb end
    return pos[a] < pos[b]
  end)
  return out
end

-- The graph's front-door set with the fewest nodes (the first listed of
-- those), in causal order, and how many sets there are; nil when none.
function E.pick_frontdoor(g, x, y)
  local f = graph_method(g, "frontdoor")
  if not f then return nil, 0, "this sluice has no g:frontdoor" end
  local ok, sets = pcall(f, g, x, y)
  if not ok then return nil, 0, tostring(sets):gsub("^[^:\n]*:%d+: ", "", 1) end
  if type(sets) ~= "table" or #sets == 0 then return nil, 0 end
  local best
  for i, v in ipairs(sets) do if not best or #v < #sets[best] then best = i end end
  return causal_order(g, sets[best]), #sets
end

-- The graph's instrument with the smallest conditioning set (the first
-- listed of those: the list is sorted by instrument), and how many.
function E.pick_instrument(g, x, y)
  local f = graph_method(g, "instruments")
  if not f then return nil, 0, "this sluice has no g:instruments" end
  local ok, list = pcall(f, g, x, y)
  if not ok then return nil, 0, tostring(list):gsub("^[^:\n]*:%d+: ", "", 1) end
  if type(list) ~= "table" or #list == 0 then return nil, 0 end
  local best
  for i, v in ipairs(list) do
    if not best or #as_list(v.given) < #as_list(list[best].given) then best = i end
  end
  return {z = list[best].z, given = as_list(list[best].given)}, #list
end

-- The calls that estimate the effect by another route than adjustment,
-- one line each: a front-door set, an instrument, and the general
-- identification formula (g:identify) or why there is none.
function E.route_calls(g, x, y)
  local out = {}
  local head = string.format("estimate{data = ..., treatment = %q, outcome = %q, ", x, y)
  local via, nfd = E.pick_frontdoor(g, x, y)
  if via then
    out[#out + 1] = string.format("a front-door set %s%s: %smethod = \"frontdoor\", via = %s}",
                                  set_text(via), nfd > 1 and string.format(" (1 of %d)", nfd) or "",
                                  head, lua_list(via))
  end
  local inst, niv = E.pick_instrument(g, x, y)
  if inst then
    out[#out + 1] = string.format("an instrument %s given %s%s: %smethod = \"iv\", instrument = %q, set = %s}",
                                  P.name(inst.z), set_text(inst.given),
                                  niv > 1 and string.format(" (1 of %d)", niv) or "", head,
                                  inst.z, lua_list(inst.given))
  end
  local identify = graph_method(g, "identify")
  local ok, r = false, nil
  if identify then ok, r = pcall(identify, g, x, y) end
  if ok and type(r) == "table" then
    if r.identified then
      out[#out + 1] = string.format("the general formula %s; on discrete data: " ..
                                    "g:identify(%q, %q):evaluate(data, {at = {[%q] = 1}})",
                                    tostring(r.formula), x, y, x)
    elseif inst then
      out[#out + 1] = "note: the graph alone does not identify the effect (" .. reason_text(r.why) ..
                      "); the instrument gives it under a linear model with one effect for all, " ..
                      "and otherwise a local effect"
    else
      out[#out + 1] = "none: " .. reason_text(r.why) ..
                      "; no estimator recovers it from these data without further assumptions"
    end
  end
  return out
end

-- The message for a graph with no adjustment set: why, and the routes.
local function no_set_message(g, x, y, sets)
  local msg = string.format("the graph admits no valid adjustment set for %s -> %s: %s", x, y,
                            reason_text(sets.none))
  local calls = E.route_calls(g, x, y)
  if #calls == 0 then
    local have = graph_method(g, "frontdoor") or graph_method(g, "instruments") or
                 graph_method(g, "identify")
    return msg .. (have and "\n  and the graph shows no front-door set and no instrument"
                   or "\n  (g:frontdoor, g:instruments and g:identify, which look for another " ..
                      "route, are not available in this build)")
  end
  if #calls == 1 and calls[1]:find("^none: ") then return msg .. "\n  " .. calls[1] end
  local routes = 0
  for _, c in ipairs(calls) do if not c:find("^note: ") then routes = routes + 1 end end
  return msg .. "\n  " .. (routes > 1 and "other routes exist:" or "another route exists:") ..
         "\n    " .. table.concat(calls, "\n    ")
end

-- The covariates: set = as given, or graph = chosen from the graph.
-- balance{} and overlap{} need covariates, not an outcome: without outcome =
-- the treatment's parents, which block every back-door trail to any outcome
-- when none of them is hidden and no hidden common cause touches the treatment.
local function parent_set(fname, g, x)
  local found = false
  for _, v in ipairs(g:nodes()) do if v == x then found = true end end
  if not found then
    local near = closest(x, g:nodes())
    fail(fname, string.format("treatment = '%s' is not a node of graph =%s", x,
         near and ("; did you mean '" .. near .. "'?") or ""))
  end
  local hidden = {}
  for _, h in ipairs(g:hidden()) do hidden[h] = true end
  for _, p in ipairs(g:parents(x)) do
    if hidden[p] then
      fail(fname, string.format("graph = alone cannot choose the covariates: the treatment '%s' " ..
           "has the hidden parent '%s'; give outcome = to use the graph's adjustment set, or set =",
           x, p))
    end
  end
  for _, e in ipairs(g:edges()) do
    if e.kind == "<->" and (e.from == x or e.to == x) then
      fail(fname, string.format("graph = alone cannot choose the covariates: the treatment '%s' " ..
           "shares a hidden common cause with '%s'; give outcome = to use the graph's " ..
           "adjustment set, or set =", x, e.from == x and e.to or e.from))
    end
  end
  return as_list(g:parents(x)), "the treatment's parents in the graph (no outcome = given)"
end

local function resolve_set(fname, a)
  if a.set ~= nil and a.graph ~= nil then fail(fname, "give set = or graph =, not both") end
  if a.set ~= nil then return as_list(a.set), "as given" end
  if a.graph == nil then
    fail(fname, "give set = {covariates}, or graph = g to choose them from a causal graph")
  end
  local g = a.graph
  if a.outcome == nil then return parent_set(fname, g, a.treatment) end
  local o, why = g:optimal(a.treatment, a.outcome)
  if o then return as_list(o), "the optimal set O(X, Y) of the graph" end
  local sets = g:adjust(a.treatment, a.outcome)
  if #sets == 0 then fail(fname, no_set_message(g, a.treatment, a.outcome, sets)) end
  return as_list(sets[1]), "the smallest minimal set of the graph; no optimal set: " ..
                           reason_text(why)
end

-- treated = as the text the library compares with the treatment's levels.
local function treated_text(fname, v)
  if math.type(v) == "integer" then return string.format("%d", v) end
  if type(v) == "number" and v == v and math.abs(v) < math.huge then return string.format("%.17g", v) end
  if type(v) == "string" then return v end
  if type(v) == "boolean" then return tostring(v) end
  fail(fname, "treated = must be the treatment's level taken as treated (a number or a text), got "
       .. show(v))
end

function E.spec(fname, a)
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
  if a.cluster ~= nil then check_column(fname, "cluster", a.data, a.cluster) end
  if a.weights ~= nil then check_column(fname, "weights", a.data, a.weights) end
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
    method = choice(fname, "method", a.method, fname == "estimate" and
                    {"standardize", "ipw", "aipw", "frontdoor", "iv"} or {"standardize", "ipw", "aipw"},
                    "standardize"),
    estimand = choice(fname, "estimand", a.estimand, {"ATE", "ATT", "ATC"}, "ATE"),
    scale = choice(fname, "scale", a.scale, {"difference", "ratio", "odds ratio"}, "difference"),
    interactions = a.interactions, contrast = a.contrast, stabilized = a.stabilized,
    boot = boot, level = a.level, seed = seed, threads = threads,
    se = choice(fname, "se", a.se, {"sandwich", "ps known"}, "sandwich"),
    interval = choice(fname, "interval", a.interval, {"percentile", "bca", "normal"}, nil),
    cluster = a.cluster, weights = a.weights,
    treated = a.treated ~= nil and treated_text(fname, a.treated) or nil,
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

-- A name or a list of names at option key: a list of distinct strings.
local function names_option(fname, key, v, what)
  if type(v) == "string" then v = {v} end
  if type(v) ~= "table" or #v == 0 then
    fail(fname, string.format("%s = must name %s (a column name or a list of names), got %s",
                              key, what, show(v)))
  end
  local out, seen = {}, {}
  for i, name in ipairs(v) do
    if type(name) ~= "string" then
      fail(fname, string.format("%s = item %d is %s, not a column name", key, i, show(name)))
    end
    if seen[name] then fail(fname, string.format("%s = names '%s' twice", key, name)) end
    seen[name] = true
    out[i] = name
  end
  return out
end

-- A set = list checked as names.
local function set_option(fname, v)
  if v == nil then return {} end
  if type(v) ~= "string" and type(v) ~= "table" then
    fail(fname, "set = must be a column name or a list of names, got " .. show(v))
  end
  return as_list(v)
end

-- None of the names is the treatment, the outcome, or hidden in g.
local function check_roles(fname, key, names, a, word)
  local hidden = {}
  if a.graph then for _, h in ipairs(a.graph:hidden()) do hidden[h] = true end end
  for _, v in ipairs(names) do
    if v == a.treatment then
      fail(fname, string.format("%s = holds the treatment '%s': %s", key, v, word.treatment))
    end
    if v == a.outcome then
      fail(fname, string.format("%s = holds the outcome '%s': %s", key, v, word.outcome))
    end
    if hidden[v] then
      fail(fname, string.format("%s = names '%s', hidden in the graph: it has no data", key, v))
    end
  end
end

-- The mediators of a front-door estimate, in causal order, and why.
local function frontdoor_via(fname, a)
  local g, x, y = a.graph, a.treatment, a.outcome
  if a.instrument ~= nil then fail(fname, 'instrument = applies to method = "iv", not "frontdoor"') end
  if a.set ~= nil then
    fail(fname, 'set = does not apply to method = "frontdoor": the front-door route adjusts for ' ..
         "no covariates (via = names the mediators)")
  end
  if a.via == nil then
    if not g then fail(fname, 'method = "frontdoor" needs via = {mediators}, or graph = g to choose them') end
    local via, count, err = E.pick_frontdoor(g, x, y)
    if not graph_method(g, "frontdoor") then
      fail(fname, "graph = cannot choose the mediators in this build (no g:frontdoor): give via = {...}")
    end
    if not via then
      local msg = string.format("graph = admits no front-door set for %s -> %s%s", x, y,
                                err and (" (" .. err .. ")") or "")
      local calls = E.route_calls(g, x, y)
      if #calls > 0 then msg = msg .. "\n  routes the graph has:\n    " .. table.concat(calls, "\n    ") end
      fail(fname, msg)
    end
    return via, count == 1 and "the front-door set of the graph"
                or string.format("the smallest of the graph's %d front-door sets", count)
  end
  local via = names_option(fname, "via", a.via, "the mediators")
  check_roles(fname, "via", via, a, {
    treatment = "the mediators lie on the paths from the treatment to the outcome",
    outcome = "the mediators lie on the paths from the treatment to the outcome"})
  if not g then return via, "as given, earliest first" end
  local check = graph_method(g, "frontdoor")
  if check then
    local ok, why = check(g, x, y, via)
    if not ok then
      fail(fname, string.format("via = %s is not a front-door set for %s -> %s in the graph: %s",
                                set_text(via), x, y, reason_text(why)))
    end
  end
  return causal_order(g, via), "as given; a front-door set of the graph"
end

-- The instruments of an IV estimate, the set, and why.
local function iv_instrument(fname, a)
  local g, x, y = a.graph, a.treatment, a.outcome
  if a.via ~= nil then fail(fname, 'via = applies to method = "frontdoor", not "iv"') end
  if a.interactions ~= nil then fail(fname, 'interactions = does not apply to method = "iv"') end
  local inst, set, why
  if a.instrument == nil then
    if not g then
      fail(fname, 'method = "iv" needs instrument = a column (and set = the covariates it needs), ' ..
           "or graph = g to choose both")
    end
    if a.set ~= nil then fail(fname, "give instrument = with set =, or graph = alone to choose both") end
    local pick, count, err = E.pick_instrument(g, x, y)
    if not graph_method(g, "instruments") then
      fail(fname, "graph = cannot choose the instrument in this build (no g:instruments): " ..
           "give instrument = and set =")
    end
    if not pick then
      local msg = string.format("graph = shows no instrument for %s -> %s%s", x, y,
                                err and (" (" .. err .. ")") or "")
      local calls = E.route_calls(g, x, y)
      if #calls > 0 then msg = msg .. "\n  routes the graph has:\n    " .. table.concat(calls, "\n    ") end
      fail(fname, msg)
    end
    return {pick.z}, pick.given, count == 1 and "the instrument of the graph"
           or string.format("the first of the graph's %d instruments with the smallest set", count)
  end
  inst = names_option(fname, "instrument", a.instrument, "the instrument")
  check_roles(fname, "instrument", inst, a, {
    treatment = "an instrument is another variable, one that moves the treatment",
    outcome = "an instrument must affect the outcome only through the treatment"})
  set, why = set_option(fname, a.set), "as given"
  if g and a.set == nil and #inst == 1 then   -- the set the graph lists with it
    local list = graph_method(g, "instruments") and g:instruments(x, y) or {}
    for _, v in ipairs(list) do
      if v.z == inst[1] then set, why = as_list(v.given), "the set the graph gives with it"; break end
    end
  end
  local check = g and graph_method(g, "instruments")
  if check then
    for _, z in ipairs(inst) do
      local ok, reasons = check(g, x, y, z, set)
      if not ok then
        fail(fname, string.format("instrument = '%s' given %s is not an instrument for %s -> %s " ..
                                  "in the graph: %s", z, set_text(set), x, y, reason_text(reasons)))
      end
    end
  end
  for _, z in ipairs(inst) do
    for _, w in ipairs(set) do
      if z == w then fail(fname, string.format("instrument = '%s' is also in set =", z)) end
    end
  end
  return inst, set, why
end

-- estimate{method = "frontdoor" | "iv"}: the mediators or instruments, the
-- checks, the primitive.
local function route_estimate(a)
  local fname = "estimate"
  args(fname, a, known.estimate)
  check_column(fname, "treatment", a.data, a.treatment)
  check_column(fname, "outcome", a.data, a.outcome)
  if a.graph ~= nil and (getmetatable(a.graph) or {}).__name ~= "sluice.graph" then
    fail(fname, "graph = must be a graph (graph[[...]] or read_graph), got " .. show(a.graph))
  end
  local method = a.method
  local aux, set, why
  if method == "frontdoor" then
    aux, why = frontdoor_via(fname, a)
    set = {}
    for _, v in ipairs(aux) do check_column(fname, "via", a.data, v) end
  else
    aux, set, why = iv_instrument(fname, a)
    for _, v in ipairs(aux) do check_column(fname, "instrument", a.data, v) end
    for _, v in ipairs(set) do check_column(fname, "set", a.data, v) end
  end
  local boot, seed, threads = E.check_common(fname, a)
  for _, k in ipairs({"stabilized", "truncate"}) do
    if a[k] ~= nil then fail(fname, k .. ' = applies to method = "ipw", not "' .. method .. '"') end
  end
  if a.contrast ~= nil then
    fail(fname, 'contrast = applies to method = "standardize"; method = "' .. method ..
         (method == "iv" and '" estimates the effect per unit of the treatment' or '" needs a 0/1 treatment'))
  end
  if a.interactions ~= nil and type(a.interactions) ~= "boolean" then
    fail(fname, "interactions = " .. show(a.interactions) .. " must be true or false")
  end
  local opts = {
    method = method,
    estimand = choice(fname, "estimand", a.estimand, {"ATE", "ATT", "ATC"}, "ATE"),
    scale = choice(fname, "scale", a.scale, {"difference", "ratio", "odds ratio"}, "difference"),
    interactions = a.interactions == true, boot = boot, level = a.level, seed = seed,
    threads = threads, progress = (boot or 0) >= 200,
  }
  local r = call(fname, S._estimate_route, a.data, a.treatment, a.outcome, set, opts, aux)
  r.method, r.estimand, r.scale = method, opts.estimand, opts.scale
  r.treatment, r.outcome, r.level = a.treatment, a.outcome, a.level or 0.95
  r.set, r.set_reason, r.interactions = set, why, opts.interactions
  if method == "frontdoor" then r.via = aux else r.instrument = aux end
  local w = {}
  for line in (r.warnings or ""):gmatch("[^\n]+") do w[#w + 1] = line end
  r.warnings = w
  r.seed = opts.seed or 1
  return setmetatable(r, estimate_mt)
end

function E.estimate(a)
  if type(a) == "table" then
    choice("estimate", "method", a.method, {"standardize", "ipw", "aipw", "frontdoor", "iv"})
  end
  if type(a) == "table" and (a.method == "frontdoor" or a.method == "iv") then
    for _, k in ipairs({"weights", "cluster", "se", "interval", "treated"}) do
      if a[k] ~= nil then
        fail("estimate", k .. ' = applies to method = "standardize", "ipw" and "aipw"')
      end
    end
    return route_estimate(a)
  end
  if type(a) == "table" and a.via ~= nil then
    fail("estimate", 'via = applies to method = "frontdoor" (the mediators of the front-door route)')
  end
  if type(a) == "table" and a.instrument ~= nil then
    fail("estimate", 'instrument = applies to method = "iv"')
  end
  local set, why, opts = E.spec("estimate", a)
  local outcome = a.outcome
  local r = call("estimate", S._estimate, a.data, a.treatment, outcome, set, opts)
  if E.is_lazy(a.data) then r.in_database = a.data:_engine() end
  r.method, r.estimand, r.scale = opts.method, opts.estimand, opts.scale
  r.treatment, r.outcome, r.level = a.treatment, outcome, a.level or 0.95
  r.contrast, r.weights, r.cluster = a.contrast, a.weights, a.cluster
  r.set, r.set_reason = set, why
  local w = {}
  for line in (r.warnings or ""):gmatch("[^\n]+") do w[#w + 1] = line end
  r.warnings = w
  r.seed = opts.seed or 1
  return setmetatable(r, estimate_mt)
end

function E.install(M)
  S = M
  M.estimate = E.estimate
end

return E
