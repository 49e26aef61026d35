-- db_engines.lua: lazy tables, the same checks on SQLite and PostgreSQL
-- (run by tests/shell/postgres.sh through tests/lua/run.lua, not by the
-- Lua suite: it needs the databases that script makes).  Environment:
-- SLUICE_DB_ENGINE ("SQLite" or "PostgreSQL"), SLUICE_DB_TARGET (the file
-- or URI, with a password that must never be shown), SLUICE_DB_CSV (the
-- CSV the tables were loaded from) and SLUICE_DB_EXPECT (the summaries
-- from Python's statistics module, tests/lib/db_load.py).
local engine = assert(os.getenv("SLUICE_DB_ENGINE"))
local target = assert(os.getenv("SLUICE_DB_TARGET"))
local csv = assert(os.getenv("SLUICE_DB_CSV"))
local expect = dofile(assert(os.getenv("SLUICE_DB_EXPECT")))
local secret = "s3cret-never-shown"
local pg = engine == "PostgreSQL"

local function name(s) return engine .. ": " .. s end

-- Relative closeness, for sums whose order of addition differs.
local function close(a, b, tol, what)
  if math.abs(a - b) > tol * math.max(1, math.abs(b)) then
    error(string.format("%s: expected %.17g, got %.17g", what, b, a), 2)
  end
end

-- Every cell of two frames equal (numbers exactly; missing as missing).
local function same_frame(a, b, what)
  same_list(a:names(), b:names(), what .. ": names")
  eq(#a, #b, what .. ": rows")
  for _, n in ipairs(a:names()) do
    eq(a[n].type, b[n].type, what .. ": type of " .. n)
    for i = 1, #a do eq(a[n][i], b[n][i], what .. ": " .. n .. " row " .. i) end
  end
end

local db = connect(target)
local t = db:table("plots")
local f = read_csv(csv)

test(name("tostring(db) names the engine and never the password"), function()
  local s = tostring(db)
  assert(s:find(engine, 1, true), s)
  assert(s:find("read-only", 1, true), s)
  assert(not s:find(secret, 1, true), s)
  assert(not tostring(t):find(secret, 1, true))
end)

test(name("a lazy table knows its columns and types, and holds no rows"), function()
  same_list(t:names(), f:names(), "names")
  local ty = t:types()
  for _, n in ipairs(f:names()) do eq(ty[n], f[n].type, "type of " .. n) end
  local s = tostring(t)
  assert(s:find('lazy table "plots", 6 columns', 1, true), s)
  assert(s:find("soil [category, text]", 1, true) or s:find("soil [category, TEXT]", 1, true), s)
end)

test(name("#t counts with SQL"), function()
  eq(#t, #f, "#t")
  eq(#t, 40, "#t")
end)

test(name("t:head(n) is the first rows, t:fetch() every row, as read_csv reads them"), function()
  same_frame(t:head(3), f:head(3), "head(3)")
  same_frame(t:head(), f:head(), "head()")
  same_frame(t:fetch(), f, "fetch")
  same_frame(t:fetch{limit = 40}, f, "fetch at the limit")
  eq(#t:head(0), 0, "head(0)")
end)

test(name("t:fetch refuses more rows than the limit"), function()
  raises(function() t:fetch{limit = 39} end, "t:fetch:", "more than 39 rows", "limit")
  raises(function() t:fetch{limit = 0} end, "t:fetch:", "option limit", "1 or more")
  raises(function() t:fetch{limt = 5} end, "t:fetch", "limit")
end)

test(name("t:summary() is the fetched frame's summary"), function()
  local a, b = t:summary(), t:fetch():summary()
  eq(#a, #b, "columns")
  for j = 1, #a do
    local x, y = a[j], b[j]
    for _, k in ipairs({"column", "type", "n", "missing", "levels", "min", "q1", "median", "q3", "max"}) do
      eq(x[k], y[k], x.column .. " " .. k)
    end
    for _, k in ipairs({"mean", "sd"}) do
      if y[k] then close(x[k], y[k], 1e-13, x.column .. " " .. k) else eq(x[k], nil, k) end
    end
  end
  eq(tostring(a), tostring(b), "printed alike")
end)

test(name("t:summary() against Python's statistics module"), function()
  local s = {}
  for _, r in ipairs(t:summary()) do s[r.column] = r end
  for col, e in pairs(expect) do
    eq(s[col].n, e.n, col .. " n")
    for _, k in ipairs({"mean", "sd", "q1", "median", "q3"}) do close(s[col][k], e[k], 1e-13, col .. " " .. k) end
  end
end)

test(name("a query is a lazy table too"), function()
  local q = db:query("SELECT soil, COUNT(*) AS n, SUM(yield) AS total FROM plots "
                     .. "WHERE soil IS NOT NULL GROUP BY soil ORDER BY soil;")
  local r = q:fetch()
  same_list(r:names(), {"soil", "n", "total"}, "names")
  eq(#q, 4, "#q")
  local n, total = {}, {}
  for i = 1, #f do
    local s = f.soil[i]
    if s then n[s] = (n[s] or 0) + 1; total[s] = (total[s] or 0) + f.yield[i] end
  end
  for i = 1, #r do
    eq(r.n[i], n[r.soil[i]], "count of " .. r.soil[i])
    close(r.total[i], total[r.soil[i]], 1e-13, "sum of " .. r.soil[i])
  end
  assert(tostring(q):find("lazy table of the query", 1, true))
end)

test(name("a boolean column is a number 0/1"), function()
  local g = db:table("flags")
  eq(g:types().treated_flag, "number", "type")
  local r = g:fetch()
  for i = 1, #r do eq(r.treated_flag[i], f.treated[i], "row " .. i) end
end)

test(name("an empty table: no rows, columns known"), function()
  local e = db:table("empty_one")
  eq(#e, 0, "#e")
  same_list(e:names(), {"a", "b"}, "names")
  eq(#e:fetch(), 0, "fetch")
  local s = e:summary()
  eq(s[1].n, 0, "n"); eq(s[1].mean, nil, "mean"); eq(s[2].levels, 0, "levels")
end)

test(name("hostile names are read and cannot inject"), function()
  local x = db:table('x"; DROP TABLE y; --')
  same_list(x:names(), {'we"ird; col', "ünï cøde", "a b"}, "names")
  eq(#x, 3, "#x")
  local r = x:fetch()
  eq(r['we"ird; col'][1], 1.5, "cell"); eq(r['we"ird; col'][2], -2.25, "cell")
  eq(r['we"ird; col'][3], nil, "missing")
  eq(r["ünï cøde"][1], "é; 'quoted'", "text"); eq(r["ünï cøde"][2], nil, "NULL")
  local s = x:summary()
  eq(s[1].n, 2, "n"); eq(s[1].mean, -0.375, "mean"); eq(s[2].levels, 2, "levels")
  local sums = x:_sums({'we"ird; col', "a b"})
  eq(sums.n, 2, "complete rows"); eq(sums.dropped, 1, "dropped")
  eq(#db:table("y"), 1, "y is still there")
  raises(function() db:table('y"; DROP TABLE y; --') end, "db:table:", "no table")
  eq(#db:table("y"), 1, "y is still there")
end)

test(name("unknown tables and columns suggest the closest name"), function()
  raises(function() db:table("plot") end, "db:table:", "no table 'plot'", "did you mean 'plots'")
  raises(function() db:table("") end, "db:table:", "empty")
  raises(function() t:_sums({"yeild"}) end, "no column 'yeild'", "did you mean 'yield'")
end)

test(name("the engine's own message is relayed"), function()
  local m = raises(function() db:query("SELECT nosuch FROM plots") end, "db:query:", engine .. ":", "nosuch")
  assert(not m:find("\n"), "one line: " .. m)
  raises(function() db:query("") end, "db:query:", "empty")
end)

test(name("read-only: nothing a query says can write"), function()
  raises(function() db:query("DELETE FROM y") end, "db:query:")
  raises(function() db:query("SELECT * FROM y; DROP TABLE y") end, "db:query:")
  raises(function() db:query("SELECT 1) AS a; DROP TABLE y; --") end, "db:query:")
  raises(function() db:query("WITH d AS (DELETE FROM y RETURNING *) SELECT * FROM d") end, "db:query:")
  if pg then
    raises(function() db:query("SELECT nextval('counter') AS k"):fetch() end, "read-only transaction")
    -- a setting changed by a query does not outlive its transaction
    db:query("SELECT set_config('default_transaction_read_only', 'off', false) AS s"):fetch()
    raises(function() db:query("SELECT nextval('counter') AS k"):fetch() end, "read-only transaction")
  end
  eq(#db:table("y"), 1, "y is still there")
  eq(db:table("y"):fetch().a[1], 7, "and unchanged")
end)

test(name("sums and cross-products in one aggregate equal the fetched frame's"), function()
  local r = t:fetch()
  local cols = {"yield", "rain", "treated"}
  for _, opts in ipairs({{}, {weight = "plot"}, {centre = {4.5, 600, 0.5}}}) do
    local s = t:_sums(cols, opts)
    local n, w, sum, cross = 0, 0, {0, 0, 0}, {{0, 0, 0}, {0, 0, 0}, {0, 0, 0}}
    for i = 1, #r do
      local v, ok = {}, true
      for k, c in ipairs(cols) do
        v[k] = r[c][i]
        if v[k] == nil then ok = false else v[k] = v[k] - (opts.centre and opts.centre[k] or 0) end
      end
      if ok then
        local wi = opts.weight and r[opts.weight][i] or 1
        n, w = n + 1, w + wi
        for k = 1, 3 do
          sum[k] = sum[k] + wi * v[k]
          for l = 1, 3 do cross[k][l] = cross[k][l] + wi * v[k] * v[l] end
        end
      end
    end
    eq(s.n, n, "rows used"); eq(s.dropped, #r - n, "rows dropped"); eq(s.n, 35, "rows used")
    close(s.wsum, w, 1e-13, "sum of weights")
    for k = 1, 3 do
      close(s.sum[k], sum[k], 1e-12, "sum " .. k)
      for l = 1, 3 do close(s.cross[k][l], cross[k][l], 1e-12, "cross " .. k .. l) end
    end
  end
  raises(function() t:_sums({"soil"}) end, "categorical")
end)

-- ols{} and logit{} inside the database equal the fits of the fetched rows
dofile("tests/lua/db_models.lua")(name, db)
dofile("tests/lua/db_citest.lua")(name, db, target)
-- Poisson bootstrap weights computed in SQL equal the C values
dofile("tests/lua/db_pois.lua")(name, db)
-- estimate{} inside the database equals the fetched frame's
dofile("tests/lua/db_estimate.lua")(name, db)
-- balance{} and overlap{} inside the database equal the fetched frame's
dofile("tests/lua/db_diag.lua")(name, db)

test(name("db:close() ends the connection; its tables say so"), function()
  local d2 = connect(target)
  local t2 = d2:table("y")
  d2:close()
  assert(tostring(d2):find("closed", 1, true))
  raises(function() return #t2 end, "#t:", "connection is closed")
  raises(function() t2:fetch() end, "t:fetch:", "connection is closed")
  raises(function() d2:table("y") end, "db:table:", "connection is closed")
end)
