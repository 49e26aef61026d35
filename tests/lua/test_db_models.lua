-- test_db_models.lua: ols{} and logit{} of a lazy table in an SQLite file
-- that tests/lib/db_load.py makes from tests/data/db_plots.csv (the checks
-- are in db_models.lua; tests/shell/postgres.sh runs them on PostgreSQL too).
local dir = os.tmpname()
os.remove(dir)
assert(os.execute("mkdir " .. dir), "a folder for the test database")
assert(os.execute(string.format("python3 tests/lib/db_load.py tests/data/db_plots.csv %s/plots.db " ..
                                "%s/load.sql %s/expect.lua", dir, dir, dir)),
       "tests/lib/db_load.py made the SQLite file")
local db = connect(dir .. "/plots.db")
dofile("tests/lua/db_models.lua")(function(s) return "SQLite: " .. s end, db)
db:close()
os.execute("rm -rf " .. dir)
