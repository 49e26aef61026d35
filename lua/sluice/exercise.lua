-- sluice.exercise: the teaching kit.  exercise{} simulates data from a
-- model, draws the graph and writes a handout and an answer key; the file
-- services (open, mkdir, rename, remove, the replay's guard) come from
-- sluice.session.  Everything is computed first, then written into a
-- temporary folder beside dir and moved into place, so that an error
-- leaves no half-written kit.
local E = {}

local KIT_FILES = {"data.csv", "graph.svg", "handout.md", "key.md"}

-- The first line of a key this module wrote: how a folder is known as a kit.
local KEY_HEAD = "# Answer key: "

-- The parts of the kit a teaching assistant may choose (questions =), in
-- the order they appear; the default leaves out trails and test.
local PARTS = {"trails", "valid", "estimate", "choose", "test"}
local DEFAULT_PARTS = {valid = true, estimate = true, choose = true}

-- The arguments exercise{} knows; any other is a mistake the user should hear of.
local exercise_options = {graph = true, model = true, n = true, seed = true, dir = true,
                          treatment = true, outcome = true, scenario = true, draws = true,
                          sets = true, questions = true, digits = true}


-- The public wrapper (src/bind/bind_public.c) puts the user's file and
-- line in front of the message.
local function fail(msg) error("exercise: " .. msg, 0) end

-- An error of a function exercise{} called, told as exercise's own: the
-- positions and the other function's name taken off.
local function rethrow(err, what)
  local msg = tostring(err)
  repeat
    local n
    msg, n = msg:gsub("^[^\n:]+:%d+: ", "", 1)
  until n == 0
  msg = msg:gsub("^exercise: ", "", 1):gsub("^" .. what .. ": ", "", 1)
  fail(msg)
end

local function set_text(set)
  local P = require "sluice.print"
  local t = {}
  for i = 1, #set do t[i] = P.name(set[i]) end
  return "{" .. table.concat(t, ", ") .. "}"
end

local function closest(name, list) return require("sluice.estimate").closest(name, list) end

-- A value as the user would type it, for error messages.
local function show(v) return require("sluice.estimate").show(v) end

-- questions = {"valid", ...}: the set of parts, each known.
local function parts_of(q)
  if q == nil then return DEFAULT_PARTS end
  if type(q) == "string" then q = {q} end
  if type(q) ~= "table" or #q == 0 then
    fail("questions = must list parts of the kit, e.g. {\"valid\", \"estimate\"} (parts: " ..
         table.concat(PARTS, ", ") .. "), got " .. show(q))
  end
  local known, chosen = {}, {}
  for _, p in ipairs(PARTS) do known[p] = true end
  for k in pairs(q) do
    if math.type(k) ~= "integer" or k < 1 or k > #q then
      fail("questions = must be a list of part names, not a table keyed by " .. show(k))
    end
  end
  for i, p in ipairs(q) do
    if type(p) ~= "string" then fail(string.format("questions = item %d is %s, not a part name", i, show(p))) end
    if not known[p] then
      local near = closest(p, PARTS)
      fail(string.format("questions = '%s' is not a part of the kit; %s(parts: %s)", p,
           near and ("did you mean '" .. near .. "'? ") or "", table.concat(PARTS, ", ")))
    end
    chosen[p] = true
  end
  return chosen
end

-- A whole number in [lo, hi] given as key =, or the default.
local function whole(o, key, lo, hi, default)
  local v = o[key]
  if v == nil then return default end
  local i = type(v) == "number" and math.tointeger(v) or nil
  if not (i and i >= lo and i <= hi) then
    fail(string.format("%s = %s must be a whole number from %d to %d", key, show(v), lo, hi))
  end
  return i
end

-- v rounded to digits significant digits (a number that prints so).
local function round(v, digits)
  if type(v) ~= "number" or v ~= v or v == math.huge or v == -math.huge then return v end
  local r = tonumber(string.format("%." .. digits .. "g", v))
  if r == 0 then r = 0.0 end   -- no "-0" in the data
  return r
end

-- The frame d with every numeric column rounded to digits significant digits.
local function rounded(d, digits)
  for _, name in ipairs(d:names()) do
    local c = d[name]
    if c.type == "number" then
      local vals = c:values()
      for i, v in ipairs(vals) do vals[i] = v ~= false and round(v, digits) or false end
      d = d:with_column(name, vals)
    end
  end
  return d
end

-- ---- the texts ----

-- The sluice calls a student would use for each part, with x and y.
local function calls(part, x, y)
  local q = string.format("%q, %q", x, y)
  if part == "trails" then return "`g:trails(" .. q .. ")`, `g:show()`"
  elseif part == "valid" then return "`g:admissible(" .. q .. ", set)`, `g:trails(" .. q .. ", {given = set})`"
  elseif part == "estimate" then
    return "`d = read_csv(\"data.csv\")`, `estimate{data = d, treatment = " .. string.format("%q", x) ..
           ", outcome = " .. string.format("%q", y) .. ", set = set}`"
  elseif part == "choose" then return "`estimate{...}` for each valid set (compare the intervals)"
  elseif part == "test" then return "`g:implications()`, `g:test(d)`"
  end
end

local QUESTION = {
  trails = "List every trail between %s and %s. Which are causal, which are back-door, and " ..
           "which are open when nothing is adjusted for?",
  valid = "Which of the candidate sets are valid for the effect of %s on %s? Give a reason for each.",
  estimate = "Estimate the effect of %s on %s with each candidate set from `data.csv`. What does " ..
             "each set estimate, and why do they differ?",
  choose = "Which valid set would you choose for the effect of %s on %s, and why?",
  test = "Which independences does the graph imply? Do the data in `data.csv` agree with them?",
}

local function handout(o, g, d, x, y, cmp, parts, seed, digits, fence)
  local h = {}
  local function add(s) h[#h + 1] = s end
  add("# Exercise: the effect of " .. x .. " on " .. y)
  add("")
  add(o.scenario or ("A study measures " .. table.concat(d:names(), ", ")
                     .. ". We want the causal effect of " .. x .. " on " .. y .. "."))
  add("")
  add("## The graph")
  add("")
  add(fence(tostring(g)))
  add("")
  add("![the causal graph](graph.svg)")
  add("")
  add("## The data")
  add("")
  add(string.format("`data.csv`: %d rows, columns %s (simulated, seed %d; numbers to %d " ..
                    "significant digits).", #d, table.concat(d:names(), ", "), seed, digits))
  add("")
  if parts.valid or parts.estimate or parts.choose then
    add("## Candidate adjustment sets")
    add("")
    for _, r in ipairs(cmp) do if not r.route then add("- " .. r.set_text) end end
    add("")
  end
  add("## Questions")
  add("")
  local k = 0
  for _, p in ipairs(PARTS) do
    if parts[p] then
      k = k + 1
      add(string.format("%d. " .. QUESTION[p], k, x, y))
      add("   (sluice: " .. calls(p, x, y) .. ")")
    end
  end
  return table.concat(h, "\n") .. "\n"
end

-- The reasons of a list from g:admissible or g:optimal, one per line.
local function reasons(why, indent)
  local out = {}
  for _, r in ipairs(why or {}) do out[#out + 1] = indent .. "- " .. tostring(r) end
  return table.concat(out, "\n")
end

local function key(M, g, d, x, y, m, cmp, parts, seed, n, digits, fence)
  local k = {}
  local function add(s) k[#k + 1] = s end
  add(KEY_HEAD .. "the effect of " .. x .. " on " .. y)
  add("")
  add(string.format("Computed by sluice %s from the seed %d (n = %d), on data.csv as the " ..
                    "students have it (%d significant digits).", M.version, seed, n, digits))
  add("")
  local how = cmp.truth_how == "monte carlo"
      and string.format(" (Monte Carlo, %d draws, SE %.4f, seed %d)", cmp.truth_draws, cmp.truth_se, seed)
      or cmp.truth_how == "exact" and " (exact: every simulated unit has this effect)" or ""
  add("- true total effect (m:effect): " .. string.format("%.4f", cmp.truth) .. how)
  local minimal = g:adjust(x, y)
  local ms = {}
  for i = 1, #minimal do ms[i] = set_text(minimal[i]) end
  add("- minimal valid sets (g:adjust): " .. (#ms > 0 and table.concat(ms, ", ") or "none"))
  local optimal, why_not = g:optimal(x, y)
  if optimal then add("- optimal set (g:optimal): " .. set_text(optimal))
  else
    add("- optimal set (g:optimal): none, because")
    add(reasons(why_not, "  "))
  end
  if parts.trails then
    add("")
    add("## Trails between " .. x .. " and " .. y .. " (g:trails)")
    add("")
    for _, t in ipairs(g:trails(x, y)) do
      add(string.format("- %s: %s, %s%s", t.text, t.kind, t.open and "open" or "blocked",
                        t.blocked_at and (" at " .. t.blocked_at .. (t.why and (" (" .. t.why .. ")") or ""))
                        or ""))
    end
  end
  if parts.valid or parts.estimate or parts.choose then
    add("")
    add("## Each candidate set")
    add("")
    for _, r in ipairs(cmp) do
      local interval = r.lo and string.format(", interval %.4f to %.4f", r.lo, r.hi) or ""
      add(string.format("- %s: %s; estimate %.4f%s", r.set_text, r.valid and "valid" or "not valid",
                        r.estimate, interval))
      if not r.valid and not r.route then
        local _, why = g:admissible(x, y, r.set)
        add(reasons(why, "  "))
      end
    end
    add("")
    add("## The comparison table (compare{})")
    add("")
    add(fence(tostring(cmp)))
  end
  if parts.choose then
    add("")
    add("## The set to choose")
    add("")
    if optimal then
      add("The optimal set " .. set_text(optimal) .. " (g:optimal): among the valid sets it gives " ..
          "the smallest large-sample variance (Henckel, Perković and Maathuis 2022 for linear " ..
          "models; Rotnitzky and Smucler 2020 in general); compare the widths of the intervals above.")
    else
      add("No set is optimal here:")
      add(reasons(why_not, ""))
    end
  end
  if parts.test then
    add("")
    add("## The graph's testable implications (g:test)")
    add("")
    if #g:implications() == 0 then add("The graph implies no independence among the measured columns.")
    else add(fence(tostring(g:test(d)))) end
  end
  add("")
  add(require("sluice.help").caution)
  return table.concat(k, "\n") .. "\n"
end

-- ---- writing the kit whole ----

-- Whether a path names something that exists (a file or a folder).
local function exists(env, path)
  local f = env.open(path, "rb")
  if f then f:close(); return true end
  return false
end

-- The first line of a file, or nil.
local function first_line(env, path)
  local f = env.open(path, "rb")
  if not f then return nil end
  local ok, line = pcall(f.read, f, "l")
  f:close()
  return ok and line or nil
end

-- dir split into its parent ("." for none) and last part.
local function split(dir)
  local parent, base = dir:match("^(.*)/([^/]+)$")
  if not parent then return ".", dir end
  if parent == "" then parent = "/" end
  return parent, base
end

-- Make the folders of path that are missing; returns those it made.
local function make_parents(env, path)
  local made, at = {}, 1
  repeat
    local slash = path:find("/", at + 1, true)
    local part = slash and path:sub(1, slash - 1) or path
    if part ~= "" and part ~= "." and not exists(env, part) then
      local ok, err = env.mkdir(part)
      if not ok then
        for i = #made, 1, -1 do env.remove(made[i]) end
        fail(tostring(err))
      end
      made[#made + 1] = part
    end
    at = slash
  until not slash
  return made
end

-- Write the kit into a new folder beside dir with write(tmp), then move
-- it into place; returns the folder it is in (beneath --out in a replay).  A dir that exists must be an earlier kit (its key.md
-- written by exercise{}) or hold none of the kit's file names: a kit
-- replaces the four files of an earlier one and leaves other files alone.
local function write_kit(env, dir, write)
  if not (env.mkdir and env.rename and env.remove) then
    fail("writing a kit needs the sluice program's file services (mkdir, rename)")
  end
  local function place(p)   -- where a write really goes (a replay may move it)
    local to = env.guard and env.guard(p, "exercise")
    return type(to) == "string" and to or p
  end
  for _, f in ipairs(KIT_FILES) do place(dir .. "/" .. f) end
  local real = place(dir .. "/key.md"):match("^(.*)/key%.md$") or dir
  local present = exists(env, real)
  if present then
    local is_kit = (first_line(env, real .. "/key.md") or ""):sub(1, #KEY_HEAD) == KEY_HEAD
    if not is_kit then
      for _, f in ipairs(KIT_FILES) do
        if exists(env, real .. "/" .. f) then
          fail(string.format("dir = '%s' holds %s, which is not from a kit that exercise{} wrote; " ..
                             "choose a new folder or move the file away", dir, f))
        end
      end
    end
  end
  local parent, base = split(real)
  local made = make_parents(env, parent)
  local tmp
  for i = 1, 1000 do
    local t = (parent == "." and "" or parent == "/" and "/" or parent .. "/") ..
              "." .. base .. ".part-" .. i
    if not exists(env, t) then tmp = t; break end
  end
  if not tmp then fail("no free name for a temporary folder beside " .. dir) end
  place(tmp .. "/key.md")
  local function undo()
    for _, f in ipairs(KIT_FILES) do env.remove(tmp .. "/" .. f) end
    env.remove(tmp)
    for i = #made, 1, -1 do env.remove(made[i]) end
  end
  local ok, err = env.mkdir(tmp)
  if not ok then undo(); fail(tostring(err)) end
  local wrote, werr = pcall(write, tmp)
  if not wrote then undo(); rethrow(werr, "[%w_:]+") end
  if not present then
    local moved, merr = env.rename(tmp, real)
    if not moved then undo(); fail("cannot move the kit into " .. dir .. ": " .. tostring(merr)) end
    return real
  end
  for _, f in ipairs(KIT_FILES) do   -- each file of the earlier kit replaced whole
    local moved, merr = env.rename(tmp .. "/" .. f, real .. "/" .. f)
    if not moved then undo(); fail("cannot move " .. f .. " into " .. dir .. ": " .. tostring(merr)) end
  end
  env.remove(tmp)
  return real
end

local function write_file(env, path, text)
  local f, err = env.open(path, "wb")
  if not f then fail("cannot write " .. path .. ": " .. tostring(err)) end
  local ok, werr = f:write(text)
  f:close()
  if not ok then fail("cannot write " .. path .. ": " .. tostring(werr)) end
end

-- ---- exercise{} ----

-- Check the arguments; returns the values the kit is made of.
local function arguments(o, env)
  if type(o) ~= "table" then
    error("bad argument #1 to 'exercise' (a table expected, got " .. type(o) .. ")", 0)
  end
  local names, optional = {}, {}
  for k in pairs(exercise_options) do
    names[#names + 1] = k
    if k ~= "dir" and k ~= "graph" and k ~= "model" then optional[#optional + 1] = k end
  end
  table.sort(names)
  table.sort(optional)
  for k in pairs(o) do
    if not exercise_options[k] then
      local near = type(k) == "string" and closest(k, names)
      fail(string.format("unknown argument '%s'%s", tostring(k),
           near and ("; did you mean '" .. near .. "'?")
           or (" (arguments: dir, graph, model; optional: " .. table.concat(optional, ", ") .. ")")))
    end
  end
  local g, m, dir = o.graph, o.model, o.dir
  if (getmetatable(g) or {}).__name ~= "sluice.graph" then
    fail("graph = a graph expected, got " .. show(g))
  end
  if (getmetatable(m) or {}).__name ~= "sluice.sem" then
    fail("model = a model from sem() expected, got " .. show(m))
  end
  if type(dir) ~= "string" or dir == "" then fail("dir = a folder name expected, got " .. show(dir)) end
  dir = dir:gsub("(.)/+$", "%1")
  local last = dir:match("([^/]+)$")
  if not last or last == "." or last == ".." then
    fail("dir = '" .. dir .. "' must name a folder of its own for the kit, e.g. \"kit\"")
  end
  if o.scenario ~= nil and type(o.scenario) ~= "string" then
    fail("scenario = a text expected, got " .. show(o.scenario))
  end
  local a = {g = g, m = m, dir = dir}
  a.n = whole(o, "n", 10, 1000000000, 200)
  a.seed = o.seed == nil and 1 or type(o.seed) == "number" and math.tointeger(o.seed)
  if not a.seed then fail("seed = " .. show(o.seed) .. " must be a whole number") end
  a.digits = whole(o, "digits", 1, 17, 4)
  a.draws = whole(o, "draws", 2, 100000000, require("sluice.compare").truth_draws)
  a.parts = parts_of(o.questions)
  local order, nodes, hidden = g:order(), {}, {}
  for _, v in ipairs(g:nodes()) do nodes[#nodes + 1] = v end
  for _, h in ipairs(g:hidden()) do hidden[h] = true end
  a.x, a.y = o.treatment or order[1], o.outcome or order[#order]
  for _, key in ipairs({"treatment", "outcome"}) do
    local v = key == "treatment" and a.x or a.y
    local known = false
    for _, n in ipairs(nodes) do if n == v then known = true end end
    if type(v) ~= "string" or not known then
      local near = type(v) == "string" and closest(v, nodes)
      fail(string.format("%s = %s is not a node of the graph%s", key, show(v),
           near and ("; did you mean '" .. near .. "'?") or ""))
    end
    if hidden[v] then fail(string.format("%s = '%s' is hidden: it has no data", key, v)) end
  end
  return a
end

-- exercise{graph=, model=, n=, seed=, dir=, treatment=, outcome=, scenario=,
--          draws=, sets=, questions=, digits=}
function E.run(o, env)
  local a = arguments(o, env)
  local M, g, m, x, y = env.M, a.g, a.m, a.x, a.y
  -- everything computed before anything is written
  local d = rounded(m:simulate(a.n, {seed = a.seed}), a.digits)
  local ok, cmp = pcall(M.compare, {data = d, graph = g, treatment = x, outcome = y, truth = m,
                                    sets = o.sets, seed = a.seed, draws = a.draws})
  if not ok then rethrow(cmp, "compare") end
  local htext = handout(o, g, d, x, y, cmp, a.parts, a.seed, a.digits, env.fence)
  local made, ktext = pcall(key, M, g, d, x, y, m, cmp, a.parts, a.seed, a.n, a.digits, env.fence)
  if not made then rethrow(ktext, "[%w_:]+") end
  -- env.draw draws without noting a picture of the session (the temporary
  -- folder goes away); env.picture notes the kit's graph.svg instead
  local draw = env.draw or function(gr, path) return gr:draw(path) end
  local real = write_kit(env, a.dir, function(tmp)
    d:write_csv(tmp .. "/data.csv")
    draw(g, tmp .. "/graph.svg")
    write_file(env, tmp .. "/handout.md", htext)
    write_file(env, tmp .. "/key.md", ktext)
  end)
  if env.picture then env.picture(real .. "/graph.svg") end
  local dir = a.dir
  return {data = dir .. "/data.csv", graph = dir .. "/graph.svg",
          handout = dir .. "/handout.md", key = dir .. "/key.md"}
end

return E
