-- Errors point at the user's line (issue 12): a property over every public
-- function and method.  Each is called with bad inputs of several classes
-- from a chunk named like a user's script, once as a statement and once as
-- a tail call (the prompt compiles an expression as "return ..."), and every
-- message must
--   * begin with that chunk's name and the calling line ("analysis.lua:3: "),
--   * then name the public function: "estimate: ..." or
--     "bad argument #2 to 'f:binarize' (...)",
--   * hold no internals: no path under lua/sluice/, no '?', no name of
--     sluice's own starting with "_", no "bad argument" to another function,
--     no metatable name (sluice.graph);
-- and an unknown option, column or node name must suggest the closest
-- known one.  The rule is the issue's; the format of a positional argument
-- error is the Lua reference manual's luaL_argerror ("bad argument #arg to
-- 'funcname' (extramsg)"), with the public name.
--
-- Every function and method found in the module table and the metatables
-- must have cases here, so a new one cannot be missed.

local CHUNK, LINE = "analysis.lua", 3
local SHOW = (os.getenv("SLUICE_SHOW_ERRORS") or "") ~= ""   -- print every message

-- ---- fixtures: a graph, its linear model, data drawn from it ----

local fx = {}
fx.g = graph "soil -> water -> yield; soil -> yield; water -> roots -> yield; rain -> water"
fx.model = sem(fx.g, {["soil -> water"] = 0.5, ["water -> yield"] = 1, ["soil -> yield"] = 0.7,
                      ["water -> roots"] = 0.4, ["roots -> yield"] = 0.3, ["rain -> water"] = 0.6})
fx.d = fx.model:simulate(200, {seed = 12}):binarize("water", 0, "wet")
fx.c = fx.d.yield
fx.r = fx.g:identify("water", "yield")
fx.fit = ols{data = fx.d, y = "yield", x = {"soil"}}
fx.est = estimate{data = fx.d, treatment = "wet", outcome = "yield", set = {"soil"}}

-- ---- the cases ----
-- A positional function: call = "NAME(%s)" or "obj:method(%s)", args = the
-- valid arguments as code, need = how many are required, opt = {at=, key=,
-- real=, value=} for an options table, names = {{at=, bad=, near=}} for a
-- misspelled column or node name, wrong = {[i] = code} overrides the
-- wrong-typed value (true by default).
-- A function of one table: fields = the valid fields as code, need = the
-- required fields, opt = {key=, real=, value=}, names = {{key=, bad=, near=}},
-- types = the fields checked with a wrong type.
local P, T = "positional", "table"
local COEFS = '{["soil -> water"] = 0.5, ["water -> yield"] = 1, ["soil -> yield"] = 0.7, ' ..
              '["water -> roots"] = 0.4, ["roots -> yield"] = 0.3, ["rain -> water"] = 0.6}'
local spec = {
  -- graphs
  graph = {P, "graph(%s)", {'"a -> b"'}, need = 1},
  read_graph = {P, "read_graph(%s)", {'"tests/data/none.txt"'}, need = 1},
  ["g:with"] = {P, "g:with(%s)", {'"yield -> rain"'}, need = 1},
  ["g:without"] = {P, "g:without(%s)", {'"soil -> yield"'}, need = 1},
  ["g:nodes"] = {P, "g:nodes(%s)", {}},
  ["g:edges"] = {P, "g:edges(%s)", {}},
  ["g:hidden"] = {P, "g:hidden(%s)", {}},
  ["g:order"] = {P, "g:order(%s)", {}},
  ["g:dot"] = {P, "g:dot(%s)", {}},
  ["g:show"] = {P, "g:show(%s)", {}},
  ["g:draw"] = {P, "g:draw(%s)", {'"/dev/null/g.svg"'}, need = 1},
  ["g:parents"] = {P, "g:parents(%s)", {'"yield"'}, need = 1,
                   names = {{at = 1, bad = '"yeld"', near = "yield"}}},
  ["g:children"] = {P, "g:children(%s)", {'"soil"'}, need = 1,
                    names = {{at = 1, bad = '"sol"', near = "soil"}}},
  ["g:ancestors"] = {P, "g:ancestors(%s)", {'{"yield"}'}, need = 1,
                     names = {{at = 1, bad = '{"yield", "rian"}', near = "rain"}}},
  ["g:descendants"] = {P, "g:descendants(%s)", {'"soil"'}, need = 1,
                       names = {{at = 1, bad = '"soill"', near = "soil"}}},
  ["g:trails"] = {P, "g:trails(%s)", {'"water"', '"yield"', '{limit = 5}'}, need = 2,
                  opt = {at = 3, key = "limt", real = "limit", value = "5"},
                  names = {{at = 1, bad = '"watr"', near = "water"}, {at = 2, bad = '"yeild"', near = "yield"}}},
  ["g:count_trails"] = {P, "g:count_trails(%s)", {'"water"', '"yield"'}, need = 2,
                        names = {{at = 2, bad = '"yiel"', near = "yield"}}},
  ["g:separated"] = {P, "g:separated(%s)", {'"rain"', '"soil"', '{}'}, need = 2,
                     names = {{at = 3, bad = '{"watre"}', near = "water"}}},
  ["g:implications"] = {P, "g:implications(%s)", {'{limit = 3}'},
                        opt = {at = 1, key = "basic", real = "basis", value = "true"}},
  ["g:admissible"] = {P, "g:admissible(%s)", {'"water"', '"yield"', '{"soil"}'}, need = 2,
                      names = {{at = 3, bad = '{"sol"}', near = "soil"}}},
  ["g:backdoor"] = {P, "g:backdoor(%s)", {'"water"', '"yield"', '{"soil"}'}, need = 2,
                    names = {{at = 1, bad = '"watter"', near = "water"}}},
  ["g:adjust"] = {P, "g:adjust(%s)", {'"water"', '"yield"', '{limit = 5}'}, need = 2,
                  opt = {at = 3, key = "forbd", real = "forbid", value = '{"soil"}'},
                  names = {{at = 1, bad = '"wate"', near = "water"}}},
  ["g:optimal"] = {P, "g:optimal(%s)", {'"water"', '"yield"'}, need = 2,
                   names = {{at = 2, bad = '"yeld"', near = "yield"}}},
  ["g:cheapest"] = {P, "g:cheapest(%s)", {'"water"', '"yield"', '{soil = 1}'}, need = 2,
                    names = {{at = 3, bad = '{soill = 1}', near = "soil"}}},
  ["g:frontdoor"] = {P, "g:frontdoor(%s)", {'"water"', '"yield"', '{limit = 3}'}, need = 2,
                     opt = {at = 3, key = "limits", real = "limit", value = "3"},
                     names = {{at = 1, bad = '"watr"', near = "water"}}},
  ["g:instruments"] = {P, "g:instruments(%s)", {'"water"', '"yield"', '{limit = 3}'}, need = 2,
                       opt = {at = 3, key = "limi", real = "limit", value = "3"},
                       names = {{at = 2, bad = '"yild"', near = "yield"}}},
  ["g:identify"] = {P, "g:identify(%s)", {'"water"', '"yield"', '{given = "soil"}'}, need = 2,
                    opt = {at = 3, key = "gven", real = "given", value = '"soil"'},
                    names = {{at = 1, bad = '"wter"', near = "water"}}},
  ["g:test"] = {P, "g:test(%s)", {'d', '{alpha = 0.05}'}, need = 1,
                opt = {at = 2, key = "alpah", real = "alpha", value = "0.05"}},
  -- the identified effect
  ["r:latex"] = {P, "r:latex(%s)", {}},
  ["r:evaluate"] = {P, "r:evaluate(%s)", {'d', '{at = {water = 1}}'}, need = 1,
                    opt = {at = 2, key = "weigths", real = "weights", value = '"soil"',
                           base = {"at = {water = 1}", at = true}}},
  -- structural models
  sem = {P, "sem(%s)", {'g', COEFS, '{sd = {soil = 2}}'}, need = 2,
         opt = {at = 3, key = "intercepts", real = "intercept", value = '{soil = 1}'},
         names = {{at = 2, bad = '{["sol -> water"] = 0.5}', near = "soil"}}},
  ["m:effect"] = {P, "model:effect(%s)", {'"water"', '"yield"'}, need = 2,
                  opt = {at = 3, key = "draw", real = "draws", value = "100"},
                  names = {{at = 1, bad = '"watr"', near = "water"}}},
  ["m:cov"] = {P, "model:cov(%s)", {}},
  ["m:limit"] = {P, "model:limit(%s)", {'"water"', '"yield"', '{"soil"}'}, need = 2,
                 names = {{at = 3, bad = '{"sooil"}', near = "soil"}}},
  ["m:simulate"] = {P, "model:simulate(%s)", {'10', '{seed = 1}'}, need = 1,
                    opt = {at = 2, key = "sed", real = "seed", value = "1"},
                    names = {{at = 2, bad = '{binarize = {watr = 0}}', near = "water"}}},
  ["m:graph"] = {P, "model:graph(%s)", {}},
  ["m:exact"] = {P, "model:exact(%s)", {}},
  ["m:predict"] = {P, "fit:predict(%s)", {'d'}, need = 1},
  -- data
  read_csv = {P, "read_csv(%s)", {'"tests/data/orchard.csv"', '{delim = ","}'}, need = 1,
              opt = {at = 2, key = "delm", real = "delim", value = '","'}},
  read_sql = {P, "read_sql(%s)", {'"tests/data/none.db"', '"SELECT 1"', '{limit = 5}'}, need = 2,
              opt = {at = 3, key = "limt", real = "limit", value = "5"}},
  connect = {P, "connect(%s)", {'"tests/data/none.db"'}, need = 1},
  ["f:names"] = {P, "d:names(%s)", {}},
  ["f:column"] = {P, "d:column(%s)", {'"yield"'}, need = 1,
                  names = {{at = 1, bad = '"yeild"', near = "yield"}}},
  ["f:summary"] = {P, "d:summary(%s)", {}},
  ["f:head"] = {P, "d:head(%s)", {'3'}},
  ["f:binarize"] = {P, "d:binarize(%s)", {'"rain"', '0', '"wet2"'}, need = 2,
                    names = {{at = 1, bad = '"rian"', near = "rain"}}},
  ["f:select"] = {P, "d:select(%s)", {'{"soil", "yield"}'}, need = 1,
                  names = {{at = 1, bad = '{"soil", "yeild"}', near = "yield"}}},
  ["f:filter"] = {P, "d:filter(%s)", {'function(r) return r.soil > 0 end'}, need = 1},
  ["f:row"] = {P, "d:row(%s)", {'1'}, need = 1},
  ["f:with_column"] = {P, "d:with_column(%s)", {'"two"', 'function() return 2 end'}, need = 2},
  ["f:write_csv"] = {P, "d:write_csv(%s)", {'"/dev/null/d.csv"'}, need = 1},
  ["f:fingerprint"] = {P, "d:fingerprint(%s)", {}},
  ["f:warnings"] = {P, "d:warnings(%s)", {}},
  ["c:mean"] = {P, "c:mean(%s)", {}}, ["c:sd"] = {P, "c:sd(%s)", {}},
  ["c:min"] = {P, "c:min(%s)", {}}, ["c:max"] = {P, "c:max(%s)", {}},
  ["c:median"] = {P, "c:median(%s)", {}}, ["c:sum"] = {P, "c:sum(%s)", {}},
  ["c:missing"] = {P, "c:missing(%s)", {}}, ["c:values"] = {P, "c:values(%s)", {}},
  ["c:levels"] = {P, "c:levels(%s)", {}},
  -- models and estimators
  ols = {T, "ols{%s}", {data = 'd', y = '"yield"', x = '{"soil"}'}, need = {"data", "y"},
         opt = {key = "xs", real = "x", value = '{"soil"}'},
         names = {{key = "y", bad = '"yeld"', near = "yield"}, {key = "x", bad = '{"sol"}', near = "soil"}},
         types = {"data", "y", "x"}},
  logit = {T, "logit{%s}", {data = 'd', y = '"wet"', x = '{"soil"}'}, need = {"data", "y"},
           opt = {key = "y_", real = "y", value = '"wet"'},
           names = {{key = "y", bad = '"wett"', near = "wet"}}, types = {"data", "y", "x"}},
  estimate = {T, "estimate{%s}", {data = 'd', treatment = '"wet"', outcome = '"yield"', set = '{"soil"}'},
              need = {"data", "treatment", "outcome"},
              opt = {key = "metod", real = "method", value = '"ipw"'},
              names = {{key = "outcome", bad = '"yeld"', near = "yield"},
                       {key = "treatment", bad = '"wett"', near = "wet"},
                       {key = "set", bad = '{"soill"}', near = "soil"}},
              types = {"data", "treatment", "outcome", "set", "method", "boot", "seed"}},
  balance = {T, "balance{%s}", {data = 'd', treatment = '"wet"', set = '{"soil"}'},
             need = {"data", "treatment"},
             opt = {key = "sett", real = "set", value = '{"soil"}'},
             names = {{key = "treatment", bad = '"wat"', near = "wet"}, {key = "set", bad = '{"sol"}', near = "soil"}},
             types = {"data", "treatment", "set"}},
  overlap = {T, "overlap{%s}", {data = 'd', treatment = '"wet"', set = '{"soil"}'},
             need = {"data", "treatment"},
             opt = {key = "bin", real = "bins", value = "10"},
             names = {{key = "set", bad = '{"soil", "rian"}', near = "rain"}},
             types = {"data", "treatment", "set", "bins"}},
  evalue = {T, "evalue{%s}", {rr = '3.9', lo = '1.8', hi = '8.7'}, need = {"rr"},
            opt = {key = "rrr", real = "rr", value = "3.9"}, types = {"rr", "lo", "hi"}},
  sensitivity = {T, "sensitivity{%s}", {data = 'd', treatment = '"wet"', outcome = '"yield"',
                                        set = '{"soil", "rain"}', benchmark = '"rain"'},
                 need = {"data", "treatment", "outcome"},
                 opt = {key = "benchmarks", real = "benchmark", value = '"rain"'},
                 names = {{key = "benchmark", bad = '"rainn"', near = "rain"},
                          {key = "outcome", bad = '"yeld"', near = "yield"}},
                 types = {"data", "treatment", "outcome", "set", "k", "alpha"}},
  compare = {T, "compare{%s}", {data = 'd', graph = 'g', treatment = '"water"', outcome = '"yield"'},
             need = {"data", "treatment", "outcome"},
             opt = {key = "truht", real = "truth", value = "1"},
             names = {{key = "outcome", bad = '"yeld"', near = "yield"}},
             types = {"data", "graph", "treatment", "outcome", "truth"}},
  exercise = {T, "exercise{%s}", {graph = 'g', model = 'model', treatment = '"water"', outcome = '"yield"',
                                  dir = '"/dev/null/kit"'},
              need = {"graph", "model"},
              opt = {key = "seeds", real = "seed", value = "3"},
              names = {{key = "outcome", bad = '"yeld"', near = "yield"}},
              types = {"graph", "model", "n", "seed"}},
  -- the session
  help = {P, "help(%s)", {'"estimate"'}, names = {{at = 1, bad = '"estimat"', near = "estimate"}}},
  log = {P, "log(%s)", {'false'}},
  report = {P, "report(%s)", {'"/dev/null/r.md"'}, need = 1},
}

-- Functions that take any value: no input is bad.
local any_input = {show = true}

-- Cases that still fail in files this test's author does not own: each
-- names the file and the fix.  This list should be emptied; a case on it
-- that passes makes the test fail until it is removed.
local KNOWN = {
}

-- ---- generating the calls ----

local function code_of(s, args)
  return s[2]:format(table.concat(args, ", "))
end

local function fields_code(f)
  local keys = {}
  for k in pairs(f) do keys[#keys + 1] = k end
  table.sort(keys)
  local parts = {}
  for _, k in ipairs(keys) do
    local key = load("local " .. k .. " = 1") and k or string.format("[%q]", k)
    parts[#parts + 1] = key .. " = " .. f[k]
  end
  return table.concat(parts, ", ")
end

local function copy(t)
  local c = {}
  for k, v in pairs(t) do c[k] = v end
  return c
end

-- The list of {id=, code=, near=} cases of one function.
local function cases_of(name, s)
  local out = {}
  local function add(id, code, near) out[#out + 1] = {id = name .. " | " .. id, code = code, near = near} end
  if s[1] == P then
    local args = s[3]
    for i = 1, #args do
      local a = copy(args)
      a[i] = s.wrong and s.wrong[i] or "true"
      add("type #" .. i, code_of(s, a))
    end
    for k = 0, (s.need or 0) - 1 do
      add("missing #" .. (k + 1), code_of(s, table.move(args, 1, k, 1, {})))
    end
    if s.opt then
      local a = copy(args)
      a[s.opt.at] = "{" .. s.opt.key .. " = " .. s.opt.value .. "}"
      add("option " .. s.opt.key, code_of(s, a), s.opt.real)
      a[s.opt.at] = "{[true] = 1}"
      add("option [true]", code_of(s, a))
    end
    for _, n in ipairs(s.names or {}) do
      local a = copy(args)
      a[n.at] = n.bad
      add("name #" .. n.at .. " " .. n.bad, code_of(s, a), n.near)
    end
    local obj, method = s[2]:match("^(%w+):(%w+)%(")
    if obj then   -- the method called with a dot on something else
      add("self", ("%s.%s(%s)"):format(obj, method, table.concat({"42", table.unpack(args)}, ", ")))
    end
  else
    local f = s[3]
    for _, k in ipairs(s.types or {}) do
      local a = copy(f)
      a[k] = "true"
      add("type " .. k, code_of(s, {fields_code(a)}))
    end
    for _, k in ipairs(s.need or {}) do
      local a = copy(f)
      a[k] = nil
      add("missing " .. k, code_of(s, {fields_code(a)}))
    end
    if s.opt then
      local a = copy(f)
      a[s.opt.key] = s.opt.value
      add("option " .. s.opt.key, code_of(s, {fields_code(a)}), s.opt.real)
      add("option [true]", code_of(s, {fields_code(copy(f)) .. ", [true] = 1"}))
    end
    for _, n in ipairs(s.names or {}) do
      local a = copy(f)
      a[n.key] = n.bad
      add("name " .. n.key .. " " .. n.bad, code_of(s, {fields_code(a)}), n.near)
    end
    add("not a table", (s[2]:gsub("{%%s}", "(42)")))
  end
  return out
end

-- ---- judging a message ----

local function escape(s) return (s:gsub("%p", "%%%0")) end

-- What is wrong with msg as the error of public function name called at
-- CHUNK:LINE; nil when nothing is.
local function judge(msg, name, near)
  if type(msg) ~= "string" then return "the error is a " .. type(msg) .. ", not a message" end
  local at = CHUNK .. ":" .. LINE .. ": "
  if msg:sub(1, #at) ~= at then return "does not begin with " .. at end
  local body = msg:sub(#at + 1)
  if not (body:find("^" .. escape(name) .. ": ")
          or body:find("^bad argument #%d+ to '" .. escape(name) .. "' %(")) then
    return "does not name " .. name .. " first"
  end
  if msg:find("lua/sluice/", 1, true) then return "names a path under lua/sluice/" end
  if msg:find("'?'", 1, true) then return "names the function '?'" end
  if msg:find("%f[%w_]_%a") then return "names an internal (a name starting with _)" end
  if msg:find("sluice%.%a") then return "names a metatable (sluice.x)" end
  if msg:find("[C]", 1, true) then return "names [C]" end
  for other in msg:gmatch("bad argument #%d+ to '([^']*)'") do
    if other ~= name then return "a bad argument to '" .. other .. "'" end
  end
  if select(2, msg:gsub("%f[^\n%z][^\n]-:%d+: ", "")) > 1 then return "two positions" end
  if near and not msg:find("did you mean '" .. near .. "'", 1, true) then
    return "does not suggest '" .. near .. "'"
  end
end

-- Run one case in one form ("local r = " or "return "); the problem or nil.
local function run_case(c, name, form)
  local env = setmetatable(copy(fx), {__index = _G})
  local code = "-- a user's script\n\n" .. form .. c.code .. "\n"
  local fn, err = load(code, "@" .. CHUNK, "t", env)
  if not fn then return "the case does not compile: " .. err end
  local ok, msg = pcall(fn)
  if ok then return "no error" end
  if SHOW and form == "local r = " then print(c.id, msg) end
  local why = judge(msg, name, c.near)
  if why then return why .. ": " .. tostring(msg) end
end

-- ---- every public function has cases ----

local function public_names()
  local names = {}
  for k, v in pairs(require "sluice") do
    if type(v) == "function" and not k:find("^_") then names[#names + 1] = k end
  end
  local reg = debug.getregistry()
  local function methods(mt, prefix)
    local idx = reg[mt] and (reg[mt].methods or reg[mt].__index)
    if type(idx) ~= "table" then return end
    for k, v in pairs(idx) do
      if type(v) == "function" and not k:find("^_") then names[#names + 1] = prefix .. k end
    end
  end
  methods("sluice.graph", "g:")
  methods("sluice.frame", "f:")
  methods("sluice.column", "c:")
  methods("sluice.sem", "m:")
  methods("sluice.identified", "r:")
  local fmt = getmetatable(fx.fit)
  for k, v in pairs(fmt) do
    if type(v) == "function" and not k:find("^_") then names[#names + 1] = "m:" .. k end
  end
  table.sort(names)
  return names
end

test("every public function and method has error cases here", function()
  local missing = {}
  for _, n in ipairs(public_names()) do
    if not spec[n] and not any_input[n] then missing[#missing + 1] = n end
  end
  eq(table.concat(missing, ", "), "", "public functions without cases")
end)

-- The options a function names when an option far from all of them is
-- given ("... (options: a, b)" or "(arguments: a, b)"), or nil and why.
local function listed_options(name, s)
  local code
  if s[1] == P then
    local a = copy(s[3])
    a[s.opt.at] = "{zzzzzzzz = 1}"
    code = code_of(s, a)
  else
    local a = copy(s[3])
    a.zzzzzzzz = "1"
    code = code_of(s, {fields_code(a)})
  end
  local why = run_case({code = code}, name, "local r = ")
  if why then return nil, code .. "\n      " .. why end
  local env = setmetatable(copy(fx), {__index = _G})
  local _, msg = pcall(load("local r = " .. code, "=case", "t", env))
  local list = tostring(msg):match("%(options: ([^)]*)%)") or tostring(msg):match("%(arguments: ([^)]*)%)")
  if not list then return nil, code .. "\n      lists no options: " .. tostring(msg) end
  local out = {}
  for k in list:gmatch("[%a_][%w_]*") do   -- "a, b; optional: c" too
    if k ~= "optional" then out[#out + 1] = k end
  end
  return out
end

-- Each option with a value of a wrong type: the first of these that is an
-- error must name the function and the option; one of them must be.
local wrong_values = {"true", "42", "{}", '"zz"'}

local function option_cases(name, s, k)
  local out = {}
  for _, v in ipairs(wrong_values) do
    local code
    if s[1] == P then
      local a = copy(s[3])
      local base = s.opt.base and s.opt.base[k] == nil and (s.opt.base[1] .. ", ") or ""
      a[s.opt.at] = "{" .. base .. k .. " = " .. v .. "}"
      code = code_of(s, a)
    else
      local a = copy(s[3])
      a[k] = v
      code = code_of(s, {fields_code(a)})
    end
    out[#out + 1] = {id = name .. " | value " .. k, code = code, option = k}
  end
  return out
end

local total, known_failing = 0, 0
local names = {}
for n in pairs(spec) do names[#names + 1] = n end
table.sort(names)
for _, name in ipairs(names) do
  test("errors of " .. name .. " point at the user's line and name it", function()
    local problems = {}
    for _, c in ipairs(cases_of(name, spec[name])) do
      local why
      for _, form in ipairs({"local r = ", "return "}) do
        total = total + 1
        why = run_case(c, name, form)
        if why then why = form .. c.code .. "\n      " .. why; break end
      end
      if KNOWN[c.id] then
        if why then known_failing = known_failing + 1
        else problems[#problems + 1] = c.id .. ": passes now; remove it from KNOWN" end
      elseif why then
        problems[#problems + 1] = c.id .. ": " .. why
      end
    end
    local s = spec[name]
    if s[1] == T or s.opt then
      local options, why = listed_options(name, s)
      local id = name .. " | option zzzzzzzz"
      if KNOWN[id] then
        if not options then known_failing = known_failing + 1
        else problems[#problems + 1] = id .. ": passes now; remove it from KNOWN" end
      elseif not options then problems[#problems + 1] = id .. ": " .. why end
      for _, k in ipairs(options or {}) do
        local raised, why
        for _, c in ipairs(option_cases(name, s, k)) do
          local w = run_case(c, name, "local r = ")
          if w ~= "no error" then
            raised = true
            if not w then w = run_case(c, name, "return ") end
            if not w then
              local env = setmetatable(copy(fx), {__index = _G})
              local _, msg = pcall(load("local r = " .. c.code, "=case", "t", env))
              if not tostring(msg):find("%f[%w_]" .. k:gsub("%p", "%%%0") .. "%f[^%w_]") then
                w = "does not name the option: " .. tostring(msg)
              end
            end
            if w then why = c.code .. "\n      " .. w end
            break
          end
        end
        local id = name .. " | value " .. k
        if not raised then why = "no wrong value of " .. k .. " is an error" end
        total = total + 2
        if KNOWN[id] then
          if why then known_failing = known_failing + 1
          else problems[#problems + 1] = id .. ": passes now; remove it from KNOWN" end
        elseif why then
          problems[#problems + 1] = id .. ": " .. why
        end
      end
    end
    if #problems > 0 then error("\n  " .. table.concat(problems, "\n  "), 0) end
  end)
end

test("the known failures are all real cases", function()
  local ids = {}
  for _, name in ipairs(names) do
    for _, c in ipairs(cases_of(name, spec[name])) do ids[c.id] = true end
    if spec[name][1] == T or spec[name].opt then ids[name .. " | option zzzzzzzz"] = true end
  end
  for id in pairs(KNOWN) do
    local fn = id:match("^(.-) | value ")   -- the options are found by running
    eq(ids[id] or (fn and spec[fn] ~= nil), true, "KNOWN names a case that does not exist: " .. id)
  end
end)

-- ---- the shell's own printer adds nothing of sluice's insides ----

-- Run the program on input (a script, or lines for the prompt with -i);
-- its standard error and output together.
local function run_program(args, input)
  local prog = arg and arg[-1]
  local path = os.tmpname()
  local f = assert(io.open(path, "w"))
  f:write(input)
  f:close()
  local p = io.popen(string.format("%s %s %s 2>&1 < %s", prog, args, args == "" and path or "",
                                   args == "" and "/dev/null" or path))
  local out = p:read("a")
  p:close()
  os.remove(path)
  return out, path
end

local script = table.concat({
  'local d = read_csv("tests/data/orchard.csv")',
  'local function cut(f) return f:binarize("rian", 70) end',
  'local ok, e = pcall(cut, d)',
  'io.stderr:write(e, "\\n")',
  'return estimate{data = d, treatment = "rain", outcome = "yeld", set = {}}',
}, "\n") .. "\n"

test("a script's error as the shell prints it: the script's line, the public name", function()
  local out, path = run_program("", script)
  local last = out:match("([^\n]*)\n$")
  eq(last, "sluice: " .. path .. ":5: estimate: outcome: no column 'yeld'; did you mean 'yield'?",
     "the error that ended the script")
end)

-- A script runs each top-level statement under the script's own chunk name
-- and line numbers, so an error it catches itself names the file's line.
test("an error a script catches names the script's file and line", function()
  local out, path = run_program("", script)
  local first = out:match("^([^\n]*)\n")
  eq(first, path .. ":2: bad argument #1 to 'f:binarize' (no column 'rian'; did you mean 'rain'?)")
end)

test("an error at the prompt: the public name, nothing of sluice's insides", function()
  local out = run_program("-i", table.concat({
    'd = read_csv("tests/data/orchard.csv")',
    'd:binarize(1, 2)',
    'r = estimate{data = d, treatment = "rain", outcome = "yeld", set = {}}',
    'graph("a ->")',
  }, "\n") .. "\n")
  local errors = {}
  for l in out:gmatch("error: [^\n]*") do errors[#errors + 1] = l end
  same_list(errors, {
    "error: bad argument #1 to 'f:binarize' (no column '1' (the columns: plot, variety, rain, yield, pests))",
    "error: estimate: outcome: no column 'yeld'; did you mean 'yield'?",
    "error: graph: line 1, column 5: expected a node name after '->', found end of text",
  }, "the errors shown")
  eq(out:find("lua/sluice/", 1, true), nil, "no path inside sluice")
end)
