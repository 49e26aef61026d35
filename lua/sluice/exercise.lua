-- sluice.exercise: the teaching kit.  exercise{} simulates data from a
-- model, draws the graph and writes a handout and an answer key; the file
-- services (open, mkdir, the replay's guard) come from sluice.session.
local E = {}


local function write_file(env, path, text)
  if env.guard then env.guard(path, "exercise") end
  local f, err = env.open(path, "wb")
  if not f then error("exercise: cannot write " .. path .. ": " .. tostring(err), 3) end
  f:write(text)
  f:close()
end

local function set_text(set)
  local t = {}
  for i = 1, #set do t[i] = set[i] end
  return "{" .. table.concat(t, ", ") .. "}"
end

-- The arguments exercise{} knows; any other is a mistake the user should hear of.
local exercise_options = {graph = true, model = true, n = true, seed = true, dir = true,
                          treatment = true, outcome = true, scenario = true}

-- exercise{graph=, model=, n=, seed=, dir=, treatment=, outcome=, scenario=}
function E.run(o, env)
  local M, registry, fence, guard = env.M, env.registry, env.fence, env.guard
  if type(o) ~= "table" then
    error("bad argument #1 to 'exercise' (a table expected, got " .. type(o) .. ")", 2)
  end
  local names = {}
  for k in pairs(exercise_options) do names[#names + 1] = k end
  table.sort(names)
  for k in pairs(o) do
    if not exercise_options[k] then
      local near = type(k) == "string" and require("sluice.estimate").closest(k, names)
      error(string.format("exercise: unknown argument '%s'%s", tostring(k),
            near and ("; did you mean '" .. near .. "'?")
            or (" (arguments: " .. table.concat(names, ", ") .. ")")), 2)
    end
  end
  local g, m, dir = o.graph, o.model, o.dir
  if getmetatable(g) ~= registry["sluice.graph"] then
    error("exercise: graph = a graph expected, got " .. type(g), 2)
  end
  if type(m) ~= "table" and type(m) ~= "userdata" or not m.simulate then
    error("exercise: model = a model from sem() expected, got " .. type(m), 2)
  end
  if type(dir) ~= "string" or dir == "" then
    error("exercise: dir = a folder name expected, got " .. type(dir), 2)
  end
  local n, seed = o.n or 200, o.seed or 1
  if math.type(n) ~= "integer" or n < 10 then error("exercise: n = a whole number of at least 10 expected", 2) end
  if math.type(seed) ~= "integer" then error("exercise: seed = a whole number expected", 2) end
  local order = g:order()
  local x, y = o.treatment or order[1], o.outcome or order[#order]
  if guard then guard(dir .. "/handout.md", "exercise") end
  if env.mkdir then   -- the folder and any missing folders above it
    local at = 1
    repeat
      local slash = dir:find("/", at + 1, true)
      local part = slash and dir:sub(1, slash - 1) or dir
      if part ~= "" and part ~= "." then
        local ok, err = env.mkdir(part)
        if not ok then error("exercise: " .. err, 2) end
      end
      at = slash
    until not slash
  end
  local d = m:simulate(n, {seed = seed})
  d:write_csv(dir .. "/data.csv")
  g:draw(dir .. "/graph.svg")
  local minimal = g:adjust(x, y)
  local optimal = g:optimal(x, y)
  local truth = m:effect(x, y)
  local cmp = M.compare{data = d, graph = g, treatment = x, outcome = y, truth = m, boot = 0}
  local h = {}
  h[#h + 1] = "# Exercise: the effect of " .. x .. " on " .. y
  h[#h + 1] = ""
  h[#h + 1] = o.scenario or ("A study measures " .. table.concat(d:names(), ", ")
                             .. ". We want the causal effect of " .. x .. " on " .. y .. ".")
  h[#h + 1] = ""
  h[#h + 1] = "## The graph"
  h[#h + 1] = ""
  h[#h + 1] = fence(tostring(g))
  h[#h + 1] = ""
  h[#h + 1] = "![the causal graph](graph.svg)"
  h[#h + 1] = ""
  h[#h + 1] = "## The data"
  h[#h + 1] = ""
  h[#h + 1] = string.format("`data.csv`: %d rows, columns %s (simulated, seed %d).", #d,
                            table.concat(d:names(), ", "), seed)
  h[#h + 1] = ""
  h[#h + 1] = "## Questions"
  h[#h + 1] = ""
  h[#h + 1] = "1. Which of these adjustment sets are valid for the effect of " .. x
              .. " on " .. y .. "? Give a reason for each."
  for _, r in ipairs(cmp) do h[#h + 1] = "   - " .. r.set_text end
  h[#h + 1] = "2. Estimate the effect with each set from `data.csv`. What does each"
              .. " candidate set estimate, and why do they differ?"
  h[#h + 1] = "3. Which valid set would you choose, and why?"
  local k = {}
  k[#k + 1] = "# Answer key: the effect of " .. x .. " on " .. y
  k[#k + 1] = ""
  k[#k + 1] = string.format("Computed by sluice %s from the seed %d (n = %d).", M.version, seed, n)
  k[#k + 1] = ""
  k[#k + 1] = "- true total effect (m:effect): " .. string.format("%.4f", truth)
  local ms = {}
  for i = 1, #minimal do ms[i] = set_text(minimal[i]) end
  k[#k + 1] = "- minimal valid sets (g:adjust): " .. (#ms > 0 and table.concat(ms, ", ") or "none")
  k[#k + 1] = "- optimal set (g:optimal): " .. (optimal and set_text(optimal) or "none")
  k[#k + 1] = ""
  k[#k + 1] = "## Each candidate set"
  k[#k + 1] = ""
  for _, r in ipairs(cmp) do
    k[#k + 1] = string.format("- %s: %s; estimate %.4f%s", r.set_text,
                              r.valid and "valid" or "not valid", r.estimate,
                              r.reason and (" (" .. r.reason .. ")") or "")
  end
  k[#k + 1] = ""
  k[#k + 1] = "## The comparison table (compare{})"
  k[#k + 1] = ""
  k[#k + 1] = fence(tostring(cmp))
  k[#k + 1] = ""
  k[#k + 1] = require("sluice.help").caution
  write_file(env, dir .. "/handout.md", table.concat(h, "\n") .. "\n")
  write_file(env, dir .. "/key.md", table.concat(k, "\n") .. "\n")
  return {data = dir .. "/data.csv", graph = dir .. "/graph.svg",
          handout = dir .. "/handout.md", key = dir .. "/key.md"}
end

return E
