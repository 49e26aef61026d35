-- test_db_estimate.lua: estimate{} of a lazy table in an SQLite file that
-- tests/lib/db_load.py makes from tests/data/db_plots.csv (the checks are
-- in db_estimate.lua; tests/shell/postgres.sh runs them on PostgreSQL too),
-- and the Poisson bootstrap's SE beside the multinomial bootstrap's on a
-- larger simulated table.
local db, dir, done = dofile("tests/lua/db_common.lua").sqlite_plots()
dofile("tests/lua/db_estimate.lua")(function(s) return "SQLite: " .. s end, db)

test("the Poisson bootstrap's SE agrees with the multinomial bootstrap's within Monte Carlo error", function()
  -- 2000 simulated rows; B = 400 replicates each: a bootstrap SE has a
  -- Monte Carlo relative SD of about 1/sqrt(2B) = 3.5% (Efron and
  -- Tibshirani 1993, ch. 6, from memory), the ratio of two about 5%, so
  -- 0.8 to 1.25 is beyond four of them
  local g = graph[[moisture -> mulch; moisture -> growth; shade -> mulch; shade -> growth; mulch -> growth]]
  local m = sem(g, {["moisture -> mulch"] = 0.7, ["moisture -> growth"] = 0.5, ["shade -> mulch"] = -0.4,
                    ["shade -> growth"] = 0.6, ["mulch -> growth"] = 0.9}, {binary = {"mulch"}})
  local d = m:simulate(2000, {seed = 4}):with_column("id", function(_, i) return i end)
  d:write_csv(dir .. "/sim.csv")
  assert(os.execute(string.format("python3 -c \"import csv, sqlite3, sys; c = sqlite3.connect(sys.argv[2]); " ..
    "r = list(csv.reader(open(sys.argv[1]))); c.execute('CREATE TABLE sim (moisture REAL, shade REAL, " ..
    "mulch INTEGER, growth REAL, id INTEGER)'); h = r[0]; ix = [h.index(k) for k in " ..
    "('moisture', 'shade', 'mulch', 'growth', 'id')]; c.executemany('INSERT INTO sim VALUES (?, ?, ?, ?, ?)', " ..
    "[[float(x[i]) for i in ix] for x in r[1:]]); c.commit()\" %s/sim.csv %s/sim.db", dir, dir)),
    "the simulated table in SQLite")
  local sdb = connect(dir .. "/sim.db")
  local t = sdb:table("sim", {key = "id"})
  for _, meth in ipairs({"standardize", "aipw"}) do
    local a = {treatment = "mulch", outcome = "growth", set = {"moisture", "shade"}, method = meth,
               boot = 400, seed = 9}
    a.data = t
    local p = estimate(a)
    a.data = d
    local mult = estimate(a)
    local ratio = p.se / mult.se
    assert(ratio > 0.8 and ratio < 1.25, string.format("%s: Poisson SE %.5g beside multinomial %.5g",
                                                          meth, p.se, mult.se))
    -- and both beside the analytic (sandwich) SE
    assert(math.abs(p.se / p.se_analytic - 1) < 0.25, meth .. ": Poisson SE beside the sandwich")
  end
  sdb:close()
end)
done()
