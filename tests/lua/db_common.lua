-- db_common.lua: what the lazy-table tests share: closeness relative to
-- the expected value (1e-9 is issue 14's bar for a lazy table beside its
-- fetched frame), and the SQLite copy of tests/data/db_plots.csv that
-- tests/lib/db_load.py makes for the Lua suite (tests/shell/postgres.sh
-- makes its own, and a PostgreSQL one).
local M = {}

function M.rel(a, b, what, tol)
  tol = tol or 1e-9
  if not (math.abs(a - b) <= tol * math.max(math.abs(b), 1e-12)) then
    error(string.format("%s: expected %.17g, got %.17g", what, b, a), 2)
  end
end

-- A connection to a new SQLite file of the plots, its folder, and a
-- function that closes it and removes the folder.
function M.sqlite_plots()
  local dir = os.tmpname()
  os.remove(dir)
  assert(os.execute("mkdir " .. dir), "a folder for the test database")
  assert(os.execute(string.format("python3 tests/lib/db_load.py tests/data/db_plots.csv " ..
                                  "%s/plots.db %s/load.sql %s/expect.lua", dir, dir, dir)),
         "tests/lib/db_load.py made the SQLite file")
  local db = connect(dir .. "/plots.db")
  return db, dir, function() db:close(); os.execute("rm -rf " .. dir) end
end

return M
