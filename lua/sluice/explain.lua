-- sluice.explain: the words for trails, adjustment sets and the reasons a
-- set fails.  install() dresses the result metatables and gives the C side
-- hooks.explain(g, set, reasons), which adds a .text to every reason.
local P = require "sluice.print"
local E = {}

local function q(name) return "'" .. name .. "'" end

-- Colliders on a trail: inner nodes with arrowheads from both sides.
local function colliders(trail)
  local out, text = {}, trail.text
  -- rebuild the steps from the text: split on arrows
  local arrows = {}
  for a in text:gmatch(" (<?%-+>?) ") do arrows[#arrows + 1] = a end
  for i = 2, #trail.nodes - 1 do
    local left, right = arrows[i - 1], arrows[i]
    local head_left = left == "->" or left == "<->"
    local head_right = right == "<-" or right == "<->"
    if head_left and head_right then out[#out + 1] = trail.nodes[i] end
  end
  return out
end
E.colliders = colliders

local function member_set(set)
  local m = {}
  for _, v in ipairs(set or {}) do m[v] = true end
  return m
end

-- Why an open non-causal trail is open, given the set.
local function why_open(g, set, trail)
  local inset, parts = member_set(set), {}
  for _, c in ipairs(colliders(trail)) do
    if inset[c] then
      parts[#parts + 1] = "the collider " .. q(c) .. " is in the set, which opens it"
    else
      for _, d in ipairs(g:descendants(c)) do
        if inset[d] then
          parts[#parts + 1] = "the collider " .. q(c) .. " has its descendant " .. q(d) ..
                              " in the set, which opens it"
          break
        end
      end
    end
  end
  if #parts == 0 then
    return "no member of the set blocks it"
  end
  return table.concat(parts, "; ")
end

-- A set in braces, for the optimal set's reasons.
local function set_words(s)
  local names = {}
  for i, v in ipairs(s) do names[i] = P.name(v) end
  return "{" .. table.concat(names, ", ") .. "}"
end

local words = {
  hidden = function(r) return q(r.node) .. " is hidden: it was never measured, so it cannot be adjusted for" end,
  treatment = function(r) return q(r.node) .. " is a treatment" end,
  outcome = function(r) return q(r.node) .. " is an outcome" end,
  mediator = function(r)
    return q(r.node) .. " lies on the causal path " .. (r.trail and r.trail.text or "?") ..
           ": adjusting for a mediator blocks part of the effect"
  end,
  descendant = function(r)
    local nodes = r.trail and r.trail.nodes or {}
    if nodes[#nodes] == r.via then
      return q(r.node) .. " descends from the outcome " .. q(r.via) ..
             ": adjusting for it distorts the effect"
    end
    return q(r.node) .. " descends from " .. q(r.via) .. ", which lies on the causal path " ..
           (r.trail and r.trail.text or "?") .. ": adjusting for it distorts the effect"
  end,
  ["descendant of treatment"] = function(r)
    return q(r.node) .. " descends from the treatment (" .. (r.trail and r.trail.text or "?") ..
           "): the back-door criterion admits no descendant of the treatment"
  end,
  ["no causal path"] = function()
    return "no outcome descends from the treatment: the effect is zero and O(X, Y) is not defined"
  end,
  ["no valid set"] = function()
    return "no valid adjustment set exists, so there is no optimal one " ..
           "(g:adjust shows the trail no set can block; g:identify looks for other routes)"
  end,
  ["not joint"] = function()
    return "the covariates that sharpen the outcome cannot be adjusted for all at once " ..
           "(the trail below opens), so which subset is best depends on the coefficients"
  end,
  ["trade-off"] = function(r, set)
    local rival = r.rival and set_words(r.rival) or "some valid set"
    return q(r.node) .. " sharpens the outcome (it is tied to " .. q(r.via or "?") ..
           " by a collider path) but also carries information on the treatment along " ..
           (r.trail and r.trail.text or "?") .. ", a trail the valid set " .. rival ..
           " leaves open without it: " .. set_words(set or {}) .. " and " .. rival ..
           " each have the smaller variance in some linear models, so no set is best in every model"
  end,
  bidirected = function()
    return "the graph has hidden common causes (<->); O(X, Y) is guaranteed valid only " ..
           "without them (Henckel, Perkovic and Maathuis 2022): use g:adjust"
  end,
  -- the front-door criterion (Pearl 2009, definition 3.3.3) and instruments
  ["missed path"] = function(r)
    return "the directed path " .. (r.trail and r.trail.text or "?") .. " avoids the set: " ..
           "a front-door set intercepts every directed path from the treatment to the outcome"
  end,
  ["back-door from treatment"] = function(r)
    return "the back-door trail " .. (r.trail and r.trail.text or "?") .. " from the treatment to " ..
           q(r.node) .. " is open: the effect of the treatment on " .. q(r.node) .. " is confounded"
  end,
  ["back-door to outcome"] = function(r)
    return "the back-door trail " .. (r.trail and r.trail.text or "?") .. " from " .. q(r.node) ..
           " to the outcome is open given the treatment: the effect of " .. q(r.node) ..
           " on the outcome is confounded"
  end,
  ["no front-door set"] = function(r)
    if r.trail and #r.trail.nodes == 2 then
      return "the treatment affects the outcome directly (" .. r.trail.text .. "): " ..
             "no set can intercept that edge"
    end
    return "no allowed node intercepts the directed path " .. (r.trail and r.trail.text or "?") ..
           ": each node on it is hidden, has an open back-door trail from the treatment, or " ..
           "has an open back-door trail to the outcome that no front-door set closes"
  end,
  ["not relevant"] = function(r)
    return q(r.node) .. " is d-separated from the treatment given the set: it carries no " ..
           "information about the treatment"
  end,
  ["open to outcome"] = function(r)
    return "the trail " .. (r.trail and r.trail.text or "?") .. " is open given the set and does " ..
           "not run through the treatment's effect: " .. q(r.node) ..
           " is tied to the outcome by another route"
  end,
  forbidden = function(r)
    if r.via == r.node then
      return q(r.node) .. " lies on a causal path from the treatment to the outcome: " ..
             "an instrument's set holds no mediator"
    end
    return q(r.node) .. " descends from " .. q(r.via or "?") .. " (" ..
           (r.trail and r.trail.text or "?") .. "): an instrument's set holds no descendant " ..
           "of the outcome or of a node on a causal path"
  end,
}

function E.explain(g, set, reasons, none)
  for _, r in ipairs(reasons) do
    if r.kind == "open" then
      local kind = r.trail.kind == "backdoor" and "back-door" or "non-causal"
      if none then
        r.text = "no allowed set can block the " .. kind .. " trail " .. r.trail.text
      else
        r.text = "the " .. kind .. " trail " .. r.trail.text .. " is open: " ..
                 why_open(g, set, r.trail)
      end
    else
      r.text = (words[r.kind] or function() return r.kind end)(r, set)
    end
  end
end

local function trail_line(t)
  local status = t.open and "open   " or "blocked"
  local line = string.format("%s  %-9s  %s", status, t.kind, t.text)
  if not t.open then
    line = line .. "   (at " .. P.name(t.blocked_at) .. ": " ..
           (t.why == "collider" and "a collider outside the set" or "in the set") .. ")"
  end
  return line
end

local function trails_tostring(list)
  if #list == 0 then return "(no trails)" end
  local lines, open = {}, 0
  for i, t in ipairs(list) do
    lines[i] = trail_line(t)
    if t.open then open = open + 1 end
  end
  table.insert(lines, 1, string.format("%d trail%s, %d open", #list, #list == 1 and "" or "s", open))
  if list.truncated then
    lines[#lines + 1] = string.format("... stopped after %d trails (limit); g:count_trails " ..
                                      "counts them all, {limit = n} lists more", list.truncated)
  end
  return table.concat(lines, "\n")
end

local function set_text(s)
  if #s == 0 then return "{} (the empty set: no adjustment needed)" end
  local names = {}
  for i, v in ipairs(s) do names[i] = P.name(v) end
  return "{" .. table.concat(names, ", ") .. "}"
end

local function sets_tostring(list)
  if list.none then
    local lines = {"no valid adjustment set exists:"}
    for _, r in ipairs(list.none) do lines[#lines + 1] = "  " .. (r.text or r.kind) end
    return table.concat(lines, "\n")
  end
  local lines = {}
  for i, s in ipairs(list) do lines[i] = set_text(s) end
  if list.truncated then
    lines[#lines + 1] = string.format("... stopped after %d sets (limit)", list.truncated)
  end
  return table.concat(lines, "\n")
end

local function reasons_tostring(list)
  local lines = {}
  for i, r in ipairs(list) do lines[i] = "- " .. (r.text or r.kind) end
  return table.concat(lines, "\n")
end

function E.install(M, metas, hooks)
  metas.trail.__tostring = trail_line
  metas.trails.__tostring = trails_tostring
  metas.sets.__tostring = sets_tostring
  metas.reason.__tostring = function(r) return r.text or r.kind end
  metas.reasons.__tostring = reasons_tostring
  hooks.explain = function(g, set, reasons)
    E.explain(g, set, reasons, set and set.none_context)
  end
end

E.set_text = set_text
return E
