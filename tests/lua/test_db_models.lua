-- test_db_models.lua: ols{} and logit{} of a lazy table in an SQLite file
-- that tests/lib/db_load.py makes from tests/data/db_plots.csv (the checks
-- are in db_models.lua; tests/shell/postgres.sh runs them on PostgreSQL too).
local db, dir, done = dofile("tests/lua/db_common.lua").sqlite_plots()
dofile("tests/lua/db_models.lua")(function(s) return "SQLite: " .. s end, db)
done()
