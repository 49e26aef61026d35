-- test_exercise.lua: the teaching kit (exercise{}): binary treatments, a
-- kit written whole or not at all, the questions and sets a teaching
-- assistant chooses, rounded data whose key matches it, reasons in the key.
local hooks = debug.getregistry()["sluice.hooks"]

-- A path in the temporary folder that does not exist yet.
local function fresh()
  local p = os.tmpname()
  os.remove(p)
  return p
end

local function slurp(path)
  local f = assert(io.open(path, "rb"))
  local s = f:read("a")
  f:close()
  return s
end

local function has(text, s, what) eq(text:find(s, 1, true) ~= nil, true, (what or "") .. ": " .. s) end
local function lacks(text, s, what) eq(text:find(s, 1, true), nil, (what or "") .. ": " .. s) end

-- The names in a folder (but . and ..), sorted; nil when it is not there.
local function listing(dir)
  local p = io.popen("ls -A '" .. dir .. "' 2>/dev/null")
  local names = {}
  for l in p:lines() do names[#names + 1] = l end
  local ok = p:close()
  if not ok then return nil end
  table.sort(names)
  return names
end

-- The file services exercise{} gets from the session, with open replaced.
local function env_with(open, rename)
  return {M = require "sluice", registry = debug.getregistry(), open = open or io.open,
          fence = function(s) return "```\n" .. s .. "\n```" end, mkdir = hooks.mkdir,
          rename = rename or os.rename, remove = os.remove}
end

local function confounded(opts)
  local g = graph "z -> x -> y; z -> y"
  return g, sem(g, {["z -> x"] = 0.8, ["x -> y"] = 1.5, ["z -> y"] = 0.7}, opts)
end

-- Issue 12: a binary treatment failed with "give draws = 100000" and left
-- data.csv and graph.svg behind.
test("a kit for a binary treatment: the Monte Carlo truth, seeded, beside the probit value", function()
  local g, m = confounded({binary = {"x"}, binarize = {y = 0}})
  local a, b = fresh(), fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = a, seed = 7}
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = b, seed = 7}
  local key = slurp(a .. "/key.md")
  eq(key, slurp(b .. "/key.md"), "the same seed, the same key")
  local v, draws, se = key:match("true total effect %(m:effect%): ([%d.]+) %(Monte Carlo, (%d+) draws, SE ([%d.]+), seed 7%)")
  eq(draws, "200000", "the default draws")
  -- y = 1 when 1.5 x + 0.7 z + e > 0, z and e independent N(0, 1): the effect
  -- is Phi(1.5 / sqrt(1.49)) - 1/2 = 0.39043557717827904 (the latent-threshold
  -- form of the probit model; scipy.stats.norm.cdf(1.5 / math.sqrt(1.49)) - 0.5)
  v, se = tonumber(v), tonumber(se)
  eq(math.abs(v - 0.39043557717827904) < 4 * se + 5e-5, true, "truth " .. v .. " SE " .. se)
  eq(se > 0.0005 and se < 0.002, true, "SE " .. se)
  -- draws = is passed on
  local c = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = c, seed = 7, draws = 5000}
  local kc = slurp(c .. "/key.md")
  local t = kc:match("effect %(m:effect%): ([%d.]+) %(Monte Carlo, 5000 draws, SE ")
  eq(t ~= nil, true, "draws = 5000 in the key")
  has(kc, "truth " .. t .. " (Monte Carlo, 5000 draws, SE ", "the comparison table's truth")
end)

test("a kit for a binarized treatment of a linear outcome says the truth is exact", function()
  local g, m = confounded({binarize = {x = 0}})
  local a = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = a}
  local key = slurp(a .. "/key.md")
  -- y is linear in x: the coefficient 1.5 in every unit (path tracing, Wright 1934)
  has(key, "true total effect (m:effect): 1.5000 (exact: every simulated unit has this effect)")
  lacks(key, "SE 0.0000")
end)

test("the key's truth of a linear model is the sum of path products", function()
  local g = graph "z -> x -> m -> y; x -> y; z -> y; w -> y"
  local m = sem(g, {["z -> x"] = 0.6, ["x -> m"] = 0.5, ["m -> y"] = 2, ["x -> y"] = 0.3,
                    ["z -> y"] = 0.9, ["w -> y"] = 0.4})
  local a = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = a}
  -- directed paths from x to y: x -> y (0.3) and x -> m -> y (0.5 * 2 = 1):
  -- Wright's (1934) path tracing gives 0.3 + 1 = 1.3; the back-door z adds nothing
  has(slurp(a .. "/key.md"), "true total effect (m:effect): 1.3000\n")
end)

-- ---- a kit whole or not at all ----

test("a failure while writing leaves no kit, no temporary folder, no new folders", function()
  local g, m = confounded()
  local base = fresh()
  local dir = base .. "/course/week1/kit"
  local function failing_open(path, mode)
    if mode == "wb" and path:find("key%.md$") then return nil, "No space left on device" end
    return io.open(path, mode)
  end
  local X = require "sluice.exercise"
  local msg = raises(function()
    X.run({graph = g, model = m, treatment = "x", outcome = "y", dir = dir}, env_with(failing_open))
  end, "exercise: cannot write ", "key.md: No space left on device")
  eq(msg:find("lua/sluice/", 1, true), nil, "no path inside sluice: " .. msg)
  eq(listing(base), nil, "the folders made for the kit are gone again")
  -- into a folder that exists: it is left as it was
  hooks.mkdir(base)
  X.run({graph = g, model = m, treatment = "x", outcome = "y", dir = base .. "/kit", seed = 1}, env_with())
  local before = slurp(base .. "/kit/data.csv")
  raises(function()
    X.run({graph = g, model = m, treatment = "x", outcome = "y", dir = base .. "/kit", seed = 2},
          env_with(failing_open))
  end, "No space left on device")
  same_list(listing(base), {"kit"}, "no temporary folder beside the kit")
  same_list(listing(base .. "/kit"), {"data.csv", "graph.svg", "handout.md", "key.md"}, "the kit")
  eq(slurp(base .. "/kit/data.csv"), before, "the earlier kit is untouched")
  -- a failure to move the finished kit into place
  raises(function()
    X.run({graph = g, model = m, treatment = "x", outcome = "y", dir = base .. "/other"},
          env_with(nil, function() return nil, "Cross-device link" end))
  end, "exercise: cannot move the kit into ", "Cross-device link")
  same_list(listing(base), {"kit"}, "nothing left behind")
  -- a bad argument is found before anything is written
  raises(function() exercise{graph = g, model = m, dir = base .. "/third", questions = {"x"}} end,
         "exercise: questions = 'x' is not a part")
  same_list(listing(base), {"kit"}, "nothing written for a bad argument")
end)

test("a kit replaces an earlier kit and never a folder's other files", function()
  local g, m = confounded()
  local dir = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = dir, seed = 1}
  local f = io.open(dir .. "/notes.txt", "w"); f:write("mine"); f:close()
  local first = slurp(dir .. "/data.csv")
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = dir, seed = 2}
  eq(slurp(dir .. "/data.csv") ~= first, true, "the new seed's data")
  eq(slurp(dir .. "/notes.txt"), "mine", "other files stay")
  same_list(listing(dir), {"data.csv", "graph.svg", "handout.md", "key.md", "notes.txt"})
  -- a folder holding a data.csv of someone else's is not overwritten
  local other = fresh()
  hooks.mkdir(other)
  f = io.open(other .. "/data.csv", "w"); f:write("a,b\n1,2\n"); f:close()
  raises(function() exercise{graph = g, model = m, dir = other} end,
         "exercise: dir = '" .. other .. "' holds data.csv, which is not from a kit")
  eq(slurp(other .. "/data.csv"), "a,b\n1,2\n", "left alone")
  same_list(listing(other), {"data.csv"})
  -- an empty folder is filled
  local empty = fresh()
  hooks.mkdir(empty)
  exercise{graph = g, model = m, dir = empty}
  same_list(listing(empty), {"data.csv", "graph.svg", "handout.md", "key.md"})
  raises(function() exercise{graph = g, model = m, dir = "."} end,
         "exercise: dir = '.' must name a folder of its own")
end)

-- ---- rounded data; the key computed from it ----

-- The significant digits of a number as written in a CSV cell.
local function significant(cell)
  local mant = cell:gsub("^-", ""):gsub("[eE].*$", ""):gsub("%.", ""):gsub("^0+", "")
  return #mant
end

test("data.csv holds numbers to digits = significant digits, and the key matches it", function()
  local g = graph "slope -> mulch -> harvest; slope -> harvest; shade -> harvest"
  local m = sem(g, {["slope -> mulch"] = 0.5, ["mulch -> harvest"] = 2, ["slope -> harvest"] = 1},
                {default = 0.4})
  for _, digits in ipairs({4, 6}) do
    local dir = fresh()
    exercise{graph = g, model = m, treatment = "mulch", outcome = "harvest", dir = dir, seed = 3,
             digits = digits, n = 150}
    local text, most = slurp(dir .. "/data.csv"), 0
    for line in text:gmatch("[^\n]+") do
      if not line:find("[a-z]") then
        for cell in line:gmatch("[^,]+") do
          most = math.max(most, significant(cell))
          eq(significant(cell) <= digits, true, "cell " .. cell)
        end
      end
    end
    eq(most, digits, "some cell uses all " .. digits .. " digits")
    -- what a student computes from data.csv is what the key says (the same
    -- call, seed and bootstrap on the file as read back)
    local d = read_csv(dir .. "/data.csv")
    local c = compare{data = d, truth = m, treatment = "mulch", outcome = "harvest", seed = 3}
    local key = slurp(dir .. "/key.md")
    for _, r in ipairs(c) do
      has(key, string.format("- %s: %s; estimate %.4f, interval %.4f to %.4f", r.set_text,
                             r.valid and "valid" or "not valid", r.estimate, r.lo, r.hi), "key")
    end
    has(slurp(dir .. "/handout.md"), string.format("numbers to %d significant digits", digits))
  end
  raises(function() exercise{graph = g, model = m, dir = fresh(), digits = 0} end,
         "exercise: digits = 0 must be a whole number from 1 to 17")
end)

-- ---- the questions and sets the teaching assistant chooses ----

local function m_structure()
  -- the M-structure: m is a collider between a (a cause of x) and b (a cause of y)
  local g = graph "x -> y; a -> x; a -> m; b -> m; b -> y"
  return g, sem(g, {["x -> y"] = 1}, {default = 0.6})
end

test("sets = adds candidates; the key gives every invalid set's reasons and intervals", function()
  local g, m = m_structure()
  local dir = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = dir, sets = {"m", {"a", "m"}}}
  local handout, key = slurp(dir .. "/handout.md"), slurp(dir .. "/key.md")
  has(handout, "- {m}\n")
  has(handout, "- {a, m}\n")
  -- {m} opens x <- a -> m <- b -> y (the collider m); {a, m} blocks it at a
  has(key, "- {m}: not valid; estimate ")
  has(key, "  - the back-door trail x <- a -> m <- b -> y is open: the collider 'm' is in the set")
  has(key, "- {a, m}: valid; estimate ")
  for line in key:gmatch("\n(%- {[^\n]*)") do has(line, ", interval ", "an interval on each set") end
  has(key, "to", "intervals in the table")
  raises(function() exercise{graph = g, model = m, dir = fresh(), sets = {"mm"}} end,
         "exercise: sets: no node 'mm' in the graph; did you mean 'm'?")
end)

test("questions = picks the parts, each with the sluice calls that answer it", function()
  local g, m = m_structure()
  local dir = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = dir,
           questions = {"trails", "test"}}
  local handout, key = slurp(dir .. "/handout.md"), slurp(dir .. "/key.md")
  has(handout, "1. List every trail between x and y.")
  has(handout, '(sluice: `g:trails("x", "y")`')
  has(handout, "2. Which independences does the graph imply?")
  has(handout, "(sluice: `g:implications()`, `g:test(d)`)")
  lacks(handout, "3. ")
  lacks(handout, "Candidate adjustment sets")
  has(key, "- x <- a -> m <- b -> y: backdoor, blocked at m (collider)")
  has(key, "a ⊥ b", "g:test's table")
  lacks(key, "## Each candidate set")
  -- the default parts, each naming its calls
  local d2 = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = d2}
  handout = slurp(d2 .. "/handout.md")
  has(handout, "1. Which of the candidate sets are valid")
  has(handout, '(sluice: `g:admissible("x", "y", set)`')
  has(handout, "2. Estimate the effect")
  has(handout, '`estimate{data = d, treatment = "x", outcome = "y", set = set}`')
  has(handout, "3. Which valid set would you choose")
  lacks(handout, "4. ")
  raises(function() exercise{graph = g, model = m, dir = fresh(), questions = {"vaild"}} end,
         "exercise: questions = 'vaild' is not a part of the kit; did you mean 'valid'?")
  raises(function() exercise{graph = g, model = m, dir = fresh(), questions = {}} end,
         "exercise: questions = must list parts")
end)

test("'optimal set: none' in the key comes with the reason", function()
  local g = graph "hidden u; u -> x, y; x -> y; c -> y"
  local m = sem(g, {["x -> y"] = 1}, {default = 0.5})
  local dir = fresh()
  exercise{graph = g, model = m, treatment = "x", outcome = "y", dir = dir}
  local key = slurp(dir .. "/key.md")
  has(key, "- optimal set (g:optimal): none, because\n  - ")
  has(key, "no valid adjustment set exists")
  has(key, "the back-door trail x <- u -> y is open")
  has(key, "No set is optimal here:")
  lacks(key, "optimal set (g:optimal): none\n")
end)
