-- sluice.compare: the estimate under each candidate adjustment set, beside
-- the truth (a number, or a model m whose effect is known) and beside the
-- value each set converges to (m:limit), as a table and a forest plot.
local P = require "sluice.print"
local E = require "sluice.estimate"
local C = {}
local S

local function fail(msg) E.fail("compare", msg) end

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
    for _, v in ipairs(s) do
      if hidden[v] then fail("the set " .. set_text(s) .. " names the hidden node '" .. v ..
                             "', which has no data") end
    end
    add(s, "yours")
  end
  return list
end

-- Whether v is a number that can be placed on the axis.
local function finite(v) return type(v) == "number" and v == v and v > -math.huge and v < math.huge end

-- The width of a text in the terminal's columns.
local function cols(s) return utf8.len(s) or #s end

-- A label broken into lines of at most width columns where it can be:
-- breaks fall at spaces outside double quotes, between the names of a set
-- and never inside one; a name wider than width keeps a line of its own.
function C.wrap(label, width)
  local lines, line, word, quoted = {}, "", "", false
  local function put()
    if line == "" then line = word
    elseif cols(line) + 1 + cols(word) <= width then line = line .. " " .. word
    else lines[#lines + 1] = line; line = word end
    word = ""
  end
  for _, c in utf8.codes(label) do
    local ch = utf8.char(c)
    if ch == '"' then quoted = not quoted end
    if ch == " " and not quoted then put() else word = word .. ch end
  end
  put()
  lines[#lines + 1] = line
  return lines
end

-- The widest label column of a text forest before labels wrap.
C.label_width = 30

-- A text forest plot: one line per row, the interval as [---*---], the
-- truth as |.  Labels are never cut: a long one wraps onto more lines.
local function forest_text(rows, truth)
  local lo, hi = math.huge, -math.huge
  local function see(v) if finite(v) then lo = math.min(lo, v); hi = math.max(hi, v) end end
  for _, r in ipairs(rows) do see(r.estimate); see(r.lo); see(r.hi) end
  see(truth)
  if lo == math.huge then return "" end
  if hi == lo then hi = lo + 1 end
  local width = 44
  local function col(v) return math.floor((v - lo) / (hi - lo) * (width - 1) + 1.5) end
  local lines, labw, wrapped = {}, 0, {}
  for _, r in ipairs(rows) do labw = math.max(labw, cols(r.set_text)) end
  labw = math.min(labw, C.label_width)
  for _, r in ipairs(rows) do   -- a name wider than the column widens it
    for _, l in ipairs(C.wrap(r.set_text, labw)) do labw = math.max(labw, cols(l)) end
  end
  for i, r in ipairs(rows) do wrapped[i] = C.wrap(r.set_text, labw) end
  for i, r in ipairs(rows) do
    local cells = {}
    for i = 1, width do cells[i] = " " end
    if finite(truth) then cells[col(truth)] = "|" end
    if finite(r.lo) and finite(r.hi) then
      for i = col(r.lo), col(r.hi) do cells[i] = "-" end
      cells[col(r.lo)] = "["; cells[col(r.hi)] = "]"
    end
    if finite(r.estimate) then cells[col(r.estimate)] = "*" end
    local parts = wrapped[i]
    for j = 1, #parts - 1 do lines[#lines + 1] = "  " .. parts[j] end
    local last = parts[#parts]
    lines[#lines + 1] = ("  " .. last .. string.rep(" ", labw - cols(last)) .. "  " ..
                         table.concat(cells)):gsub("%s+$", "")
  end
  lines[#lines + 1] = string.format("  %-" .. labw .. "s  %-22s%22s", "", E.fmt(lo), E.fmt(hi))
  if truth then lines[#lines + 1] = "  * estimate, [ ] interval, | truth" end
  return table.concat(lines, "\n")
end

-- The multipliers of the hidden node's coefficients in compare{hidden =}.
C.hidden_factors = {0, 0.5, 1, 1.5, 2}

-- The picture beside plot = "a.svg" for the hidden-node lines: a-hidden.svg.
local function hidden_path(path)
  local base, ext = path:match("^(.*)(%.[^./]*)$")
  if not base then return path .. "-hidden" end
  return base .. "-hidden" .. ext
end

-- compare{hidden = "u"}: the truth and each adjustment set's least-squares
-- limit in copies of the model with u's coefficients scaled, for
-- watching the bias of each set grow with the hidden confounder.
local function hidden_grid(a, m, x, y, rows)
  local u = a.hidden
  if type(u) ~= "string" then
    fail("hidden = must name a hidden node of the model's graph, got " .. E.show(u))
  end
  if not m then fail("hidden = needs truth = a linear model from sem() whose graph has the hidden node") end
  if not m:exact() then
    fail("hidden = needs a model without binary or binarized nodes (the exact limits)")
  end
  local g = m:graph()
  local hidden, is = g:hidden(), false
  for _, h in ipairs(hidden) do if h == u then is = true end end
  if not is then
    for _, v in ipairs(g:nodes()) do
      if v == u then
        fail(string.format("hidden = '%s' is observed in the graph: name a hidden node (%s)", u,
             #hidden > 0 and table.concat(hidden, ", ") or "the graph has none"))
      end
    end
    local near = E.closest(u, hidden)
    fail(string.format("hidden = '%s' is not a node of the model's graph%s", u,
         near and ("; did you mean '" .. near .. "'?") or
         (#hidden == 0 and " (the graph has no hidden node)" or "")))
  end
  if #g:children(u) == 0 then
    fail(string.format("hidden = '%s' has no edges out of it: scaling them changes nothing", u))
  end
  local sets, which = {}, {}
  for i, r in ipairs(rows) do
    if not r.route then sets[#sets + 1] = r.set; which[#which + 1] = i end
  end
  local h = {node = u, factors = C.hidden_factors, truth = {}, rows = {}}
  for j in ipairs(sets) do
    h.rows[j] = {set_text = rows[which[j]].set_text, valid_text = rows[which[j]].valid_text}
  end
  for f, factor in ipairs(C.hidden_factors) do
    local truth, lims = E.call("compare", S._sens_sem_grid, m, u, factor, x, y, sets)
    h.truth[f] = truth
    for j, v in ipairs(lims) do h.rows[j][f] = v end
  end
  return h
end

-- The hidden-node table: one row per set, one column per multiplier.
local function hidden_text(h)
  local cols = {{"set", "set_text", "left"}, {"valid", "valid_text", "left"}}
  local truth = {set_text = "truth", valid_text = ""}
  for f, factor in ipairs(h.factors) do
    cols[#cols + 1] = {string.format("x%g", factor), f}
    truth[f] = h.truth[f]
  end
  local list = {truth}
  for _, r in ipairs(h.rows) do list[#list + 1] = r end
  return string.format("as the hidden %s grows (its coefficients times %s), the value each set " ..
                       "converges to:", P.name(h.node), table.concat(h.factors, ", ")) ..
         "\n" .. E.table_text(list, cols) ..
         "\n  x1 is the model as given; a set whose value leaves the truth as the factor grows\n" ..
         "  is biased by the hidden confounder"
end

-- A relative error as a reader uses it: one decimal of a percent.
local function pct(v) return v ~= v and "NaN" or string.format("%.1f", v) end

-- How the truth was had: said beside it, so that a Monte Carlo value is
-- never mistaken for an exact one, nor an exact one for a noisy one.
local function truth_note(c)
  if c.truth_how == "exact" then
    return " (exact: every simulated unit has this effect)"
  elseif c.truth_how == "monte carlo" then
    return string.format(" (Monte Carlo, %d draws, SE %s)", c.truth_draws, E.fmt(c.truth_se))
  end
  return ""
end

local compare_mt = {__name = "sluice.comparison"}
function compare_mt.__tostring(c)
  local head = string.format("%s of %s on %s under each candidate set%s (%s)", c.estimand,
                             c.treatment, c.outcome, c.routes and " and route" or "", c.method)
  if c.truth then head = head .. "; truth " .. E.fmt(c.truth) .. truth_note(c) end
  local cols = {{"set", "set_text", "left"}, {"from", "label", "left"}, {"valid", "valid_text", "left"},
                {"estimate", "estimate"}, {"interval", "interval", "left"}}
  if c.truth then cols[#cols + 1] = {"error %", "error_pct", nil, pct} end
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
  if c.hidden then
    lines[#lines + 1] = ""
    lines[#lines + 1] = hidden_text(c.hidden)
    if c.hidden.plot then lines[#lines + 1] = "  picture: " .. c.hidden.plot end
    lines[#lines + 1] = ""
  end
  for _, note in ipairs(c.notes or {}) do lines[#lines + 1] = "  " .. note end
  local fd, iv = false, false
  for _, r in ipairs(c) do
    if r.label == "front-door" then fd = true elseif r.label == "instrument" then iv = true end
  end
  if fd then lines[#lines + 1] = "  front-door: the front-door formula through the set (see estimate{})" end
  if iv then
    lines[#lines + 1] = "  instrument: two-stage least squares; when effects differ between units, a local" ..
                        "\n  effect for compliers (Imbens and Angrist 1994)"
  end
  lines[#lines + 1] = "  " .. ((fd or iv) and E.route_caution or E.caution)
  return table.concat(lines, "\n")
end

local allowed = {data = true, graph = true, treatment = true, outcome = true, truth = true,
                 sets = true, method = true, boot = true, seed = true, level = true,
                 plot = true, estimand = true, threads = true, routes = true, hidden = true,
                 draws = true, weights = true}

-- The draws of the Monte Carlo truth of a model with binary or binarized
-- nodes, unless draws = says otherwise: an SE near 0.001 for effects of order 1.
C.truth_draws = 200000

-- Below this SE (relative to the truth) every draw gave the same effect,
-- up to rounding: the value is exact, not an estimate.
local EXACT_SE = 1e-9

-- The true effect of x on y in the model m: exact from the closed form, or
-- by Monte Carlo with draws and seed; returns truth, its SE (nil when
-- exact) and how it was had ("model", "exact" or "monte carlo").
function C.model_truth(m, x, y, draws, seed)
  if m:exact() then return m:effect(x, y), nil, "model" end
  local truth, se = m:effect(x, y, {draws = draws or C.truth_draws, seed = seed or 1})
  if se <= EXACT_SE * math.max(1, math.abs(truth)) then return truth, nil, "exact" end
  return truth, se, "monte carlo"
end


-- The rows of the front-door and IV routes the graph has: each estimated
-- with its own method; a route the data cannot take (e.g. a treatment not
-- 0/1 for the front-door) is left out with a note.
local function route_rows(a, g, x, y, rows, notes)
  local common = {data = a.data, treatment = x, outcome = y, seed = a.seed, level = a.level,
                  threads = a.threads, boot = a.boot}
  local function run(extra, label, text)
    local args = {}
    for k, v in pairs(common) do args[k] = v end
    for k, v in pairs(extra) do args[k] = v end
    local ok, est = pcall(E.estimate, args)
    if ok and not (est.se and est.se == est.se) and a.boot == nil then
      args.boot = 200   -- no analytic SE for this one: the bootstrap
      ok, est = pcall(E.estimate, args)
    end
    if not ok then
      local msg = tostring(est):gsub("^[^:\n]*:%d+: ", "", 1):gsub("^estimate: ", "", 1)
      notes[#notes + 1] = label .. " route left out: " .. msg
      return
    end
    rows[#rows + 1] = {set = {}, set_text = text, label = label, valid = true, valid_text = "yes",
                       estimate = est.estimate, lo = est.lo, hi = est.hi, se = est.se,
                       route = est}
  end
  local via = E.pick_frontdoor(g, x, y)
  if via then
    run({method = "frontdoor", via = via}, "front-door", "front-door via " .. set_text(via))
  end
  local inst = E.pick_instrument(g, x, y)
  if inst then
    run({method = "iv", instrument = inst.z, set = inst.given}, "instrument",
        "instrument " .. P.name(inst.z) .. " | " .. set_text(inst.given))
  end
end

-- sets = a name (one set of one node), or a list whose items are names or
-- lists of names; every name a node of g.
local function your_sets(g, sets)
  if sets == nil then return {} end
  if type(sets) == "string" then sets = {sets} end
  if type(sets) ~= "table" then
    fail("sets = must be a node name or a list of sets, e.g. {\"z\", {\"z\", \"w\"}}, got " .. E.show(sets))
  end
  local nodes, known = g:nodes(), {}
  for _, v in ipairs(nodes) do known[v] = true end
  local out = {}
  for k in pairs(sets) do
    if math.type(k) ~= "integer" or k < 1 or k > #sets then
      fail("sets = must be a list of sets, not a table keyed by " .. E.show(k))
    end
  end
  for i, s in ipairs(sets) do
    if type(s) == "string" then s = {s} end
    if type(s) ~= "table" then
      fail(string.format("sets = item %d is %s, not a node name or a list of names", i, E.show(s)))
    end
    local set = {}
    for j, v in ipairs(s) do
      if type(v) ~= "string" then
        fail(string.format("sets = item %d holds %s, not a node name", i, E.show(v)))
      end
      if not known[v] then
        local near = E.closest(v, nodes)
        fail(string.format("sets: no node '%s' in the graph%s", v,
             near and ("; did you mean '" .. near .. "'?") or ""))
      end
      set[j] = v
    end
    out[#out + 1] = set
  end
  return out
end

function C.compare(a)
  if type(a) ~= "table" then fail("expects a table of named arguments, e.g. compare{data = f, ...}") end
  local names = {}
  for k in pairs(allowed) do names[#names + 1] = k end
  table.sort(names)
  for k in pairs(a) do
    if not allowed[k] then E.unknown_key("compare", k, names, "argument") end
  end
  -- a lazy table: each set's estimate runs inside the database (the
  -- front-door and IV routes need the rows and are left out with a note)
  if not E.is_frame(a.data) and not E.is_lazy(a.data) then
    fail("data = must be a data frame (read_csv, read_sql) or a database table (connect)")
  end
  local x, y = a.treatment, a.outcome
  E.check_column("compare", "treatment", a.data, x)
  E.check_column("compare", "outcome", a.data, y)
  local m = is_model(a.truth) and a.truth or nil
  local g = a.graph or (m and m:graph())
  if not g then fail("graph = is needed to judge the sets (or truth = a model on a graph)") end
  if (getmetatable(g) or {}).__name ~= "sluice.graph" then
    fail("graph = must be a graph (graph[[...]] or read_graph), got " .. E.show(g))
  end
  if type(a.truth) == "number" and not (a.truth == a.truth and math.abs(a.truth) < math.huge) then
    fail("truth = " .. E.show(a.truth) .. " must be a finite number (or a model from sem())")
  end
  if a.truth ~= nil and type(a.truth) ~= "number" and not m then
    fail("truth = must be a number or a model from sem(), got " .. E.show(a.truth))
  end
  if a.plot ~= nil and type(a.plot) ~= "string" then
    fail("plot = must be a file name ending in .svg, .png or .pdf, got " .. E.show(a.plot))
  end
  if a.routes ~= nil and type(a.routes) ~= "boolean" then
    fail("routes = " .. E.show(a.routes) .. " must be true or false")
  end
  local method = E.choice("compare", "method", a.method, {"standardize", "ipw", "aipw"}, "standardize")
  E.choice("compare", "estimand", a.estimand, {"ATE", "ATT", "ATC"}, "ATE")
  E.check_common("compare", a)
  local extra = your_sets(g, a.sets)
  local draws = type(a.draws) == "number" and math.tointeger(a.draws) or nil
  if a.draws ~= nil and not (draws and draws >= 2 and draws <= 100000000) then
    fail("draws = " .. E.show(a.draws) .. " must be a whole number from 2 to 100000000")
  end
  if a.draws ~= nil and not m then
    fail("draws = sets the Monte Carlo truth of truth = a model from sem(); there is none here")
  end
  local truth, truth_se, truth_how
  if type(a.truth) == "number" then truth, truth_how = a.truth, "given"
  elseif m then
    truth, truth_se, truth_how = E.call("compare", C.model_truth, m, x, y, draws, a.seed)
  end
  local rows = candidates(g, x, y, extra)
  local boot = a.boot
  if boot == nil then boot = 0 end   -- every method has an analytic SE (estimate{})
  local has_limit = m and m:exact()
  for _, r in ipairs(rows) do
    r.set_text = set_text(r.set)
    local ok, why = g:admissible(x, y, r.set)
    r.valid = ok
    r.valid_text = ok and "yes" or "no"
    if not ok then r.reason = tostring(why[1]) end
    local ok, est = pcall(E.estimate, {data = a.data, treatment = x, outcome = y, set = r.set,
                                       method = method, boot = boot, seed = a.seed, level = a.level,
                                       estimand = a.estimand, threads = a.threads,
                                       weights = a.weights})
    if not ok then
      local msg = tostring(est):gsub("^[^:\n]*:%d+: ", "", 1):gsub("^estimate: ", "", 1)
      fail("with the set " .. r.set_text .. ": " .. msg)
    end
    r.estimate, r.lo, r.hi, r.se = est.estimate, est.lo, est.hi, est.se
    r.interval = r.lo and (E.fmt(r.lo) .. " to " .. E.fmt(r.hi)) or "-"
    if truth and truth ~= 0 then r.error_pct = 100 * (r.estimate - truth) / truth end
    if has_limit then r.limit = m:limit(x, y, r.set) end
  end
  local routes = a.routes
  if routes == nil then routes = #g:adjust(x, y, {limit = 1}) == 0 end
  local notes = {}
  if routes then
    local n0 = #rows
    route_rows(a, g, x, y, rows, notes)
    for i = n0 + 1, #rows do
      local r = rows[i]
      r.interval = r.lo and (E.fmt(r.lo) .. " to " .. E.fmt(r.hi)) or "-"
      if truth and truth ~= 0 then r.error_pct = 100 * (r.estimate - truth) / truth end
    end
    if #rows == n0 and #notes == 0 then
      notes[1] = "routes: the graph shows no front-door set and no instrument" ..
                 ((E.graph_method(g, "frontdoor") and E.graph_method(g, "instruments")) and ""
                  or " (g:frontdoor or g:instruments is not available in this build)")
    end
  end
  if a.hidden ~= nil then rows.hidden = hidden_grid(a, m, x, y, rows) end
  rows.routes, rows.notes = routes, notes
  rows.treatment, rows.outcome, rows.method = x, y, method
  rows.estimand = a.estimand or "ATE"
  rows.truth, rows.truth_se, rows.has_limit = truth, truth_se, has_limit
  rows.truth_how = truth_how
  rows.truth_draws = truth_how == "monte carlo" and (draws or C.truth_draws) or nil
  if a.plot then
    local labels, est, lo, hi = {}, {}, {}, {}
    for i, r in ipairs(rows) do
      labels[i] = r.set_text .. (r.valid and "" or " (invalid)")
      est[i], lo[i], hi[i] = r.estimate, r.lo or 0 / 0, r.hi or 0 / 0
    end
    rows.plot = E.call("compare", S._forest, a.plot, "Effect of " .. x .. " on " .. y ..
                       (routes and " by adjustment set and route" or " by adjustment set"),
                       "estimate", labels, est, lo, hi, truth or 0 / 0,
                       truth and "truth" or nil)
  end
  if rows.hidden and a.plot then
    local h = rows.hidden
    local series, labels = {h.truth}, {"truth"}
    for j, r in ipairs(h.rows) do
      local v = {}
      for f in ipairs(h.factors) do v[f] = r[f] end
      series[j + 1], labels[j + 1] = v, r.set_text
    end
    h.plot = E.call("compare", S._lines, hidden_path(a.plot),
                    "Limit of each set as the hidden " .. h.node .. " grows", "multiplier of " ..
                    h.node .. "'s coefficients", "large-sample value", h.factors, series, labels, true)
  end
  return setmetatable(rows, compare_mt)
end

function C.install(M)
  S = M
  M.compare = C.compare
end

return C
