-- test_db_diag.lua: balance{} and overlap{} of a lazy table in an SQLite
-- file that tests/lib/db_load.py makes from tests/data/db_plots.csv (the
-- checks are in db_diag.lua; tests/shell/postgres.sh runs them on
-- PostgreSQL too), and on a larger simulated table whose quartiles take
-- many rounds of counting: propensities spread over (0, 1), and two tight
-- clusters of them, each spread over a few units of the 13th digit; its quartiles
-- beside Python's statistics.quantiles.
local db, dir, done = dofile("tests/lua/db_common.lua").sqlite_plots()
local run, C = dofile("tests/lua/db_diag.lua")
run(function(s) return "SQLite: " .. s end, db)

test("SQLite: 3000 rows: balance{} and overlap{} equal the frame's, and their definitions", function()
  -- a seedbed trial: soil warmth (x1), a two-bed layout whose second bed
  -- is a hair warmer (x2: 0 or 1 plus 1e-13 per row), the bed's supplier
  -- (g, text); covering (t) is likelier on warm soil.  A linear
  -- congruential generator (Knuth's MMIX constants) makes the rows.
  local state = 12345
  local function u()
    state = (state * 6364136223846793005 + 1442695040888963407) & 0xffffffffffffffff
    return ((state >> 11) + 0.5) / 2 ^ 53
  end
  local path = dir .. "/seedbed.csv"
  local f = assert(io.open(path, "w"))
  f:write("id,x1,x2,g,t\n")
  for i = 1, 3000 do
    local x1 = math.sqrt(-2 * math.log(u())) * math.cos(2 * math.pi * u())
    local x2 = (i % 2) + 1e-13 * i
    local g = ({"north", "south", "west"})[i % 3 + 1]
    local t = u() < 1 / (1 + math.exp(-(0.8 * x1 + 0.3 * (i % 2)))) and 1 or 0
    f:write(string.format("%d,%.17g,%.17g,%s,%d\n", i, x1, x2, g, t))
  end
  f:close()
  assert(os.execute(string.format("python3 -c \"import csv, sqlite3, sys; c = sqlite3.connect(sys.argv[2]); " ..
    "r = list(csv.reader(open(sys.argv[1]))); c.execute('CREATE TABLE seedbed (id INTEGER, x1 REAL, " ..
    "x2 REAL, g TEXT, t INTEGER)'); c.executemany('INSERT INTO seedbed VALUES (?, ?, ?, ?, ?)', " ..
    "[[int(x[0]), float(x[1]), float(x[2]), x[3], int(x[4])] for x in r[1:]]); c.commit()\" %s %s/seedbed.db",
    path, dir)), "the simulated table in SQLite")
  local sdb = connect(dir .. "/seedbed.db")
  local t = sdb:table("seedbed")
  local d = read_csv(path)
  -- the quartiles of each group's propensities by Python's
  -- statistics.quantiles(method='inclusive') (type 7), from logit{}'s
  local rows = C.propensities(d, "t", {"x1"})
  local o = overlap{data = t, treatment = "t", set = {"x1"}}
  for g, arm in ipairs({1, 0}) do
    local out = assert(io.open(dir .. "/ps.txt", "w"))
    for _, r in ipairs(rows) do if r.t == arm then out:write(string.format("%.17g\n", r.p)) end end
    out:close()
    local py = assert(io.popen("python3 -c \"import statistics, sys; v = [float(x) for x in " ..
      "open(sys.argv[1])]; print(' '.join('%.17g' % q for q in statistics.quantiles(v, n=4, " ..
      "method='inclusive')))\" " .. dir .. "/ps.txt"))
    local q1, med, q3 = py:read("n", "n", "n")
    py:close()
    C.rel(o.groups[g].q1, q1, "q1 beside Python's", 1e-9)
    C.rel(o.groups[g].median, med, "median beside Python's", 1e-9)
    C.rel(o.groups[g].q3, q3, "q3 beside Python's", 1e-9)
  end
  for _, set in ipairs({{"x1"}, {"x2"}, {"x1", "x2", "g"}}) do
    local what = table.concat(set, ", ")
    local a = {treatment = "t", set = set, bins = 50}
    a.data = t
    local o1 = overlap(a)
    a.data = d
    local o2 = overlap(a)
    C.same_overlap(o1, o2, what)
    C.overlap_by_definition(o2, C.propensities(d, "t", set), 50, what, 1e-9)
    local b = {treatment = "t", set = set, estimand = "ATT"}
    b.data = t
    local b1 = balance(b)
    b.data = d
    local b2 = balance(b)
    C.same_balance(b1, b2, what)
    C.balance_by_definition(b2, d, C.propensities(d, "t", set), set, "ATT", what, 1e-8)
  end
  sdb:close()
end)
done()
