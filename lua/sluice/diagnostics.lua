-- sluice.diagnostics: balance{} (standardized mean differences before and
-- after weighting) and overlap{} (the propensities by group, as a text
-- histogram and a picture), with their printed tables.  The numbers come
-- from the C primitives S._balance and S._overlap, written once over sums
-- (src/stats/sumdiag.c), so that a data frame and a lazy table (whose rows
-- stay in the database) give the same.
local P = require "sluice.print"
local E = require "sluice.estimate"
local fail, show, call, whole = E.fail, E.show, E.call, E.whole
local D = {}

local S   -- the module, set by install

-- The propensity model's warnings, one line each.
local function warning_lines(w)
  local out = {}
  for line in (w or ""):gmatch("[^\n]+") do out[#out + 1] = "  warning: " .. line end
  return out
end

local balance_mt = {__name = "sluice.balance"}
function balance_mt.__tostring(b)
  local w = warning_lines(b.warnings)
  return string.format("covariate balance between treated and control (%s weights for the %s)\n",
                       b.weights, b.estimand) ..
         E.table_text(b, {{"covariate", "covariate", "left"}, {"SMD before", "before"},
                          {"SMD after", "after"}, {"", "flag", "left"}}) ..
         "\n  * |SMD| > 0.1 after weighting (common practice; Austin 2009)" ..
         (#w > 0 and "\n" .. table.concat(w, "\n") or "")
end

function D.balance(a)
  local set, _, opts = E.spec("balance", a)
  for _, name in ipairs(set) do
    if name == a.treatment then
      fail("balance", "set = holds the treatment '" .. name .. "': a covariate cannot be the treatment")
    end
  end
  opts.method = "ipw"
  local r = call("balance", S._balance, a.data, a.treatment, a.outcome, set, opts)
  local out = {weights = "inverse probability", estimand = opts.estimand, n = r.n,
               dropped = r.dropped, warnings = r.warnings}
  if a.weights then out.weights = "inverse probability times " .. P.name(a.weights) end
  for i, row in ipairs(r) do
    row.flag = math.abs(row.after) > 0.1 and "*" or ""
    out[i] = row
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
  for _, w in ipairs(warning_lines(o.warnings)) do lines[#lines + 1] = w end
  if o.plot then lines[#lines + 1] = "  picture: " .. o.plot end
  return table.concat(lines, "\n")
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
  local o = call("overlap", S._overlap, a.data, a.treatment, a.outcome, set, opts, bins)
  if a.plot then
    local c1, c0 = {}, {}
    for k, h in ipairs(o.hist) do c1[k], c0[k] = h[1], h[2] end
    o.plot = call("overlap", S._histograms, a.plot, "Propensity of " .. a.treatment .. " by group",
                  "fitted propensity", c1, "treated", c0, "control", 0, 1)
  end
  return setmetatable(o, overlap_mt)
end

function D.install(mod)
  S = mod
  mod.balance = D.balance
  mod.overlap = D.overlap
end

return D
