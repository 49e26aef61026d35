-- sluice.diagnostics: balance{} (standardized mean differences before and
-- after weighting) and overlap{} (the propensities by group, as a text
-- histogram and a picture), with their printed tables; the weights come
-- from the C primitive S._weights.
local P = require "sluice.print"
local E = require "sluice.estimate"
local fail, show, call, whole = E.fail, E.show, E.call, E.whole
local D = {}

local S   -- the module, set by install

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

function D.balance(a)
  local set, _, opts = E.spec("balance", a)
  for _, name in ipairs(set) do
    if name == a.treatment then
      fail("balance", "set = holds the treatment '" .. name .. "': a covariate cannot be the treatment")
    end
  end
  opts.method = "ipw"
  local ps, w, t, rows = call("balance", S._weights, a.data, a.treatment, a.outcome, set, opts)
  local out = {weights = "inverse probability", estimand = opts.estimand}
  local ones = {}   -- before weighting: the rows' own weights, or 1
  local sw = a.weights and a.data[a.weights]
  for i = 1, #w do ones[i] = sw and sw[rows[i]] or 1 end
  if sw then out.weights = "inverse probability times " .. P.name(a.weights) end
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

function D.overlap(a)
  local set, _, opts = E.spec("overlap", a)
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

function D.install(mod)
  S = mod
  mod.balance = D.balance
  mod.overlap = D.overlap
end

return D
