-- db_models.lua: ols{} and logit{} of a lazy table, summed inside the
-- database, against the same fit of the fetched frame (the in-memory fit
-- is held to statsmodels and NIST StRD by test_regress_se.lua,
-- tests/oracle and test_regress.c).  Loaded by test_db_models.lua (an
-- SQLite file made by tests/lib/db_load.py) and by db_engines.lua (SQLite
-- and PostgreSQL, through tests/shell/postgres.sh); the table is "plots"
-- of tests/data/db_plots.csv.  Returns function(name, db).
return function(name, db)
  local t = db:table("plots")
  local f = t:fetch()

  -- Relative closeness (1e-9 is the issue's bar on well-conditioned data).
  local rel = dofile("tests/lua/db_common.lua").rel

  local function same_fit(a, b, what, fields)
    eq(a.n, b.n, what .. ": n")
    eq(a.dropped, b.dropped, what .. ": dropped")
    same_list(a.terms, b.terms, what .. ": terms")
    for _, term in ipairs(a.terms) do
      for _, k in ipairs({"coef", "se", "se_classical", "p", "lo", "hi"}) do
        rel(a[k][term], b[k][term], what .. ": " .. k .. " of " .. term)
      end
    end
    for _, k in ipairs(fields) do rel(a[k], b[k], what .. ": " .. k) end
  end

  test(name("ols{} of a lazy table equals ols{} of the fetched rows (classical, HC0, HC1)"), function()
    for _, se in ipairs({"classical", "HC0", "HC1"}) do
      local a = ols{data = t, y = "yield", x = {"rain", "treated"}, se = se}
      local b = ols{data = f, y = "yield", x = {"rain", "treated"}, se = se}
      same_fit(a, b, "ols " .. se, {"r2", "adj_r2", "sigma", "df"})
      eq(a.n, 35, "rows used"); eq(a.dropped, 5, "rows with a missing value, dropped")
      eq(a.se_method, se, "se_method")
      assert(tostring(a):find("summed inside the database", 1, true), tostring(a))
      assert(not tostring(b):find("summed inside the database", 1, true))
    end
  end)

  test(name("logit{} of a lazy table equals logit{} of the fetched rows"), function()
    for _, se in ipairs({"classical", "HC0", "HC1"}) do
      local a = logit{data = t, y = "treated", x = {"rain", "yield"}, se = se}
      local b = logit{data = f, y = "treated", x = {"rain", "yield"}, se = se}
      same_fit(a, b, "logit " .. se, {"loglik", "deviance"})
      for _, term in ipairs(a.terms) do
        rel(a.robust_se[term], b.robust_se[term], "logit sandwich SE of " .. term)
        rel(a.odds_ratio[term], b.odds_ratio[term], "odds ratio of " .. term)
      end
      eq(a.iterations, b.iterations, "iterations")
      eq(a.converged, true, "converged")
      eq(a.warning, "", "no warning")
    end
  end)

  test(name("hostile column names in a query fit as plain ones"), function()
    local q = db:query('SELECT rain AS "r""; DROP TABLE y; --", yield AS "ÿ ield", treated ' ..
                       'FROM plots')
    local a = ols{data = q, y = "ÿ ield", x = {'r"; DROP TABLE y; --', "treated"}, se = "HC1"}
    local b = ols{data = t, y = "yield", x = {"rain", "treated"}, se = "HC1"}
    rel(a.coef['r"; DROP TABLE y; --'], b.coef.rain, "slope under a hostile name")
    rel(a.se['r"; DROP TABLE y; --'], b.se.rain, "SE under a hostile name")
    local l = logit{data = q, y = "treated", x = {'r"; DROP TABLE y; --', "ÿ ield"}}
    rel(l.coef["ÿ ield"], logit{data = f, y = "treated", x = {"rain", "yield"}}.coef.yield,
        "logit slope under a unicode name")
    eq(#db:table("y"), 1, "the table y is still there")
  end)

  test(name("what a fit in the database cannot do is refused by name"), function()
    raises(function() ols{data = t, y = "yield", x = {"rain"}, se = "HC3"} end,
           "ols:", 'se = "HC3" is not available for a lazy table', "leverage")
    raises(function() ols{data = t, y = "yield", x = {"rain"}, cluster = "soil"} end,
           "ols:", "cluster = is not available for a lazy table")
    raises(function() logit{data = t, y = "treated", x = {"rain"}, weights = "plot"} end,
           "logit:", "weights = is not available for a lazy table")
    raises(function() ols{data = t, y = "yield", x = {"rain", "soil"}} end,
           "ols:", "x: 'soil' has text values", "numeric columns only")
    raises(function() logit{data = t, y = "yield", x = {"rain"}} end,
           "logit:", "0/1 response; 'yield' takes other values")
    raises(function() ols{data = t, y = "yeild", x = {"rain"}} end,
           "ols:", "no column 'yeild'", "did you mean 'yield'")
    raises(function() ols{data = t, y = "yield", x = {"rain"}, bogus = 1} end,
           "ols:", "bogus")
    local q = db:query("SELECT yield, rain, 2 * rain AS rain2 FROM plots")
    raises(function() ols{data = q, y = "yield", x = {"rain", "rain2"}} end,
           "ols:", "column 'rain2' is a linear combination of earlier columns")
  end)
end
