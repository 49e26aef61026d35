-- db_estimate.lua: estimate{} of a lazy table, summed inside the database,
-- against the same estimate of the fetched frame (the in-memory estimator
-- is held to a stacked-sandwich oracle over statsmodels fits by
-- tests/oracle/sandwich_numpy.py, to coverage by test_coverage.lua).
-- Loaded by test_db_estimate.lua (SQLite) and db_engines.lua (SQLite and
-- PostgreSQL, tests/shell/postgres.sh); the table is "plots" of
-- tests/data/db_plots.csv.  Returns function(name, db).
return function(name, db)
  -- Relative closeness: 1e-9 is the issue's bar; sums added in another
  -- order and Newton steps stopped by the same rule differ far less.
  local rel = dofile("tests/lua/db_common.lua").rel

  -- a 0/1 outcome, a text treatment and weights, from the same rows
  local q = db:query("SELECT plot, soil, rain, treated, yield, " ..
                     "CASE WHEN yield > 4.5 THEN 1 ELSE 0 END AS good, " ..
                     "CASE WHEN treated = 1 THEN 'mulched' ELSE 'bare' END AS cover, " ..
                     "1 + plot % 3 AS w FROM plots", {key = "plot"})
  local f = q:fetch()

  -- the estimate of a lazy table (q unless given) beside its fetched frame
  local function both(a, what, lazy, frame)
    a.data = lazy or q
    local r1 = estimate(a)
    a.data = frame or f
    local r2 = estimate(a)
    rel(r1.estimate, r2.estimate, what .. ": estimate")
    rel(r1.se, r2.se, what .. ": SE")
    rel(r1.mu1, r2.mu1, what .. ": mu1")
    rel(r1.mu0, r2.mu0, what .. ": mu0")
    rel(r1.lo, r2.lo, what .. ": lo")
    eq(r1.n, r2.n, what .. ": n")
    eq(r1.dropped, r2.dropped, what .. ": dropped")
    for _, k in ipairs({"ess", "ess_treated", "ess_control", "ps_min", "ps_max", "ess_weights"}) do
      if r2[k] then rel(r1[k], r2[k], what .. ": " .. k) end
    end
    eq(r1.treated_level, r2.treated_level, what .. ": treated level")
    eq(r1.clusters, r2.clusters, what .. ": clusters")
    return r1, r2
  end

  test(name("estimate{} in the database equals the fetched frame's, every method, estimand and scale"), function()
    for _, m in ipairs({"standardize", "ipw", "aipw"}) do
      for _, est in ipairs({"ATE", "ATT", "ATC"}) do
        both({treatment = "treated", outcome = "yield", set = {"rain", "soil"}, method = m,
              estimand = est}, m .. " " .. est)
        for _, sc in ipairs({"difference", "ratio", "odds ratio"}) do
          both({treatment = "treated", outcome = "good", set = {"rain"}, method = m,
                estimand = est, scale = sc}, m .. " " .. est .. " " .. sc)
        end
      end
    end
  end)

  test(name("weights, clusters, a text treatment, a continuous one, options"), function()
    for _, m in ipairs({"standardize", "ipw", "aipw"}) do
      both({treatment = "treated", outcome = "yield", set = {"rain"}, method = m, weights = "w"},
           m .. " weights")
      local r = both({treatment = "treated", outcome = "yield", set = {"rain"}, method = m,
                      cluster = "soil"}, m .. " cluster")
      eq(r.clusters, 4, m .. ": the four soils")
      local c = both({treatment = "cover", outcome = "yield", set = {"rain"}, method = m},
                     m .. " text treatment")
      eq(c.treated_level, "mulched", "the later level is treated")
      both({treatment = "cover", outcome = "yield", set = {"rain"}, method = m, treated = "bare"},
           m .. " treated =")
    end
    both({treatment = "rain", outcome = "yield", set = {"treated"}, contrast = 100},
         "continuous treatment")
    both({treatment = "treated", outcome = "yield", set = {"rain", "soil"}, interactions = false},
         "no interactions")
    both({treatment = "treated", outcome = "yield", set = {"rain"}, method = "ipw",
          stabilized = true}, "stabilized")
    both({treatment = "treated", outcome = "yield", set = {"rain"}, method = "ipw",
          se = "ps known"}, "ps known")
    both({treatment = "treated", outcome = "yield", set = {}, method = "aipw"}, "no set")
  end)

  test(name("the Poisson bootstrap: each replicate is the estimate with Poisson(1) row weights"), function()
    -- replicate r weights row k by sluice._pois_weight(key, seed, r): the
    -- same estimate as weights = that column on the fetched frame, so the
    -- bootstrap SE and interval follow from the frame's estimates
    local B, seed = 30, 11
    for _, m in ipairs({"standardize", "ipw", "aipw"}) do
      local r = estimate{data = q, treatment = "treated", outcome = "yield", set = {"rain"},
                         method = m, boot = B, seed = seed}
      local S = require "sluice"
      local est = {}
      for b = 1, B do
        local fb = f:with_column("pw", function(row) return S._pois_weight(row.plot, seed, b) end)
        est[b] = estimate{data = fb, treatment = "treated", outcome = "yield", set = {"rain"},
                          method = m, weights = "pw"}.estimate
      end
      local mean, ss = 0, 0
      for b = 1, B do mean = mean + est[b] end
      mean = mean / B
      for b = 1, B do ss = ss + (est[b] - mean) ^ 2 end
      rel(r.se, math.sqrt(ss / (B - 1)), m .. ": bootstrap SE", 1e-8)
      eq(r.boot, B, m .. ": replicates")
      eq(r.se_method, "bootstrap", m .. ": se_method")
      local again = estimate{data = q, treatment = "treated", outcome = "yield", set = {"rain"},
                             method = m, boot = B, seed = seed}
      eq(again.se, r.se, m .. ": the same seed, the same replicates")
      local other = estimate{data = q, treatment = "treated", outcome = "yield", set = {"rain"},
                             method = m, boot = B, seed = seed + 1}
      assert(other.se ~= r.se, m .. ": another seed, other replicates")
    end
  end)

  test(name("compare{} of a lazy table: each set's estimate inside the database"), function()
    local g = graph "rain -> treated -> yield; rain -> yield; soil -> yield"
    local a = compare{data = q, treatment = "treated", outcome = "yield", graph = g}
    local b = compare{data = f, treatment = "treated", outcome = "yield", graph = g}
    eq(#a, #b, "the same candidate sets")
    for i = 1, #b do
      eq(a[i].set_text, b[i].set_text, "set " .. i)
      rel(a[i].estimate, b[i].estimate, "set " .. b[i].set_text .. ": estimate")
      rel(a[i].se, b[i].se, "set " .. b[i].set_text .. ": SE")
    end
  end)

  test(name("hostile column names and levels are quoted and bound, never pasted"), function()
    local h = db:query([[SELECT plot AS "id""; x", rain AS "r""a""in; --", yield AS "ÿield ünï",
                                soil AS "sö'il", CASE WHEN treated = 1 THEN 'o''brien; DROP TABLE y; --'
                                ELSE 'x"y' END AS "tr; DROP TABLE y; --" FROM plots]], {key = 'id"; x'})
    local hf = h:fetch()
    for _, m in ipairs({"standardize", "ipw", "aipw"}) do
      local a = {treatment = "tr; DROP TABLE y; --", outcome = "ÿield ünï",
                 set = {'r"a"in; --', "sö'il"}, method = m, treated = "o'brien; DROP TABLE y; --"}
      local r1 = both(a, m .. ": hostile names", h, hf)
      eq(r1.treated_level, "o'brien; DROP TABLE y; --", m .. ": the level as bound")
    end
    local b = estimate{data = h, treatment = "tr; DROP TABLE y; --", outcome = "ÿield ünï",
                       set = {'r"a"in; --'}, boot = 5, seed = 3}
    eq(b.boot, 5, "the Poisson bootstrap with a hostile key name")
    eq(#db:table("y"), 1, "the table y is still there")
  end)

  test(name("what estimate{} in the database cannot do is refused by name"), function()
    local t = db:table("plots")
    raises(function() estimate{data = t, treatment = "treated", outcome = "yield", set = {"rain"},
                               boot = 10} end,
           "estimate:", "key", "db:table(name, {key = \"column\"})")
    raises(function() estimate{data = q, treatment = "treated", outcome = "yield", set = {"rain"},
                               method = "ipw", truncate = {1, 99}} end,
           "estimate:", "truncate = is not computed inside the database", "t:fetch()")
    raises(function() estimate{data = q, treatment = "treated", outcome = "yield", method = "iv",
                               instrument = "rain"} end,
           "estimate:", "is a database table", "t:fetch()")
    raises(function() estimate{data = q, treatment = "soil", outcome = "yield", set = {"rain"}} end,
           "estimate:", "the treatment 'soil' has 4 levels")
    raises(function() estimate{data = q, treatment = "treated", outcome = "yeild", set = {}} end,
           "estimate:", "no column 'yeild'", "did you mean 'yield'")
    raises(function() estimate{data = q, treatment = "treated", outcome = "soil", set = {}} end,
           "estimate:", "the outcome 'soil' has text values")
    raises(function() estimate{data = q, treatment = "treated", outcome = "yield", set = {"rain"},
                               weights = "soil"} end,
           "estimate:", "weights = 'soil' has text values")
    raises(function() db:table("plots", {key = "soil"}) end, "key = 'soil'", "whole numbers")
    local dup = db:query("SELECT plot % 7 AS k, treated, yield, rain FROM plots", {key = "k"})
    raises(function() estimate{data = dup, treatment = "treated", outcome = "yield", set = {"rain"},
                               boot = 10} end, "estimate:", "key = 'k' repeats", "share their Poisson")
    local gap = db:query("SELECT CASE WHEN plot > 3 THEN plot END AS k, treated, yield, rain " ..
                         "FROM plots", {key = "k"})
    raises(function() estimate{data = gap, treatment = "treated", outcome = "yield", set = {"rain"},
                               boot = 10} end, "estimate:", "key = 'k' is missing in 3 of the 35")
    raises(function() db:table("plots", {kye = "plot"}) end, "unknown option 'kye'", "did you mean 'key'")
  end)
end
