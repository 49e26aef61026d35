-- sluice.compare: the estimate under each candidate adjustment set, beside
-- the truth (a number, or a model m whose effect is known) and beside the
-- value each set converges to (m:limit), as a table and a forest plot.
local P = require "sluice.print"
local E = require "sluice.estimate"
local C = {}
local S

local function fail(msg) error("compare: " .. msg, 3) end

local function key(set)
  local s = {}
  for i, v in ipairs(set) do s[i] = v end
  table.sort(s)
  return table.concat(s, "\0"), s
end

local function set_text(s)
  if #s == 0 then return "{}" end
  local names = {}
  for i, v in ipairs(s) do names[i] = P.name(v) end
  return "{" .. table.concat(names, ", ") .. "}"
end

local function is_model(v)
  local mt = getmetatable(v)
  return type(mt) == "table" and mt.__name == "sluice.sem"
end

-- The candidate sets, each once, with the labels of where it came from.
local function candidates(g, x, y, extra)
  local list, index = {}, {}
  local function add(set, label)
    local k, sorted = key(set)
    if index[k] then
      local c = list[index[k]]
      if not c.label:find(label, 1, true) then c.label = c.label .. ", " .. label end
      return
    end
    list[#list + 1] = {set = sorted, label = label}
    index[k] = #list
  end
  add({}, "no adjustment")
  local all = {}
  local hidden = {}
  for _, h in ipairs(g:hidden()) do hidden[h] = true end
  for _, v in ipairs(g:nodes()) do
    if v ~= x and v ~= y and not hidden[v] then all[#all + 1] = v end
  end
  add(all, "all covariates")
  local sets = g:adjust(x, y, {limit = 20})
  for _, s in ipairs(sets) do add(s, "minimal") end
  local o = g:optimal(x, y)
  if o then add(o, "optimal") end
  for _, s in ipairs(extra or {}) do
    if type(s) == "string" then s = {s} end
    for _, v in ipairs(s) do
      if hidden[v] then fail("the set " .. set_text(s) .. " names the hidden node '" .. v ..
                             "', which has no data") end
    end
    add(s, "yours")
  end
  return list
end

-- A text forest plot: one line per row, the interval as [---*---], the
-- truth as |.
local function forest_text(rows, truth)
  local lo, hi = math.huge, -math.huge
  local function see(v) if v and v == v and v > -math.huge and v < math.huge then
    lo = math.min(lo, v); hi = math.max(hi, v) end end
  for _, r in ipairs(rows) do see(r.estimate); see(r.lo); see(r.hi) end
  see(truth)
  if lo == math.huge then return "" end
  if hi == lo then hi = lo + 1 end
  local width = 44
  local function col(v) return math.floor((v - lo) / (hi - lo) * (width - 1) + 1.5) end
  local lines, labw = {}, 0
  for _, r in ipairs(rows) do labw = math.max(labw, utf8.len(r.set_text) or #r.set_text) end
  labw = math.min(labw, 28)
  for _, r in ipairs(rows) do
    local cells = {}
    for i = 1, width do cells[i] = " " end
    if truth then cells[col(truth)] = "|" end
    if r.lo and r.hi then
      for i = col(r.lo), col(r.hi) do cells[i] = "-" end
      cells[col(r.lo)] = "["; cells[col(r.hi)] = "]"
    end
    if r.estimate then cells[col(r.estimate)] = "*" end
    local label = r.set_text
    if (utf8.len(label) or #label) > labw then label = label:sub(1, labw - 3) .. "..." end
    lines[#lines + 1] = (string.format("  %-" .. labw .. "s  %s", label, table.concat(cells)):gsub("%s+$", ""))
  end
  lines[#lines + 1] = string.format("  %-" .. labw .. "s  %-22s%22s", "", E.fmt(lo), E.fmt(hi))
  if truth then lines[#lines + 1] = "  * estimate, [ ] interval, | truth" end
  return table.concat(lines, "\n")
end

local compare_mt = {__name = "sluice.comparison"}
function compare_mt.__tostring(c)
  local head = string.format("%s of %s on %s under each candidate set (%s)", c.estimand,
                             c.treatment, c.outcome, c.method)
  if c.truth then
    head = head .. string.format("; truth %s%s", E.fmt(c.truth),
                                 c.truth_se and (" (Monte Carlo, SE " .. E.fmt(c.truth_se) .. ")") or "")
  end
  local cols = {{"set", "set_text", "left"}, {"from", "label", "left"}, {"valid", "valid_text", "left"},
                {"estimate", "estimate"}, {"interval", "interval", "left"}}
  if c.truth then cols[#cols + 1] = {"error %", "error_pct"} end
  if c.has_limit then cols[#cols + 1] = {"limit", "limit"} end
  local lines = {head, E.table_text(c, cols), ""}
  local any = false
  for _, r in ipairs(c) do
    if r.reason then
      if not any then lines[#lines + 1] = "why the invalid sets fail:"; any = true end
      lines[#lines + 1] = "  " .. r.set_text .. ": " .. r.reason
    end
  end
  if any then lines[#lines + 1] = "" end
  lines[#lines + 1] = forest_text(c, c.truth)
  if c.has_limit then
    lines[#lines + 1] = "  limit: the value the least-squares coefficient converges to with that set"
  end
  if c.plot then lines[#lines + 1] = "  picture: " .. c.plot end
  lines[#lines + 1] = "  " .. E.caution
  return table.concat(lines, "\n")
end

local allowed = {data = true, graph = true, treatment = true, outcome = true, truth = true,
                 sets = true, method = true, boot = true, seed = true, level = true,
                 plot = true, estimand = true, threads = true}

function C.compare(a)
  if type(a) ~= "table" then fail("expects a table of named arguments") end
  for k in pairs(a) do
    if not allowed[k] then fail("unknown argument '" .. tostring(k) .. "'") end
  end
  local x, y = a.treatment, a.outcome
  if type(x) ~= "string" or type(y) ~= "string" then fail("treatment = and outcome = name columns") end
  local m = is_model(a.truth) and a.truth or nil
  local g = a.graph or (m and m:graph())
  if not g then fail("graph = is needed to judge the sets (or truth = a model on a graph)") end
  local truth, truth_se
  if type(a.truth) == "number" then truth = a.truth
  elseif m then
    if m:exact() then truth = m:effect(x, y)
    else truth, truth_se = m:effect(x, y, {draws = 200000, seed = a.seed or 1}) end
  elseif a.truth ~= nil then fail("truth = must be a number or a model from sem()") end
  local rows = candidates(g, x, y, a.sets)
  local method = a.method or "standardize"
  local boot = a.boot
  if boot == nil then boot = method == "standardize" and 200 or 0 end
  local has_limit = m and m:exact()
  for _, r in ipairs(rows) do
    r.set_text = set_text(r.set)
    local ok, why = g:admissible(x, y, r.set)
    r.valid = ok
    r.valid_text = ok and "yes" or "no"
    if not ok then r.reason = tostring(why[1]) end
    local est = E.estimate{data = a.data, treatment = x, outcome = y, set = r.set,
                           method = method, boot = boot, seed = a.seed, level = a.level,
                           estimand = a.estimand, threads = a.threads}
    r.estimate, r.lo, r.hi, r.se = est.estimate, est.lo, est.hi, est.se
    r.interval = r.lo and (E.fmt(r.lo) .. " to " .. E.fmt(r.hi)) or "-"
    if truth and truth ~= 0 then r.error_pct = 100 * (r.estimate - truth) / truth end
    if has_limit then r.limit = m:limit(x, y, r.set) end
  end
  rows.treatment, rows.outcome, rows.method = x, y, method
  rows.estimand = a.estimand or "ATE"
  rows.truth, rows.truth_se, rows.has_limit = truth, truth_se, has_limit
  if a.plot then
    local labels, est, lo, hi = {}, {}, {}, {}
    for i, r in ipairs(rows) do
      labels[i] = r.set_text .. (r.valid and "" or " (invalid)")
      est[i], lo[i], hi[i] = r.estimate, r.lo or 0 / 0, r.hi or 0 / 0
    end
    rows.plot = S._forest(a.plot, "Effect of " .. x .. " on " .. y .. " by adjustment set",
                          "estimate", labels, est, lo, hi, truth or 0 / 0, truth and "truth" or nil)
  end
  return setmetatable(rows, compare_mt)
end

function C.install(M)
  S = M
  M.compare = C.compare
end

return C
