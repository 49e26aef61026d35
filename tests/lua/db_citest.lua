-- db_citest.lua: g:test of a lazy table, computed inside the database,
-- against g:test of the fetched frame (the frame's tests are held to scipy
-- and statsmodels by tests/oracle/citest_scipy.py and test_citest.c, and
-- the database's partial correlation to scipy's values directly in
-- test_citest.c).  Run by db_engines.lua on SQLite and PostgreSQL
-- (tests/shell/postgres.sh); the table is "plots" of
-- tests/data/db_plots.csv (rain is missing in 5 of its 40 rows, soil in 4).
-- Returns function(name, db, target), target the connect() string of db.
return function(name, db, target)
  local t = db:table("plots")
  -- numeric columns made in SQL: products (not linear in the others) and
  -- a 0/1 column that is missing where rain is
  local q = db:query("SELECT plot, rain, yield, treated, soil, rain * yield / 1000 AS ry, " ..
                     "plot * plot AS p2, CASE WHEN rain IS NULL THEN NULL WHEN rain > 600 " ..
                     "THEN 1 ELSE 0 END AS wet FROM plots")
  local fq = q:fetch()

  local function imp(a, b, given) return {a = a, b = b, given = given or {}} end
  local g = graph "plot -> rain -> yield; treated -> yield"

  -- Relative closeness (1e-9 is the issue's bar on well-conditioned data).
  local rel = dofile("tests/lua/db_common.lua").rel

  -- Two rows of g:test alike: the same test on the same rows, every number
  -- to 1e-9 relative, the same verdict (and p_adj unless alone is false:
  -- when the two tables tested different sets, the adjustments differ).
  local function same_row(a, b, what, alone)
    local same, close = {"text", "test", "n", "dropped", "response", "note"},
                        {"effect", "lo", "hi", "stat", "df", "p"}
    if alone ~= false then same[#same + 1], close[#close + 1] = "verdict", "p_adj" end
    for _, k in ipairs(same) do eq(a[k], b[k], what .. ": " .. k) end
    for _, k in ipairs(close) do
      if b[k] == nil then eq(a[k], nil, what .. ": " .. k) else rel(a[k], b[k], what .. ": " .. k) end
    end
  end

  -- The rows of f with a value in every named column (counted here, apart
  -- from sluice's own count).
  local function complete(f, cols)
    local n = 0
    for i = 1, #f do
      local ok = true
      for _, c in ipairs(cols) do ok = ok and f[c][i] ~= nil end
      if ok then n = n + 1 end
    end
    return n
  end

  local IMPS = {imp("plot", "yield", {"rain"}), imp("rain", "plot"),
                imp("yield", "p2", {"rain", "plot"}), imp("ry", "plot", {"treated"}),
                imp("yield", "plot", {"rain", "treated", "p2"}), imp("p2", "yield", {"ry"})}

  test(name("g:test of a lazy table equals g:test of the fetched rows (auto, partial, lr)"), function()
    for _, method in ipairs({"auto", "partial", "lr"}) do
      for _, level in ipairs({0.95, 0.8}) do
        local a = g:test(q, {method = method, level = level, implications = IMPS})
        local b = g:test(fq, {method = method, level = level, implications = IMPS})
        eq(#a, #IMPS, "rows")
        for i = 1, #a do
          local what = method .. " " .. level .. ": " .. a[i].text
          eq(a[i].verdict ~= "not tested", true, what .. ": " .. tostring(a[i].why))
          same_row(a[i], b[i], what)
          eq(a[i].test, method == "lr" and "LR linear" or "partial r", what .. ": test")
        end
        eq(a.in_database, true, "in_database")
        eq(b.in_database, nil, "in_database of a frame")
      end
    end
    -- the graph's own implications (some refused in the database: below)
    local a, b = g:test(t), g:test(t:fetch())
    eq(#a, #g:implications(), "the graph's implications")
    local tested = 0
    for i = 1, #a do
      if a[i].verdict ~= "not tested" then same_row(a[i], b[i], a[i].text, false); tested = tested + 1 end
    end
    eq(tested >= 1, true, "tested in the database")
  end)

  test(name("rows with a missing value are dropped per implication and counted alike"), function()
    local a = g:test(q, {implications = IMPS})
    for i, r in ipairs(a) do
      local cols = {IMPS[i].a, IMPS[i].b}
      for _, c in ipairs(IMPS[i].given) do cols[#cols + 1] = c end
      local n = complete(fq, cols)
      eq(r.n, n, r.text .. ": n")
      eq(r.dropped, #fq - n, r.text .. ": dropped")
    end
    eq(a[1].n, 35, "plot ⊥ yield | rain: 35 rows"); eq(a[1].dropped, 5, "5 without rain")
    eq(a[2].n, 35); eq(a[4].n, 35, "ry is missing where rain is")
  end)

  test(name("a constant conditioning column is noted, as on the frame"), function()
    local k = db:query("SELECT plot, rain, yield, 2.5 AS k FROM plots")
    local list = {imp("plot", "yield", {"rain", "k"})}
    local a, b = g:test(k, {implications = list}), g:test(k:fetch(), {implications = list})
    same_row(a[1], b[1], "constant k")
    eq(a[1].note, "'k' is constant over the complete rows (conditioning on it changes nothing)")
  end)

  test(name("the printout says where the sums were made"), function()
    local s = tostring(g:test(q, {implications = IMPS}))
    assert(s:find("tests of 6 implications of the graph (test by column types; 95% intervals; " ..
                  "summed inside the database)", 1, true), s)
    assert(s:find("Passing these tests does not prove the graph", 1, true), s)
    assert(not tostring(g:test(fq, {implications = IMPS})):find("inside the database", 1, true))
  end)

  test(name("hostile and unicode column names test as plain ones"), function()
    local h = db:query('SELECT rain AS "r""; DROP TABLE y; --", yield AS "ÿ ield", plot FROM plots')
    local a = g:test(h, {implications = {imp("ÿ ield", "plot", {'r"; DROP TABLE y; --'})}})[1]
    local b = g:test(t, {implications = {imp("yield", "plot", {"rain"})}})[1]
    for _, k in ipairs({"n", "dropped", "test"}) do eq(a[k], b[k], k) end
    for _, k in ipairs({"effect", "lo", "hi", "stat", "p"}) do rel(a[k], b[k], k) end
    eq(#db:table("y"), 1, "the table y is still there")
  end)

  test(name("what the database does not do is refused, naming the method"), function()
    raises(function() g:test(t, {method = "residual"}) end, "g:test:", 'method = "residual"',
           "t:fetch()", 'method = "partial", which runs in the database')
    raises(function() g:test(t, {method = "gtest"}) end, "g:test:", 'method = "gtest"', "t:fetch()")
    raises(function() g:test(t, {boot = 200}) end, "g:test:", "boot = 200 resamples the rows",
           "t:fetch()")
    local list = {imp("treated", "wet"), imp("treated", "rain"), imp("plot", "soil"),
                  imp("plot", "yield", {"rain"})}
    local a = g:test(q, {implications = list})
    local b = g:test(fq, {implications = list})
    -- two 0/1 columns, 35 rows for 4 cells: the frame runs the G-test
    eq(b[1].test, "G-test")
    eq(a[1].verdict, "not tested")
    for _, s in ipairs({'method = "auto" chose the G-test', "t:fetch()",
                        'method = "partial", which runs in the database'}) do
      assert(a[1].why:find(s, 1, true), a[1].why)
    end
    eq(a[1].n, 35, "the first query counted the rows"); eq(a[1].dropped, 5)
    -- a 0/1 column against a continuous one: the logistic LR test
    eq(b[2].test, "LR logistic")
    assert(a[2].why:find("likelihood-ratio test with 'treated' (0/1) as a logistic response", 1, true), a[2].why)
    -- text values
    eq(b[3].test, "LR linear")
    assert(a[3].why:find("'soil' has text values", 1, true), a[3].why)
    eq(a[3].n, nil, "no rows read")
    -- the rest is tested, and adjusted among the tested ones only
    eq(a[4].test, "partial r")
    rel(a[4].p_adj, a[4].p, "one tested: p_adj is p")
    local s = tostring(a)
    assert(s:find("0 of 1 tested implication contradicted", 1, true) and s:find("3 not tested", 1, true), s)
    -- method = "partial" runs the 0/1 columns in the database, as on the frame
    local pa = g:test(q, {method = "partial", implications = {list[1], list[2]}})
    local pb = g:test(fq, {method = "partial", implications = {list[1], list[2]}})
    for i = 1, 2 do same_row(pa[i], pb[i], "partial " .. pa[i].text) end
  end)

  test(name("aliased and nearly aliased columns"), function()
    local d = db:query("SELECT plot, yield, rain, 2 * rain AS rain2, " ..
                       "rain + 0.00001 * treated AS rain_near FROM plots")
    local f = d:fetch()
    local list = {imp("plot", "yield", {"rain", "rain2"}), imp("plot", "yield", {"rain", "rain_near"}),
                  imp("rain2", "yield", {"rain"})}
    local a, b = g:test(d, {implications = list}), g:test(f, {implications = list})
    eq(b[1].why, "conditioning column 'rain2' is a linear combination of the conditioning " ..
                 "columns before it: drop it")
    -- from sums an exact alias is a sine of rounding size: refused either way
    assert(a[1].why:find("'rain2' is a linear combination", 1, true) or
           a[1].why:find("'rain2' is nearly a linear function", 1, true), a[1].why)
    -- sine about 5e-8: the frame's QR tests it, the database's sums refuse it
    eq(b[2].test, "partial r")
    assert(a[2].why:find("'rain_near' is nearly a linear function of the conditioning columns " ..
                         "before it", 1, true), a[2].why)
    assert(a[2].why:find("t:fetch()", 1, true), a[2].why)
    assert(a[3].why:find("'rain2' is", 1, true) and
           a[3].why:find("linear function of the conditioning set", 1, true), a[3].why)
  end)

  test(name("unknown columns and a closed connection"), function()
    local r = g:test(t, {implications = {imp("yeild", "plot")}})[1]
    eq(r.why, "no column 'yeild' (did you mean 'yield'?) in the data")
    local d2 = connect(target)
    local t2 = d2:table("plots")
    d2:close()
    raises(function() g:test(t2, {implications = {imp("plot", "yield")}}) end, "g:test:",
           "connection is closed")
  end)
end
