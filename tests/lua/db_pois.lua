-- db_pois.lua: the Poisson bootstrap's row weights computed by the
-- database (the SQL of src/stats/poisson_weight.c) equal the C values,
-- row for row, for keys in order, negative, at both ends of 64 bits and
-- spread over them, in several replicates and seeds.  The C values are
-- held to scipy's Poisson(1) probabilities by tests/c/test_poisson_weight.c.
-- Loaded by db_engines.lua (SQLite and PostgreSQL, tests/shell/postgres.sh).
-- Returns function(name, db).
return function(name, db)
  local S = require "sluice"
  local N = 1000

  -- The keys, made by the database from a recursive query (read-only: no
  -- table is made), and the same keys made here.
  local sql = [[
WITH RECURSIVE n(i) AS (SELECT CAST(1 AS BIGINT) UNION ALL SELECT i + 1 FROM n WHERE i < 1000)
SELECT i AS k FROM n
UNION ALL SELECT 1 - i FROM n
UNION ALL SELECT 9223372036854775807 - i + 1 FROM n
UNION ALL SELECT -9223372036854775807 + i - 2 FROM n
UNION ALL SELECT i * 1073741789 + 5 FROM n
UNION ALL SELECT (i - 500) * 4294967296 - 3 FROM n
UNION ALL SELECT i * 9223372036854775 FROM n
UNION ALL SELECT -i * 9223372036854775 + 17 FROM n]]
  local keys = {}
  for i = 1, N do
    for _, k in ipairs({i, 1 - i, math.maxinteger - i + 1, math.mininteger + i - 1,
                        i * 1073741789 + 5, (i - 500) * 4294967296 - 3,
                        i * 9223372036854775, -i * 9223372036854775 + 17}) do
      keys[#keys + 1] = k
    end
  end
  table.sort(keys)
  local t = db:query(sql)

  test(name("the key table: 8000 keys, from INT64_MIN to INT64_MAX"), function()
    eq(#t, 8 * N, "#t")
    eq(keys[1], math.mininteger, "smallest key")
    eq(keys[#keys], math.maxinteger, "largest key")
  end)

  test(name("Poisson weights in SQL equal the C values, row for row"), function()
    local seeds = {1, 20240611, -1, math.mininteger}   -- -1: the seed 2^64 - 1
    local reps = {1, 2, 3, 1000, 4294967295}
    local total, sum = 0, 0
    for _, seed in ipairs(seeds) do
      for _, r in ipairs(reps) do
        local w = t:_pois("k", seed, r)
        eq(#w, #keys, "rows, seed " .. seed .. " r " .. r)
        for i, k in ipairs(keys) do
          local c = S._pois_weight(k, seed, r)
          if w[i] ~= c then
            error(string.format("key %d seed %d r %d: the database says %s, C %d", k, seed, r,
                                tostring(w[i]), c))
          end
          sum = sum + c
        end
        total = total + #keys
      end
    end
    -- not all zeros: the mean of 160000 Poisson(1) draws is 1 within 4 SE
    assert(math.abs(sum / total - 1) < 4 / math.sqrt(total), "mean " .. sum / total)
  end)

  test(name("t:_pois and _pois_weight refuse bad arguments by name"), function()
    raises(function() t:_pois("kk", 1, 1) end, "no column 'kk'", "did you mean 'k'")
    raises(function() t:_pois("k", 1, -1) end, "bad argument #3 to '_pois'", "replicate number")
    raises(function() t:_pois("k", 1, 4294967296) end, "bad argument #3 to '_pois'", "replicate number")
    raises(function() S._pois_weight(1.5, 1, 1) end, "bad argument #1", "integer")
    raises(function() S._pois_weight(1, 1) end, "bad argument #3")
    local texts = db:query("SELECT 'a' AS s")
    raises(function() texts:_pois("s", 1, 1) end, "the key column 's' holds texts")
  end)
end
