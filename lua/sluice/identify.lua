-- sluice.identify: the words around g:identify: why an effect is not
-- identified, the other routes (an adjustment set, a front-door set), and
-- how a result and the table of r:evaluate print.
local P = require "sluice.print"
local I = {}

local function names(list)
  local out = {}
  for i, v in ipairs(list or {}) do out[i] = P.name(v) end
  return table.concat(out, ", ")
end

local function set(list) return "{" .. names(list) .. "}" end

-- "x" for one node, "{x1, x2}" for more.
local function one_or_set(list)
  if #list == 1 then return P.name(list[1]) end
  return set(list)
end

local function member(list, v)
  for _, w in ipairs(list or {}) do if w == v then return true end end
  return false
end

-- The one-line reason an effect is not identified.
function I.why(r)
  local h = r.hedge
  local held = {}
  for _, v in ipairs(h.f) do
    if member(h.treatment, v) then held[#held + 1] = v end
  end
  local what = "the effect of " .. one_or_set(r.treatment) .. " on " .. one_or_set(r.outcome)
  if #r.given > 0 then what = what .. " given " .. one_or_set(r.given) end
  return what .. " is not identified: F = " .. set(h.f) .. " and F' = " .. set(h.f2) ..
         " form a hedge (each tied together by hidden common causes, both ending in the " ..
         "same nodes; F holds the treatment " .. one_or_set(held) .. ", F' none: " ..
         "Shpitser and Pearl 2006)"
end

-- A front-door set from g:frontdoor, when the graph has that method.
local function frontdoor(g, r)
  if #r.given > 0 or not g.frontdoor then return nil end
  local x = #r.treatment == 1 and r.treatment[1] or r.treatment
  local y = #r.outcome == 1 and r.outcome[1] or r.outcome
  local ok, sets = pcall(g.frontdoor, g, x, y)
  if ok and type(sets) == "table" and type(sets[1]) == "table" then return sets[1] end
  return nil
end

local function finish(g, r)
  if not r.identified then
    r.why = I.why(r)
  else
    r.frontdoor = frontdoor(g, r)
  end
end

local function result_text(r)
  if not r.identified then
    return r.formula .. ": not identified\n  " .. r.why
  end
  local lines = {r.formula}
  if r.adjustment and #r.adjustment == 0 then
    lines[#lines + 1] = "  also by adjustment for {} (no adjustment needed)"
  elseif r.adjustment then
    lines[#lines + 1] = "  also by adjustment for " .. set(r.adjustment)
  elseif #r.given == 0 then
    lines[#lines + 1] = "  no adjustment set exists"
  end
  if r.frontdoor then
    lines[#lines + 1] = "  also by the front-door formula through " .. set(r.frontdoor)
  end
  return table.concat(lines, "\n")
end

local function value_text(v)
  if type(v) == "string" then return P.name(v) end
  return tostring(v)
end

-- "P(y | do(x = 1), z = 0)" and one line per level of the outcome.
local function distribution_text(t, meta)
  if not meta then return "(a distribution)" end
  local at, parts = meta.at or {}, {}
  for _, v in ipairs(meta.treatment) do
    parts[#parts + 1] = P.name(v) .. " = " .. value_text(at[v])
  end
  local title = "P(" .. names(meta.outcome) .. " | do(" .. table.concat(parts, ", ") .. ")"
  local given = {}
  for _, v in ipairs(meta.given or {}) do
    given[#given + 1] = P.name(v) .. " = " .. value_text(at[v])
  end
  if #given > 0 then title = title .. ", " .. table.concat(given, ", ") end
  title = title .. ")"
  local lines, width = {title}, 0
  local label = names(meta.outcome)
  for _, k in ipairs(meta.keys) do
    local s = label .. " = " .. tostring(k)
    if #s > width then width = #s end
  end
  for _, k in ipairs(meta.keys) do
    lines[#lines + 1] = string.format("  %-" .. width .. "s  %.6g", label .. " = " .. tostring(k), t[k])
  end
  return table.concat(lines, "\n")
end

function I.install(M, metas, hooks)
  hooks.identify_finish = finish
  hooks.identify_text = result_text
  hooks.distribution_text = distribution_text
end

return I
