-- sluice.citest: g:test(f, opts), the graph on trial: each conditional
-- independence the graph implies (g:implications) tested on a data frame or
-- a lazy table, the p-values adjusted for multiple testing, a verdict per
-- implication, the edges whose addition would remove a contradicted one, a
-- picture, and the caution.  The tests themselves are the C primitives
-- S._citest (a frame) and S._citest_db (a lazy table, inside the database;
-- citest.c).
local P = require "sluice.print"
local E = require "sluice.estimate"
local C = {}

local S   -- the module, set by install
local fname = "g:test"

C.caution = "Passing these tests does not prove the graph: other graphs imply the same\n" ..
            "  independences, and some assumptions cannot be tested from these data at all:\n" ..
            "  hidden confounders that leave no trace among the measured columns, and the\n" ..
            "  direction of the edges."

local known = {"adjust", "alpha", "boot", "implications", "level", "method", "plot", "seed"}
local methods = {"auto", "partial", "lr", "gtest", "residual"}
local adjusts = {"holm", "bh", "none"}
local adjust_names = {holm = "Holm", bh = "Benjamini-Hochberg", none = "no"}

local fail, show, fmt = E.fail, E.show, E.fmt

local function is_graph(v) return (getmetatable(v) or {}).__name == "sluice.graph" end

-- The options, checked with their names; unknown ones suggest the nearest.
local function options(o)
  if o == nil then o = {} end
  if type(o) ~= "table" then
    fail(fname, "the options are a table such as {alpha = 0.05}, got " .. show(o))
  end
  local set = {}
  for _, k in ipairs(known) do set[k] = true end
  for k in pairs(o) do
    if not set[k] then
      local near = type(k) == "string" and E.closest(k, known)
      fail(fname, string.format("unknown option '%s'%s", tostring(k),
           near and ("; did you mean '" .. near .. "'?") or (" (options: " .. table.concat(known, ", ") .. ")")))
    end
  end
  local r = {}
  r.method = E.choice(fname, "method", o.method, methods, "auto")
  r.adjust = E.choice(fname, "adjust", o.adjust, adjusts, "holm")
  r.alpha = o.alpha == nil and 0.05 or o.alpha
  if not (type(r.alpha) == "number" and r.alpha > 0 and r.alpha < 1) then
    fail(fname, "alpha = " .. show(o.alpha) .. " must lie strictly between 0 and 1, e.g. 0.05")
  end
  r.level = o.level == nil and 0.95 or o.level
  local boot, seed = E.check_common(fname, {boot = o.boot, level = o.level, seed = o.seed})
  if boot and boot > 100000 then
    fail(fname, "boot = " .. show(o.boot) .. " is more than 100000 replicates per implication")
  end
  r.boot, r.seed = boot or 0, seed or 1
  if o.plot ~= nil and type(o.plot) ~= "string" then
    fail(fname, "plot = must be a file name ending in .svg, .png or .pdf, got " .. show(o.plot))
  end
  r.plot = o.plot
  r.implications = o.implications
  return r
end

-- "a ⊥ b | c, d" (or "a ⊥ b" with nothing given).
local function implication_text(a, b, given)
  local s = P.name(a) .. " ⊥ " .. P.name(b)
  if given and #given > 0 then
    local g = {}
    for i, v in ipairs(given) do g[i] = P.name(v) end
    s = s .. " | " .. table.concat(g, ", ")
  end
  return s
end
C.implication_text = implication_text

-- The implications to test: opts.implications or g:implications(), checked.
local function implications(g, list)
  if list == nil then
    local fn = E.graph_method(g, "implications")
    if not fn then fail(fname, "this build has no g:implications: give implications = {...}") end
    list = fn(g)
  end
  if type(list) ~= "table" then
    fail(fname, "implications = must be a list of {a =, b =, given = {...}}, got " .. show(list))
  end
  for i, imp in ipairs(list) do
    local ok = type(imp) == "table" and type(imp.a) == "string" and type(imp.b) == "string"
               and (imp.given == nil or type(imp.given) == "table")
    for _, v in ipairs(ok and imp.given or {}) do ok = ok and type(v) == "string" end
    if not ok then
      fail(fname, string.format("implications = entry %d must be {a = \"name\", b = \"name\", " ..
                                "given = {names}}, got %s", i, show(imp)))
    end
  end
  return list
end

-- Why an implication cannot be tested on f: the columns it names that f lacks.
local function missing_columns(f, names, imp)
  local out = {}
  local all = {imp.a, imp.b}
  for _, v in ipairs(imp.given or {}) do all[#all + 1] = v end
  for _, v in ipairs(all) do
    if not names[v] then
      local near = E.closest(v, f:names())
      out[#out + 1] = "'" .. v .. "'" .. (near and (" (did you mean '" .. near .. "'?)") or "")
    end
  end
  if #out == 0 then return nil end
  return "no column " .. table.concat(out, ", ") .. " in the data"
end

-- The edges among a -> b, b -> a, a <-> b that keep g acyclic and after
-- which a and b are no longer separated by the given set.
local function additions(g, a, b, given)
  local out = {}
  for _, e in ipairs({{a, "->", b}, {b, "->", a}, {a, "<->", b}}) do
    local text = P.name(e[1]) .. " " .. e[2] .. " " .. P.name(e[3])
    local ok, g2 = pcall(g.with, g, text)
    if ok then
      local ok2, sep = pcall(g2.separated, g2, a, b, given)
      if ok2 and not sep then out[#out + 1] = text end
    end
  end
  return out
end

-- The bootstrap needs the rows, which stay in the database (so do the
-- methods S._citest_db refuses by name).
local function db_options(o)
  if o.boot > 0 then
    fail(fname, string.format("boot = %d resamples the rows, which stay in the database: " ..
                              "fetch them (t:fetch()) and test the frame, or leave boot out " ..
                              "(the intervals then come from Fisher's z)", o.boot))
  end
end

-- One row: the test of one implication on f (a frame or a lazy table).
local function test_one(f, names, imp, o)
  local row = {a = imp.a, b = imp.b, given = {}}
  for i, v in ipairs(imp.given or {}) do row.given[i] = v end
  row.text = implication_text(row.a, row.b, row.given)
  local why = missing_columns(f, names, imp)
  if not why then
    local r, msg, n, dropped
    if o.lazy then
      r, msg, n, dropped = E.call(fname, S._citest_db, f, imp.a, imp.b, row.given, o.method,
                                  o.level)
    else
      r, msg, n, dropped = S._citest(f, imp.a, imp.b, row.given, o.method, o.level, o.boot,
                                     o.seed)
    end
    if r then
      for k, v in pairs(r) do row[k] = v end
      if row.stat ~= row.stat then row.stat = nil end
    else
      why, row.n, row.dropped = msg, n, dropped
    end
  end
  if why then row.verdict, row.why, row.test = "not tested", why, "none" end
  return row
end

-- The text forest: one line per tested implication, sorted by effect, on a
-- scale symmetric about zero; '|' marks zero, '*' a contradicted one.
local function text_forest(rows)
  local shown, top = {}, 0
  for _, r in ipairs(rows) do
    if r.effect and r.effect == r.effect then
      shown[#shown + 1] = r
      for _, v in ipairs({r.effect, r.lo or 0, r.hi or 0}) do
        if math.abs(v) > top then top = math.abs(v) end
      end
    end
  end
  if #shown == 0 then return nil end
  table.sort(shown, function(x, y)
    if x.effect ~= y.effect then return x.effect < y.effect end
    return x.text < y.text
  end)
  if top == 0 then top = 1 end
  local w, width = 20, 0
  local function col(v) return math.floor((v / top) * w + 0.5) + w + 1 end
  for _, r in ipairs(shown) do width = math.max(width, utf8.len(r.text) or #r.text) end
  local lines = {string.format("  effect sizes (correlation scale, -%s to %s; | is zero, o the " ..
                               "effect, --- its interval, * contradicted):", fmt(top), fmt(top))}
  for _, r in ipairs(shown) do
    local cells = {}
    for i = 1, 2 * w + 1 do cells[i] = " " end
    if r.lo and r.hi then for i = col(r.lo), col(r.hi) do cells[i] = "-" end end
    cells[w + 1] = "|"
    cells[col(r.effect)] = "o"
    local pad = string.rep(" ", width - (utf8.len(r.text) or #r.text))
    lines[#lines + 1] = "  " .. r.text .. pad .. "  [" .. table.concat(cells) .. "]" ..
                        (r.verdict == "contradicted" and " *" or "")
  end
  return table.concat(lines, "\n")
end

local result_mt = {__name = "sluice.tests"}

-- "0.12 [0.05, 0.19]" or the effect alone.
local function effect_text(r)
  if not r.effect or r.effect ~= r.effect then return "" end
  local s = string.format("%.3f", r.effect)
  if r.lo and r.hi then s = s .. string.format(" [%.3f, %.3f]", r.lo, r.hi) end
  return s
end

local function stat_text(r)
  if not r.stat then return "" end
  local s = string.format("%.3f", r.stat)
  if r.df then s = s .. string.format(" (%g)", r.df) end
  return s
end

local function p_text(p)
  if type(p) ~= "number" then return "" end
  if p < 1e-4 then return string.format("%.1e", p) end
  return string.format("%.4f", p)
end

function result_mt.__tostring(t)
  local rows = {}
  for i, r in ipairs(t) do
    rows[i] = {imp = r.text, test = r.test, n = r.n and tostring(r.n) or "",
               dropped = r.dropped and tostring(r.dropped) or "", effect = effect_text(r),
               stat = stat_text(r), p = p_text(r.p), p_adj = p_text(r.p_adj),
               verdict = r.verdict}
  end
  local lines = {string.format("tests of %d implication%s of the graph (%s; %g%% intervals%s)",
                               #t, #t == 1 and "" or "s", t.method == "auto"
                               and "test by column types" or "method = " .. t.method,
                               t.level * 100, t.in_database and "; summed inside the database"
                               or "")}
  if #t > 0 then
    lines[#lines + 1] = E.table_text(rows, {
      {"implication", "imp", "left"}, {"test", "test", "left"}, {"n", "n"},
      {"dropped", "dropped"}, {"effect [interval]", "effect", "left"},
      {"stat (df)", "stat", "left"}, {"p", "p"}, {"p adj", "p_adj"},
      {"verdict", "verdict", "left"}})
  end
  local contradicted, untested = {}, {}
  for _, r in ipairs(t) do
    if r.verdict == "contradicted" then contradicted[#contradicted + 1] = r end
    if r.verdict == "not tested" then untested[#untested + 1] = r end
  end
  lines[#lines + 1] = string.format("  %d of %d tested implication%s contradicted by the data " ..
                                    "at alpha = %g (%s adjustment)%s",
                                    #contradicted, #t - #untested, #t - #untested == 1 and "" or "s",
                                    t.alpha, adjust_names[t.adjust],
                                    #untested > 0 and string.format("; %d not tested", #untested) or "")
  for _, r in ipairs(untested) do
    lines[#lines + 1] = "  not tested: " .. r.text .. ": " .. r.why
  end
  for _, r in ipairs(t) do
    if r.note then lines[#lines + 1] = "  note: " .. r.text .. ": " .. r.note end
  end
  for _, r in ipairs(contradicted) do
    local fix = #r.add > 0 and ("adding " .. table.concat(r.add, " or ") .. " would remove it")
                or "no single edge between them removes it"
    lines[#lines + 1] = "  contradicted: " .. r.text .. ": " .. fix
  end
  local pic = text_forest(t)
  if pic then lines[#lines + 1] = pic end
  if t.plot then lines[#lines + 1] = "  picture: " .. t.plot end
  if (t.untestable or 0) > 0 then
    lines[#lines + 1] = string.format("  %d non-adjacent pair%s no observed set separates: " ..
                                      "the hidden structure leaves %s untestable",
                                      t.untestable, t.untestable == 1 and "" or "s",
                                      t.untestable == 1 and "it" or "them")
  end
  lines[#lines + 1] = "  " .. C.caution
  return table.concat(lines, "\n")
end

-- The picture: each effect with its interval, sorted, a zero line; the
-- contradicted ones marked in their labels.
local function picture(t, path)
  local shown = {}
  for _, r in ipairs(t) do if r.effect and r.effect == r.effect then shown[#shown + 1] = r end end
  if #shown == 0 then fail(fname, "plot = " .. show(path) .. ": no implication was tested") end
  table.sort(shown, function(x, y)
    if x.effect ~= y.effect then return x.effect < y.effect end
    return x.text < y.text
  end)
  local labels, est, lo, hi = {}, {}, {}, {}
  for i, r in ipairs(shown) do
    labels[i] = r.text .. (r.verdict == "contradicted" and "  (contradicted)" or "")
    est[i], lo[i], hi[i] = r.effect, r.lo or 0 / 0, r.hi or 0 / 0
  end
  E.call(fname, S._forest, path, "Implications of the graph tested on the data",
         "effect size (correlation scale)", labels, est, lo, hi, 0, "independence")
end

-- g:test(f, opts): the result table (see the help entry).
function C.test(g, f, opts)
  if not is_graph(g) then fail(fname, "call it on a graph: g:test(f, {...})") end
  local lazy = E.is_lazy(f)
  if not lazy and not E.is_frame(f) then
    fail(fname, "the data must be a data frame (read_csv, read_sql, m:simulate) or a lazy " ..
                "table (connect), got " .. show(f))
  end
  local o = options(opts)
  o.lazy = lazy
  if lazy then db_options(o) end
  local list = implications(g, o.implications)
  local names = {}
  for _, v in ipairs(f:names()) do names[v] = true end
  local t = {alpha = o.alpha, adjust = o.adjust, method = o.method, level = o.level,
             untestable = list.untestable or 0, in_database = lazy or nil}
  local ps = {}
  for i, imp in ipairs(list) do
    t[i] = test_one(f, names, imp, o)
    ps[i] = t[i].p or false
  end
  local adj = S._padjust(ps, o.adjust)
  for i, r in ipairs(t) do
    if r.verdict ~= "not tested" then
      r.p_adj = adj[i]
      r.verdict = r.p_adj < o.alpha and "contradicted" or "consistent"
      if r.verdict == "contradicted" then r.add = additions(g, r.a, r.b, r.given) end
    end
  end
  if o.plot then picture(t, o.plot); t.plot = o.plot end
  return setmetatable(t, result_mt)
end

function C.install(M)
  S = M
  local gm = getmetatable(M.graph("a"))
  gm.__index.test = C.test
end

return C
